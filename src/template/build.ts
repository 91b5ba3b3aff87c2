/**
 * Building a template from partly labelled samples: co-registration
 * (co-register.ts), then exact per-cell sufficient statistics of the kept
 * observations, shrunk covariances (cell-statistics.ts) and the flagged labels
 * (hand-labels.ts).
 */
import type { FlaggedLabel, Sample, Template, TemplateCell, TemplateMember, TemplateSettings } from '../types.js';
import { TEMPLATE_FORMAT, TEMPLATE_VERSION } from '../types.js';
import { VERSION } from '../version.js';
import { cellsFromSums, emptySums, type CellSums } from './cell-statistics.js';
import { coRegister, type CoRegistration, type IterationDiagnostics, type LabelledEntry, type SkippedSample } from './co-register.js';
import { likelierCellFinder } from './likelier-cell.js';
import { sampleHash } from './sample-hash.js';
import { resolveSettings, type BuildOptions } from './settings.js';

export interface BuildResult {
  readonly template: Template;
  readonly iterations: readonly IterationDiagnostics[];
  readonly skipped: readonly SkippedSample[];
  readonly flagged: readonly FlaggedLabel[];
  readonly converged: boolean;
}

/** The labelled points of a sample, with its content hash. */
export function entryFromSample(sample: Sample): LabelledEntry {
  const labels: string[] = [], coords: (readonly number[])[] = [], rows: number[] = [];
  for (let i = 0; i < sample.coords.length; i++) {
    const l = sample.labels[i];
    if (l === null || l === undefined) continue;
    labels.push(l);
    coords.push(sample.coords[i]);
    rows.push(sample.rows[i]);
  }
  return { id: sample.id, source: sample.source, hash: sampleHash(sample), dim: sample.dim, labels, coords, rows };
}

/** A member's kept positions as an entry (for --refit); rows fall back to the point's position in the list. */
export function entryFromMember(member: TemplateMember, dim: Template['dim']): LabelledEntry {
  return {
    id: member.id,
    source: `member ${member.id}`,
    hash: member.hash,
    dim,
    labels: member.positions.map((p) => p.label),
    coords: member.positions.map((p) => p.coords),
    rows: member.positions.map((p, i) => p.row ?? i + 1),
  };
}

/** addObservationInPlace (cell-statistics.ts) for the point at y[offset .. offset + dim): the same sums in the same order. */
function addFlatObservation(sums: CellSums, y: Float64Array, offset: number, dim: number): void {
  sums.n += 1;
  for (let a = 0; a < dim; a++) {
    const ya = y[offset + a];
    sums.sum[a] += ya;
    const row = sums.sumOfSquares[a];
    for (let b = 0; b < dim; b++) row[b] += ya * y[offset + b];
  }
}

export interface RegistrationSummary {
  readonly registration: CoRegistration;
  readonly cells: TemplateCell[];
  readonly pooled: number[][];
  readonly members: TemplateMember[];
  readonly flagged: FlaggedLabel[];
  readonly skipped: readonly SkippedSample[];
}

/**
 * Co-register the entries and summarise: cell statistics from the kept aligned
 * observations (summed in content-hash order, so input order does not change a
 * bit of them), members in the order of `order` (sample ids), flagged labels
 * sorted by that order and then by row.
 */
