/**
 * Reading sample files: the entry point the commands use. Chooses the parser
 * by extension (.csv, .json), applies `--voxel-size`, and checks across files
 * (one dimension for all samples, unique sample ids).
 */
import * as path from 'node:path';
import { InputError, UsageError } from '../errors.js';
import type { Sample } from '../types.js';
import { checkVoxelSize, crossSampleErrors, type SampleReadOptions } from './sample-assembler.js';
import { parseDecimal } from './number-text.js';
import { parseSamplesCsvCollect } from './sample-csv.js';
import { parseSamplesJsonCollect } from './sample-json.js';
import { decodeUtf8, readFileBytes } from './text-file.js';
import { canonicalPath } from './paths.js';

export type { SampleReadOptions } from './sample-assembler.js';
export { parseSamplesCsv, parseSamplesCsvCollect, sampleIdFromPath } from './sample-csv.js';
export { parseSamplesJson, parseSamplesJsonCollect } from './sample-json.js';

/** What was read from one file: its samples (none when it had errors) and every error found in it. */
export interface SampleFileResult {
  readonly file: string;
  readonly samples: readonly Sample[];
  readonly errors: readonly InputError[];
}

/** Every sample and every error from a set of files. `samples` holds only samples of error-free files. */
export interface SampleReadResult {
  readonly files: readonly SampleFileResult[];
  readonly samples: readonly Sample[];
  /** File errors in file order, then errors across files (mixed dimension, repeated ids). */
  readonly errors: readonly InputError[];
}

/**
 * Read samples from files (.csv or .json, by extension). Throws the first
 * InputError; see `readSamplesCollect` to get all of them. Throws UsageError
 * when `paths` is empty.
 */
export function readSamples(paths: readonly string[], options: SampleReadOptions = {}): Sample[] {
  const result = readSamplesCollect(paths, options);
  if (result.errors.length > 0) throw result.errors[0];
  return result.samples.slice();
}

/**
 * Read samples from files, collecting every error per file instead of
 * stopping at the first one. Throws only UsageError (no paths; a bad voxel size).
 */
export function readSamplesCollect(paths: readonly string[], options: SampleReadOptions = {}): SampleReadResult {
  if (paths.length === 0) throw new UsageError('no sample files given');
  if (options.voxelSize !== undefined) checkVoxelSize(options.voxelSize);
  const files: SampleFileResult[] = [];
  const errors: InputError[] = [];
  const good: Sample[] = [];
  const seen = new Map<string, string>();
  for (const file of paths) {
    const fileErrors: InputError[] = [];
    const key = canonicalPath(file);
    const earlier = seen.get(key);
    if (earlier !== undefined) {
      const err = new InputError({ file }, `is given more than once${earlier === file ? '' : ` (also as ${earlier})`}`);
      files.push({ file, samples: [], errors: [err] });
      errors.push(err);
      continue;
    }
    seen.set(key, file);
    const samples = readSampleFile(file, options, fileErrors);
    files.push({ file, samples, errors: fileErrors });
    errors.push(...fileErrors);
    good.push(...samples);
  }
  const cross = crossSampleErrors(good);
  errors.push(...cross);
  const bad = new Set(cross.map((e) => e.file));
  return { files, samples: good.filter((s) => !bad.has(s.source)), errors };
}

function readSampleFile(file: string, options: SampleReadOptions, errors: InputError[]): Sample[] {
  let text: string;
  try {
    text = decodeUtf8(readFileBytes(file), file);
  } catch (e) {
    if (e instanceof InputError) {
      errors.push(e);
      return [];
    }
    throw e;
  }
  const ext = path.extname(file).toLowerCase();
  if (ext === '.csv') return parseSamplesCsvCollect(text, file, options, errors);
  if (ext === '.json') return parseSamplesJsonCollect(text, file, options, errors);
  errors.push(new InputError({ file }, `unknown sample file type ${JSON.stringify(ext || '(none)')}; use .csv or .json`));
  return [];
}

/**
 * Parse `--voxel-size X,Y[,Z]`: 2 or 3 comma-separated positive finite
 * numbers (micrometres per pixel along each axis). Throws UsageError.
 */
export function parseVoxelSize(text: string): number[] {
  const parts = text.split(',').map((p) => p.trim());
  const usage = `--voxel-size: expected 2 or 3 positive numbers separated by commas (X,Y or X,Y,Z), got ${JSON.stringify(text)}`;
  if (parts.length < 2 || parts.length > 3) throw new UsageError(usage);
  const out: number[] = [];
  for (const p of parts) {
    const v = parseDecimal(p) ?? NaN;
    if (!(Number.isFinite(v) && v > 0)) throw new UsageError(`${usage}: ${JSON.stringify(p)} is not a positive finite number`);
    out.push(v);
  }
  return out;
}
