/**
 * Turning validated point records into `Sample`s, shared by the CSV and JSON
 * readers: labels used twice, empty samples, the voxel-size conversion, and the
 * checks that look across samples (one dimension for all, unique ids).
 */
import { InputError, UsageError } from '../errors.js';
import type { Dim, Sample } from '../types.js';

/** Options shared by the sample readers. */
export interface SampleReadOptions {
  /** Pixel size per axis (2 or 3 positive numbers, micrometres per pixel); coordinates are multiplied by it. */
  readonly voxelSize?: readonly number[];
}

/** How the reader names a point in messages: CSV points are file lines, JSON points are 1-based indices. */
export type RowNoun = 'lines' | 'points';

/** Collects the points of one sample in input order. */
export class SampleAssembler {
  readonly id: string;
  readonly source: string;
  readonly dim: Dim;
  readonly featureNames: readonly string[];
  private readonly coords: number[][] = [];
  private readonly labels: (string | null)[] = [];
  private readonly rows: number[] = [];
  private readonly features: number[][] = [];
  private readonly labelRow = new Map<string, number>();

  constructor(id: string, source: string, dim: Dim, featureNames: readonly string[]) {
    this.id = id;
    this.source = source;
    this.dim = dim;
    this.featureNames = featureNames;
  }

  get size(): number {
    return this.coords.length;
  }

  /**
   * Add one point. A label already used in this sample is an error naming both
   * rows; the point is then not added.
   */
  add(
    row: number,
    coords: readonly number[],
    label: string | null,
    features: readonly number[],
    errors: InputError[],
    noun: RowNoun,
  ): void {
    if (label !== null) {
      const first = this.labelRow.get(label);
      if (first !== undefined) {
        errors.push(
          new InputError(
            { file: this.source, row, column: 'label' },
            `${JSON.stringify(label)} is used twice in sample ${JSON.stringify(this.id)} (${noun} ${first} and ${row}); a label names one point per sample`,
          ),
        );
        return;
      }
      this.labelRow.set(label, row);
    }
    this.coords.push(coords.slice());
    this.labels.push(label);
    this.rows.push(row);
    this.features.push(features.slice());
  }

  /** The finished sample, with coordinates multiplied by the voxel size when one is given. */
  finish(voxelSize?: readonly number[]): Sample {
    const coords = voxelSize ? this.coords.map((p) => p.map((v, k) => v * voxelSize[k])) : this.coords;
    return {
      id: this.id,
      source: this.source,
      dim: this.dim,
      coords,
      labels: this.labels,
      rows: this.rows,
      features: { names: this.featureNames, values: this.features },
    };
  }
}

/**
 * Check that a voxel size fits samples of dimension `dim`; returns an error
 * (not thrown) when it does not.
 */
export function voxelSizeError(file: string, dim: Dim, voxelSize: readonly number[] | undefined): InputError | undefined {
  if (voxelSize === undefined || voxelSize.length === dim) return undefined;
  return new InputError(
    { file },
    `the samples are ${dim}-D but --voxel-size gives ${voxelSize.length} numbers (${voxelSize.join(',')}); give one per axis`,
  );
}

/**
 * Checks across samples: all samples have the dimension of the first one, and
 * no two samples share an id. Returns the errors, one per offending sample.
 */
export function crossSampleErrors(samples: readonly Sample[]): InputError[] {
  const errors: InputError[] = [];
  if (samples.length === 0) return errors;
  const first = samples[0];
  const seen = new Map<string, Sample>();
  for (const s of samples) {
    if (s.dim !== first.dim) {
      errors.push(
        new InputError(
          { file: s.source },
          `sample ${JSON.stringify(s.id)} is ${s.dim}-D but sample ${JSON.stringify(first.id)} (${first.source}) is ${first.dim}-D; all samples must have the same dimension`,
        ),
      );
    }
    const other = seen.get(s.id);
    if (other !== undefined) {
      const where = other.source === s.source ? `by another sample in the same file` : `by ${other.source}`;
      errors.push(new InputError({ file: s.source }, `sample id ${JSON.stringify(s.id)} is also used ${where}; sample ids must be unique`));
    } else {
      seen.set(s.id, s);
    }
  }
  return errors;
}

/** Throws UsageError unless `v` is 2 or 3 positive finite numbers. */
export function checkVoxelSize(v: readonly number[]): void {
  if ((v.length !== 2 && v.length !== 3) || !v.every((x) => Number.isFinite(x) && x > 0)) {
    throw new UsageError(`voxelSize must be 2 or 3 positive finite numbers, got [${v.join(', ')}]`);
  }
}