export function registerAndSummarise(entries: readonly LabelledEntry[], settings: TemplateSettings, order: readonly string[]): RegistrationSummary {
  const reg = coRegister(entries, settings);
  const dim = reg.dim;
  const sums: CellSums[] = reg.cells.map(() => emptySums(dim));
  // The aligned positions are applyTransform(transforms[i], coords) computed with the final
  // transforms (co-register.ts, same sums in the same order), so the statistics are exactly
  // reproducible from the stored transforms.
  const aligned = reg.aligned;
  reg.entries.forEach((e, i) => {
    for (let j = 0; j < e.labels.length; j++) if (reg.kept[i][j]) addFlatObservation(sums[reg.cellOf[i][j]], aligned[i], j * dim, dim);
  });
  const { cells, pooled } = cellsFromSums(
    reg.cells.map((label, c) => ({ label, sums: sums[c] })),
    dim,
    settings.priorStrength,
    settings.minCount,
  );
  const cellByLabel = new Map(cells.map((c) => [c.label, c]));
  // Template cell of each registration cell index (undefined when the cell has no kept observation).
  const cellAt = reg.cells.map((label) => cellByLabel.get(label));
  const likelier = likelierCellFinder(cells);
  const rank = new Map(order.map((id, i) => [id, i]));
  const members: { m: TemplateMember; r: number }[] = [];
  const flagged: { f: FlaggedLabel; r: number }[] = [];
  reg.entries.forEach((e, i) => {
    let res = 0, used = 0;
    const keptRow = reg.kept[i], cellRow = reg.cellOf[i], alignedRow = aligned[i];
    for (let j = 0; j < e.labels.length; j++) {
      const cell = cellAt[cellRow[j]];
      if (keptRow[j] && cell) {
        const m = cell.mean;
        for (let a = 0; a < dim; a++) {
          const e = alignedRow[j * dim + a] - m[a];
          res += e * e;
        }
        used++;
      } else if (!keptRow[j]) {
        flagged.push({
          r: rank.get(e.id) ?? Number.MAX_SAFE_INTEGER,
          f: {
            sample: e.id,
            row: e.rows[j],
            label: e.labels[j],
            distance: reg.distance[i][j],
            ...likelier(Array.from(alignedRow.subarray(j * dim, (j + 1) * dim)), e.labels[j]),
          },
        });
      }
    }
    const positions: TemplateMember['positions'][number][] = new Array(e.labels.length);
    for (let j = 0; j < e.labels.length; j++) positions[j] = { label: e.labels[j], coords: e.coords[j].slice(), row: e.rows[j] };
    members.push({
      r: rank.get(e.id) ?? Number.MAX_SAFE_INTEGER,
      m: {
        id: e.id,
        hash: e.hash,
        transform: reg.transforms[i],
        residual: Math.sqrt(res / Math.max(1, used)),
        labelled: used,
        positions,
      },
    });
  });
  members.sort((a, b) => a.r - b.r);
  flagged.sort((a, b) => a.r - b.r || a.f.row - b.f.row);
  return { registration: reg, cells, pooled, members: members.map((x) => x.m), flagged: flagged.map((x) => x.f), skipped: reg.skipped };
}

/** Assemble the template object (no `created`: the CLI stamps the time). */
export function assembleTemplate(
  dim: Template['dim'],
  cells: readonly TemplateCell[],
  members: readonly TemplateMember[],
  pooled: number[][],
  settings: TemplateSettings,
  flagged: readonly FlaggedLabel[],
): Template {
  return {
    format: TEMPLATE_FORMAT,
    version: TEMPLATE_VERSION,
    dim,
    units: 'um',
    cells: cells.slice(),
    members: members.slice(),
    pooledCovariance: pooled,
    settings,
    flagged: flagged.slice(),
    tool: { name: 'cairn', version: VERSION },
  };
}

/**
 * Build a template from partly labelled samples.
 *
 * Co-registers the samples' labelled points by generalised Procrustes with
 * missing labels and a robust consensus (co-register.ts), then computes per
 * cell, from the kept observations only: count n, sum S, sum of outer products Q,
 * mean S / n and the covariance shrunk toward the pooled one (cell-statistics.ts).
 * Cells with n < minCount are kept and marked sparse. Labels rejected by the
 * robust step are left out of the statistics and listed in `flagged`.
 * Samples that cannot be aligned (too few labelled points, degenerate,
 * duplicates, too few cells shared with the others) are listed in `skipped`.
 *
 * Throws FitError when fewer than two samples can be aligned, UsageError for bad
 * options or mixed dimensions.
 */
export function buildTemplate(samples: readonly Sample[], options: BuildOptions = {}): BuildResult {
  const settings = resolveSettings(options);
  const s = registerAndSummarise(samples.map(entryFromSample), settings, samples.map((x) => x.id));
  return {
    template: assembleTemplate(s.registration.dim, s.cells, s.members, s.pooled, settings, s.flagged),
    iterations: s.registration.iterations,
    skipped: s.skipped,
    flagged: s.flagged,
    converged: s.registration.converged,
  };
}
