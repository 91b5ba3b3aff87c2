/**
 * Extending a template with new labelled samples.
 *
 * Fold-in (default): each new sample is aligned to the template's cell means on
 * the labelled cells it shares with the template (the template held fixed; the
 * same transform family as the template), with the same hard-rejection
 * reweighting as the build: a shared label whose squared Mahalanobis distance
 * under the cell's predictive covariance (1 + 1/n_k) Sigma_k exceeds the
 * predictive radius r^2(n_k) (cell-statistics.ts, predictiveCutoff) gets weight 0 in the fit and is flagged; the fit
 * and the check repeat until the kept set stops changing. The template's own
 * statistics never contain the new sample, so this is a leave-one-out check as
 * in the build. The kept aligned positions are then added to the cells' exact
 * sufficient statistics (n, S, Q); labels new to the template start new cells.
 * Means, the pooled covariance and the shrunk covariances are recomputed from
 * the sums, so the statistics equal those of one pass over all members'
 * observations with their stored transforms. The frame is the extended
 * template's; it is not re-fixed (use refit).
 *
 * Refit: co-registration runs again from all members' stored labelled
 * positions plus the new samples, as in a fresh build.
 *
 * A sample whose content hash is already a member changes nothing: when no
 * sample is new and no refit is asked for, the very template object given is
 * returned (options that would change settings then have no effect either;
 * use refit to re-derive a template under new settings).
 */
import { FitError, InputError } from '../errors.js';
import { applyTransform, mahalanobisSquared, precisionMatrix } from '../geometry/index.js';
import type { FlaggedLabel, Sample, Template, TemplateMember, Transform } from '../types.js';
import { assembleTemplate, entryFromMember, entryFromSample, registerAndSummarise } from './build.js';
import { addObservationInPlace, cellsFromSums, emptySums, predictiveCovariance, predictiveCutoff, type CellSums } from './cell-statistics.js';
import { fitMemberMap, minAlignmentPoints, type LabelledEntry, type SkippedSample } from './co-register.js';
import { likelierCell } from './likelier-cell.js';
import { resolveSettings, type BuildOptions } from './settings.js';

export interface AddOptions extends BuildOptions {
  /** Re-run co-registration from all members' stored positions and the new samples. */
  readonly refit?: boolean;
}

export interface AddResult {
  readonly template: Template;
  /** Ids of the samples that became members. */
  readonly added: readonly string[];
  /** Ids of given samples whose content hash is already a member (nothing changes for them). */
  readonly alreadyMembers: readonly string[];
  readonly skipped: readonly SkippedSample[];
  /** Labels flagged in this call (for refit: all flags of the new co-registration). */
  readonly flagged: readonly FlaggedLabel[];
}

function byCodeUnit(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/**
 * Fold new labelled samples into a template (module comment). Options other
 * than `refit` override the template's recorded settings. Throws InputError
 * (naming the sample's file) when a sample's dimension differs from the
 * template's; FitError from a refit that cannot align two samples.
 */
export function addToTemplate(template: Template, samples: readonly Sample[], options: AddOptions = {}): AddResult {
  const { refit, ...rest } = options;
  const settings = resolveSettings(rest, template.settings);
  const memberHash = new Map(template.members.map((m) => [m.hash, m.id]));
  const memberIds = new Set(template.members.map((m) => m.id));
  const alreadyMembers: string[] = [];
  const skipped: SkippedSample[] = [];
  const candidates: LabelledEntry[] = [];
  const seen = new Map<string, string>();
  for (const s of samples) {
    if (s.dim !== template.dim) {
      throw new InputError({ file: s.source }, `sample ${s.id} is ${s.dim}-D but the template is ${template.dim}-D`);
    }
    const e = entryFromSample(s);
    if (memberHash.has(e.hash)) {
      alreadyMembers.push(s.id);
      continue;
    }
    const dup = seen.get(e.hash);
    if (dup !== undefined) {
      skipped.push({ sample: s.id, reason: `same content as sample ${dup}` });
      continue;
    }
    if (memberIds.has(s.id) || Array.from(seen.values()).includes(s.id)) {
      skipped.push({ sample: s.id, reason: 'a sample with this id and different content is already a member or given twice' });
      continue;
    }
    seen.set(e.hash, s.id);
    candidates.push(e);
  }
  if (candidates.length === 0 && !refit) return { template, added: [], alreadyMembers, skipped, flagged: [] };

  if (refit) {
    const entries = [...template.members.map((m) => entryFromMember(m, template.dim)), ...candidates];
    const order = [...template.members.map((m) => m.id), ...candidates.map((c) => c.id)];
    const s = registerAndSummarise(entries, settings, order);
    const memberSet = new Set(s.members.map((m) => m.id));
    return {
      template: assembleTemplate(template.dim, s.cells, s.members, s.pooled, settings, s.flagged),
      added: candidates.filter((c) => memberSet.has(c.id)).map((c) => c.id),
      alreadyMembers,
      skipped: [...skipped, ...s.skipped],
      flagged: s.flagged,
    };
  }

  const d = template.dim;
  const kind = settings.alignment;
  const minPoints = minAlignmentPoints(kind, d);
  const reference = settings.flagReference ?? 'student-t';
  const cutoff = (n: number) => predictiveCutoff(n, d, settings.priorStrength, settings.flagProbability, reference);
  const cellByLabel = new Map(template.cells.map((c) => [c.label, c]));
  const precision = new Map(template.cells.map((c) => [c.label, precisionMatrix(predictiveCovariance(c))]));
  const sums = new Map<string, CellSums>(
    template.cells.map((c) => [c.label, { n: c.count, sum: c.sum.slice(), sumOfSquares: c.sumOfSquares.map((r) => r.slice()) }]),
  );
  const joined: { entry: LabelledEntry; transform: Transform; aligned: number[][]; kept: boolean[] }[] = [];
  const newFlags: { entry: LabelledEntry; j: number; y: number[]; distance: number }[] = [];
  // Hash order makes the sums independent of the input order.
  for (const e of candidates.slice().sort((a, b) => byCodeUnit(a.hash, b.hash))) {
    const shared = e.labels.map((l) => cellByLabel.has(l));
    const nShared = shared.filter(Boolean).length;
    if (nShared < minPoints) {
      skipped.push({ sample: e.id, reason: `shares ${nShared} labelled cell${nShared === 1 ? '' : 's'} with the template; ${kind} alignment needs at least ${minPoints}` });
      continue;
    }
    let kept = shared.slice();
    let transform: Transform | null = null;
    let aligned: number[][] = [];
    let dist: number[] = [];
    try {
      for (let round = 0; round < 50; round++) {
        let use = kept;
        if (use.filter(Boolean).length < minPoints) use = shared;
        const src: (readonly number[])[] = [], dst: (readonly number[])[] = [];
        e.labels.forEach((l, j) => {
          if (!use[j]) return;
          src.push(e.coords[j]);
          dst.push((cellByLabel.get(l) as { mean: readonly number[] }).mean);
        });
        transform = fitMemberMap(kind, src, dst, settings.memberFit ?? 'template-to-sample');
        aligned = applyTransform(transform, e.coords);
        dist = e.labels.map((l, j) => (shared[j] ? Math.sqrt(mahalanobisSquared(aligned[j], cellByLabel.get(l)!.mean, precision.get(l)!)) : Number.NaN));
        if (settings.robust !== 'trimmed') break;
        const next = shared.map((s, j) => s && dist[j] * dist[j] <= cutoff(cellByLabel.get(e.labels[j])!.count));
        const same = next.every((v, j) => v === kept[j]);
        kept = next;
        if (same) break;
      }
    } catch (err) {
      if (!(err instanceof FitError)) throw err;
      skipped.push({ sample: e.id, reason: `cannot be aligned on the ${nShared} cells it shares with the template: ${err.message}` });
      continue;
    }
    // Points with labels new to the template are kept (they cannot be checked yet).
    const keptAll = e.labels.map((_, j) => (shared[j] ? kept[j] : true));
    joined.push({ entry: e, transform: transform as Transform, aligned, kept: keptAll });
    e.labels.forEach((l, j) => {
      if (keptAll[j]) {
        let s = sums.get(l);
        if (!s) {
          s = emptySums(d);
          sums.set(l, s);
        }
        addObservationInPlace(s, aligned[j]);
      } else newFlags.push({ entry: e, j, y: aligned[j], distance: dist[j] });
    });
  }

  const labels = Array.from(sums.keys()).sort(byCodeUnit);
  const { cells, pooled } = cellsFromSums(
    labels.map((label) => ({ label, sums: sums.get(label) as CellSums })),
    d,
    settings.priorStrength,
    settings.minCount,
  );
  const newCellByLabel = new Map(cells.map((c) => [c.label, c]));
  const inputOrder = new Map(samples.map((s, i) => [s.id, i]));
  joined.sort((a, b) => (inputOrder.get(a.entry.id) ?? 0) - (inputOrder.get(b.entry.id) ?? 0));
  const newMembers: TemplateMember[] = joined.map(({ entry, transform, aligned, kept }) => {
    let res = 0, used = 0;
    entry.labels.forEach((l, j) => {
      if (!kept[j]) return;
      const m = newCellByLabel.get(l)!.mean;
      for (let a = 0; a < d; a++) res += (aligned[j][a] - m[a]) ** 2;
      used++;
    });
    return {
      id: entry.id,
      hash: entry.hash,
      transform,
      residual: Math.sqrt(res / Math.max(1, used)),
      labelled: used,
      positions: entry.labels.map((label, j) => ({ label, coords: entry.coords[j].slice(), row: entry.rows[j] })),
    };
  });
  // Likelier cells are judged against the template the sample was checked against.
  const flagged: FlaggedLabel[] = newFlags
    .sort((a, b) => (inputOrder.get(a.entry.id) ?? 0) - (inputOrder.get(b.entry.id) ?? 0) || a.entry.rows[a.j] - b.entry.rows[b.j])
    .map((f) => ({
      sample: f.entry.id,
      row: f.entry.rows[f.j],
      label: f.entry.labels[f.j],
      distance: f.distance,
      ...likelierCell(f.y, f.entry.labels[f.j], template.cells),
    }));
  return {
    template: assembleTemplate(d, cells, [...template.members, ...newMembers], pooled, settings, [...template.flagged, ...flagged]),
    added: newMembers.map((m) => m.id),
    alreadyMembers,
    skipped,
    flagged,
  };
}
