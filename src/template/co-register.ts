/**
 * Co-registration of many partly labelled samples: generalised Procrustes
 * analysis with missing labels and a robust consensus.
 *
 * Model. Sample i has labelled points x_ij (its own um) for a subset K_i of the
 * cells. Find maps T_i (similarity by default; rigid or affine as options) and a
 * consensus m_k per cell minimising
 *
 *   sum_i sum_{j in K_i} w_ij | T_i(x_ij) - m_k(j) |^2
 *
 * over the observations each sample actually has (Gower 1975, Psychometrika
 * 40:33-51, the GPA loop; Ten Berge 1977, Psychometrika 42:267-276, its
 * convergence and scaling; Commandeur 1991, "Matching configurations", ch. 4,
 * the missing-data form where each consensus row averages only the samples that
 * saw that cell). The loop:
 *
 * 1. Start: the sample with most labels is the first consensus; the others join
 *    greedily, most shared cells first, each aligned on the cells it shares
 *    with the consensus so far (cells it adds start at its aligned positions).
 * 2. Align every sample to the consensus on its shared, currently kept cells
 *    (translation re-estimated with rotation and scale in each fit: Umeyama 1991).
 *    memberFit 'sample-to-template' regresses the sample onto the consensus
 *    (ordinary GPA); the default 'template-to-sample' fits the consensus onto the
 *    sample and inverts the map, so the member's jitter does not shrink its scale
 *    (regression attenuation: fitting noisy points onto clean ones scales them
 *    down by about |signal|^2 / (|signal|^2 + |jitter|^2), 0.7-0.9 on packed animals).
 * 3. Consensus m_k = mean of the kept aligned observations of cell k.
 * 4. Fix the frame (frame.ts): centroid at the origin, principal axes with the
 *    sign rule, and the size of an average animal:
 *    - similarity: s such that the least-squares similarity taking the
 *      consensus (on the cells kept for sample i) onto sample i has, averaged
 *      over samples, scale 1: mean_i c'_i = 1 (Umeyama 1991, eq. 42, template ->
 *      sample). This direction is used because the consensus is nearly free of
 *      jitter: c'_i = tr(D S) / sigma^2_m is unbiased for the size ratio, while
 *      centroid sizes and the sample -> template scale both carry the jitter
 *      (with cells 2 um apart and 1-3 um jitter, a centroid-size rule made the
 *      template about 13% larger than the animals it came from, and the
 *      regression of noisy points onto the template shrinks the scale).
 *    - rigid: no rescaling (rigid fits keep each animal's size).
 *    - affine: the gauge G = Pbar^-1, Pbar the mean over samples of the left
 *      polar stretch (A_i A_i^T)^(1/2) of the fitted linear parts, so that members'
 *      maps are, on average, free of stretch.
 * 5. Robust weights (robust = 'trimmed'): hard-rejection reweighting on
 *    leave-one-out Mahalanobis residuals, the reweighting step of Rousseeuw &
 *    Leroy (1987), Robust Regression and Outlier Detection, ch. 7, with a chi-square
 *    cut-off. For observation y of cell k, with the cell's kept statistics
 *    computed WITHOUT y (n', m', W', so a wrong label cannot mask itself):
 *      Sigma' = (nu_0 Sigma_pool + W') / (nu_0 + n' - 1),   (cell-statistics.ts)
 *      D^2 = (y - m')^T [(1 + 1/n') Sigma']^-1 (y - m'),
 *      w = 1 if D^2 <= r^2(n'), else 0,
 *    r^2(n') the radius beyond which the cell's predictive has tail probability
 *    flagProbability: the multivariate Student-t predictive of the conjugate model
 *    by default, the chi-square quantile chi2_d^-1(1 - flagProbability) with
 *    flagReference 'chi-square' (cell-statistics.ts, predictiveCutoff).
 *    Cells with n' < 2 are not checked (w = 1). Truncation at the 0.999 quantile
 *    leaves clean covariances about 1% small (consistency factor of Croux &
 *    Haesbroeck 1999, not applied: sufficient statistics stay exact sums).
 *    robust = 'none' keeps w = 1: ordinary GPA.
 * 6. Stop when the consensus moved less than `tolerance` (um RMS over cells)
 *    and the weights did not change, or after `maxIterations`.
 *
 * Entries are processed in content-hash order, so the result does not depend on
 * the order of the input: the same arithmetic runs in the same order.
 */
import { FitError, UsageError } from '../errors.js';
import {
  applyTransform,
  composeTransforms,
  fitTransform,
  identityTransform,
  invertTransform,
  transformScale,
  inverse,
  multiply,
  symmetricEigen,
  transpose,
  zeros,
} from '../geometry/index.js';
import type { Dim, Points, TemplateSettings, Transform } from '../types.js';
import { pooledCovariance, predictiveCutoff } from './cell-statistics.js';
import { canonicalFrame } from './frame.js';

/** One sample's labelled points, the unit co-registration works on. */
export interface LabelledEntry {
  readonly id: string;
  readonly source: string;
  readonly hash: string;
  readonly dim: Dim;
  readonly labels: readonly string[];
  /** Own coordinates (um), parallel to labels. */
  readonly coords: Points;
  /** 1-based file line of each point. */
  readonly rows: readonly number[];
}

export interface IterationDiagnostics {
  readonly iteration: number;
  /** RMS over cells of the consensus change in this iteration (um). */
  readonly meanShift: number;
  /** RMS residual of the kept observations about the consensus (um). */
  readonly rmsResidual: number;
  /** Observations given weight 0 by the robust step. */
  readonly downweighted: number;
}

export interface SkippedSample {
  readonly sample: string;
  readonly reason: string;
}

export interface CoRegistration {
  readonly dim: Dim;
  /** Cell labels, sorted by code unit. */
  readonly cells: readonly string[];
  /** Members in content-hash order. */
  readonly entries: readonly LabelledEntry[];
  /** Per member: own coordinates -> template frame. */
  readonly transforms: readonly Transform[];
  /** Per member, per point: index into `cells`. */
  readonly cellOf: readonly (readonly number[])[];
  /**
   * Per member: aligned positions, applyTransform(transforms[i], coords) (the same sums in the
   * same order), row-major: point j, axis a at j * dim + a.
   */
  readonly aligned: readonly Float64Array[];
  /** Per member, per point: kept by the robust step (false = flagged). */
  readonly kept: readonly (readonly boolean[])[];
  /** Per member, per point: leave-one-out Mahalanobis distance (not squared); NaN when not checked. */
  readonly distance: readonly (readonly number[])[];
  /** Consensus (K x d), rows in `cells` order. */
  readonly consensus: readonly (readonly number[])[];
  readonly iterations: readonly IterationDiagnostics[];
  readonly converged: boolean;
  readonly skipped: readonly SkippedSample[];
}

/** Fewest labelled points that determine an alignment of the given family in d dimensions. */
export function minAlignmentPoints(kind: TemplateSettings['alignment'], dim: number): number {
  return kind === 'affine' ? dim + 1 : Math.max(2, dim);
}

function byCodeUnit(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/** Run the co-registration; see the module comment. Throws FitError when fewer than 2 samples can be aligned. */
export function coRegister(input: readonly LabelledEntry[], settings: TemplateSettings): CoRegistration {
  if (input.length === 0) throw new UsageError('no samples given to build a template from');
  const dim = input[0].dim;
  for (const e of input) {
    if (e.dim !== dim) throw new UsageError(`samples mix dimensions: ${input[0].id} is ${dim}-D but ${e.id} is ${e.dim}-D`);
  }
  const kind = settings.alignment;
  const minPoints = minAlignmentPoints(kind, dim);
  const skipped: SkippedSample[] = [];

  // Deterministic order: by content hash; duplicates of content or id are skipped.
  const sorted = input.slice().sort((a, b) => byCodeUnit(a.hash, b.hash) || byCodeUnit(a.id, b.id));
  const byHash = new Map<string, string>();
  const ids = new Set<string>();
  const candidates: LabelledEntry[] = [];
  for (const e of sorted) {
    const same = byHash.get(e.hash);
    if (same !== undefined) {
      skipped.push({ sample: e.id, reason: `same content as sample ${same}` });
      continue;
    }
    if (ids.has(e.id)) {
      skipped.push({ sample: e.id, reason: 'another sample with this id and different content was given' });
      continue;
    }
    if (e.labels.length < minPoints) {
      skipped.push({
        sample: e.id,
        reason: `has ${e.labels.length} labelled point${e.labels.length === 1 ? '' : 's'}; ${kind} alignment needs at least ${minPoints}`,
      });
      continue;
    }
    byHash.set(e.hash, e.id);
    ids.add(e.id);
    candidates.push(e);
  }

  // 1. Greedy start.
  const start = initialise(candidates, kind, minPoints, skipped);
  const entries = start.members;
  if (entries.length < 2) {
    const why = skipped.map((s) => `${s.sample}: ${s.reason}`).join('; ');
    throw new FitError(`a template needs at least 2 samples that can be aligned, got ${entries.length}${why ? ` (skipped ${why})` : ''}`);
  }
  const labelSet = new Set<string>();
  for (const e of entries) for (const l of e.labels) labelSet.add(l);
  const cells = Array.from(labelSet).sort(byCodeUnit);
  const cellIndex = new Map(cells.map((c, i) => [c, i]));
  const cellOf = entries.map((e) => e.labels.map((l) => cellIndex.get(l) as number));
  const k = cells.length;
  let consensus = cells.map((c) => start.consensus.get(c) as number[]);
  let transforms = start.transforms;
  // Per member, flat storage (point j, axis a at j * dim + a): own and aligned
  // coordinates, cell index, kept flag. Transforms are applied in place.
  const own = entries.map((e) => flatPoints(e.coords, dim));
  const aligned = entries.map((e) => new Float64Array(e.labels.length * dim));
  const cellOfFlat = cellOf.map((row) => Int32Array.from(row));
  let kept: Uint8Array[] = entries.map((e) => new Uint8Array(e.labels.length).fill(1));
  let distance: Float64Array[] = entries.map((e) => new Float64Array(e.labels.length).fill(Number.NaN));
  const reference = settings.flagReference ?? 'student-t';
  const cutoff = (n: number) => predictiveCutoff(n, dim, settings.priorStrength, settings.flagProbability, reference);
  const direction = settings.memberFit ?? 'template-to-sample';
  const applyAll = () => {
    for (let i = 0; i < entries.length; i++) {
      if (dim === 3) applyTransformInto3(transforms[i], own[i], aligned[i]);
      else applyTransformInto(transforms[i], own[i], aligned[i], dim);
    }
  };

  // Initial frame.
  let frame = frameMap(consensus, entries, cellOf, kept, transforms, kind);
  consensus = applyTransform(frame, consensus);
  transforms = transforms.map((t) => composeTransforms(frame, t));
  applyAll();

  const iterations: IterationDiagnostics[] = [];
  let converged = false;
  for (let iteration = 1; iteration <= settings.maxIterations; iteration++) {
    // 2. Align.
    transforms = entries.map((e, i) => alignOne(e, cellOf[i], kept[i], consensus, kind, minPoints, transforms[i], direction));
    applyAll();
    // 3. Consensus.
    let next = consensusOf(aligned, cellOfFlat, kept, k, dim);
    // 4. Frame.
    frame = frameMap(next, entries, cellOf, kept, transforms, kind, direction === 'template-to-sample');
    next = applyTransform(frame, next);
    transforms = transforms.map((t) => composeTransforms(frame, t));
    applyAll();
    let shift = 0;
    for (let c = 0; c < k; c++) for (let a = 0; a < dim; a++) shift += (next[c][a] - consensus[c][a]) ** 2;
    const meanShift = Math.sqrt(shift / k);
    consensus = next;
    // 5. Robust weights.
    let changed = false;
    if (settings.robust === 'trimmed') {
      const w = robustWeightsFlat(aligned, cellOfFlat, kept, k, dim, settings.priorStrength, cutoff);
      for (let i = 0; i < entries.length && !changed; i++) {
        const a = w.kept[i], b = kept[i];
        for (let j = 0; j < a.length; j++)
          if (a[j] !== b[j]) {
            changed = true;
            break;
          }
      }
      kept = w.kept;
      distance = w.distance;
    }
    // acc: residual sum of squares, kept count, flagged count (summed in member order).
    const acc = new Float64Array(3);
    for (let i = 0; i < entries.length; i++) addMemberResiduals(aligned[i], cellOfFlat[i], kept[i], consensus, dim, acc);
    const res = acc[0], nres = acc[1], down = acc[2];
    iterations.push({ iteration, meanShift, rmsResidual: Math.sqrt(res / Math.max(1, nres)), downweighted: down });
    if (meanShift < settings.tolerance && !changed) {
      converged = true;
      break;
    }
  }
  return {
    dim,
    cells,
    entries,
    transforms,
    cellOf,
    aligned,
    kept: kept.map((row) => {
      const out = new Array<boolean>(row.length);
      for (let j = 0; j < row.length; j++) out[j] = row[j] === 1;
      return out;
    }),
    distance: distance.map((row) => {
      const out = new Array<number>(row.length);
      for (let j = 0; j < row.length; j++) out[j] = row[j];
      return out;
    }),
    consensus,
    iterations,
    converged,
    skipped,
  };
}

function addMemberResiduals(y: Float64Array, cells: Int32Array, kept: Uint8Array, consensus: Points, dim: number, acc: Float64Array): void {
  for (let j = 0; j < kept.length; j++) {
    if (!kept[j]) {
      acc[2]++;
      continue;
    }
    const m = consensus[cells[j]];
    for (let a = 0; a < dim; a++) {
      const e = y[j * dim + a] - m[a];
      acc[0] += e * e;
    }
    acc[1]++;
  }
}

/** Points (n x d) as one row-major Float64Array. */
function flatPoints(points: Points, dim: number): Float64Array {
  const out = new Float64Array(points.length * dim);
  for (let j = 0; j < points.length; j++) for (let a = 0; a < dim; a++) out[j * dim + a] = points[j][a];
  return out;
}

/**
 * y_j = A x_j + t for every point of a flat row-major array, written into `out`;
 * the same sums in the same order as applyTransform (geometry/transform.ts), so
 * the results are equal to the bit.
 */
function applyTransformInto(t: Transform, x: Float64Array, out: Float64Array, dim: number): void {
  const A = t.linear, tr = t.translation;
  for (let p = 0; p < x.length; p += dim) {
    for (let r = 0; r < dim; r++) {
      const row = A[r];
      let s = 0;
      for (let c = 0; c < dim; c++) s += row[c] * x[p + c];
      out[p + r] = s + tr[r];
    }
  }
}


/** applyTransformInto for d = 3, unrolled: the same sums in the same order. */
function applyTransformInto3(t: Transform, x: Float64Array, out: Float64Array): void {
  const A = t.linear, tr = t.translation;
  const a00 = A[0][0], a01 = A[0][1], a02 = A[0][2], a10 = A[1][0], a11 = A[1][1], a12 = A[1][2];
  const a20 = A[2][0], a21 = A[2][1], a22 = A[2][2], t0 = tr[0], t1 = tr[1], t2 = tr[2];
  for (let p = 0; p < x.length; p += 3) {
    const x0 = x[p], x1 = x[p + 1], x2 = x[p + 2];
    // 0 + ... as in the loop's sum (keeps the sign of a zero sum the same).
    out[p] = 0 + a00 * x0 + a01 * x1 + a02 * x2 + t0;
    out[p + 1] = 0 + a10 * x0 + a11 * x1 + a12 * x2 + t1;
    out[p + 2] = 0 + a20 * x0 + a21 * x1 + a22 * x2 + t2;
  }
}

/**
 * Greedy start (module comment, step 1). Each step takes the remaining sample
 * sharing most cells with the consensus so far (ties: more labels, then earlier in
 * content-hash order). The shared counts are kept up to date from an index
 * cell -> candidates: when a cell first enters the consensus, every candidate
 * holding it gains one. O(N L) index updates plus O(N^2) picks, instead of
 * rescanning every remaining sample's labels at each step (O(N^2 L)).
 */
function initialise(
  candidates: readonly LabelledEntry[],
  kind: TemplateSettings['alignment'],
  minPoints: number,
  skipped: SkippedSample[],
): { members: LabelledEntry[]; transforms: Transform[]; consensus: Map<string, number[]> } {
  const members: LabelledEntry[] = [];
  const transforms: Transform[] = [];
  const consensus = new Map<string, number[]>();
  const counts = new Map<string, number>();
  if (candidates.length === 0) return { members, transforms, consensus };
  // shared[c]: labels of candidate c (with multiplicity) whose cell is in the consensus.
  const shared = new Int32Array(candidates.length);
  const holders = new Map<string, number[]>();
  candidates.forEach((e, c) => {
    for (const l of e.labels) {
      const list = holders.get(l);
      if (list) list.push(c);
      else holders.set(l, [c]);
    }
  });
  const enter = (l: string, m: number[]) => {
    consensus.set(l, m);
    counts.set(l, 1);
    for (const c of holders.get(l) as number[]) shared[c]++;
  };
  const seed = (e: LabelledEntry) => {
    members.push(e);
    transforms.push(identityTransform(e.dim));
    e.labels.forEach((l, j) => {
      if (consensus.has(l)) {
        consensus.set(l, e.coords[j].slice());
        counts.set(l, 1);
      } else enter(l, e.coords[j].slice());
    });
  };
  let ref = 0;
  for (let i = 1; i < candidates.length; i++) if (candidates[i].labels.length > candidates[ref].labels.length) ref = i;
  const first = candidates[ref];
  // The reference must itself be non-degenerate: fit it to itself.
  try {
    fitTransform(kind, first.coords, first.coords);
    seed(first);
  } catch (e) {
    if (!(e instanceof FitError)) throw e;
    skipped.push({ sample: first.id, reason: `cannot be aligned: ${e.message}` });
  }
  // Candidate indices still to place, in content-hash order.
  const remaining: number[] = [];
  for (let i = 0; i < candidates.length; i++) if (i !== ref) remaining.push(i);
  while (remaining.length > 0) {
    if (members.length === 0) {
      // The reference was degenerate: start again from the next best.
      let r = 0;
      for (let i = 1; i < remaining.length; i++) if (candidates[remaining[i]].labels.length > candidates[remaining[r]].labels.length) r = i;
      const next = candidates[remaining.splice(r, 1)[0]];
      try {
        fitTransform(kind, next.coords, next.coords);
        seed(next);
      } catch (e) {
        if (!(e instanceof FitError)) throw e;
        skipped.push({ sample: next.id, reason: `cannot be aligned: ${e.message}` });
      }
      continue;
    }
    let best = -1, bestShared = -1, bestLabels = -1;
    for (let i = 0; i < remaining.length; i++) {
      const c = remaining[i];
      const n = shared[c];
      if (n > bestShared || (n === bestShared && candidates[c].labels.length > bestLabels)) {
        best = i;
        bestShared = n;
        bestLabels = candidates[c].labels.length;
      }
    }
    if (bestShared < minPoints) {
      for (const c of remaining) {
        const n = shared[c];
        skipped.push({ sample: candidates[c].id, reason: `shares ${n} labelled cell${n === 1 ? '' : 's'} with the other samples; ${kind} alignment needs at least ${minPoints}` });
      }
      break;
    }
    const e = candidates[remaining.splice(best, 1)[0]];
    const src: (readonly number[])[] = [], dst: number[][] = [];
    e.labels.forEach((l, j) => {
      const m = consensus.get(l);
      if (m) {
        src.push(e.coords[j]);
        dst.push(m);
      }
    });
    let t: Transform;
    try {
      t = fitTransform(kind, src, dst).transform;
    } catch (err) {
      if (!(err instanceof FitError)) throw err;
      skipped.push({ sample: e.id, reason: `cannot be aligned on the ${src.length} cells it shares with the other samples: ${err.message}` });
      continue;
    }
    members.push(e);
    transforms.push(t);
    const y = applyTransform(t, e.coords);
    e.labels.forEach((l, j) => {
      const m = consensus.get(l);
      const n = counts.get(l) ?? 0;
      if (m) {
        for (let a = 0; a < m.length; a++) m[a] += (y[j][a] - m[a]) / (n + 1);
        counts.set(l, n + 1);
      } else {
        enter(l, y[j]);
      }
    });
  }
  return { members, transforms, consensus };
}

function alignOne(
  e: LabelledEntry,
  cellOf: readonly number[],
  kept: ArrayLike<number>,
  consensus: Points,
  kind: TemplateSettings['alignment'],
  minPoints: number,
  previous: Transform,
  direction: 'template-to-sample' | 'sample-to-template',
): Transform {
  const pick = (useAll: boolean) => {
    const src: (readonly number[])[] = [], dst: (readonly number[])[] = [];
    for (let j = 0; j < e.coords.length; j++) {
      if (!useAll && !kept[j]) continue;
      src.push(e.coords[j]);
      dst.push(consensus[cellOf[j]]);
    }
    return { src, dst };
  };
  let { src, dst } = pick(false);
  if (src.length < minPoints) ({ src, dst } = pick(true));
  try {
    return fitMemberMap(kind, src, dst, direction, false);
  } catch (err) {
    if (!(err instanceof FitError)) throw err;
    return previous;
  }
}

/**
 * The map own -> template for one member from paired points: directly
 * (sample-to-template, minimising sum |T(x) - m|^2) or as the inverse of the map
 * minimising sum |x - T'(m)|^2 (template-to-sample). Throws FitError for
 * degenerate points.
 */
export function fitMemberMap(
  kind: TemplateSettings['alignment'],
  own: Points,
  template: Points,
  direction: 'template-to-sample' | 'sample-to-template',
  checkOwn = true,
): Transform {
  if (direction === 'sample-to-template') return fitTransform(kind, own, template).transform;
  // Degeneracy is judged on the member's own points too (skipped inside the loop, where the
  // member's points already passed this check when it joined).
  if (checkOwn) fitTransform(kind, own, template);
  return invertTransform(fitTransform(kind, template, own).transform);
}

function consensusOf(aligned: readonly Float64Array[], cellOf: readonly Int32Array[], kept: readonly Uint8Array[], k: number, dim: number): number[][] {
  const sum = new Float64Array(k * dim), all = new Float64Array(k * dim);
  const n = new Int32Array(k), nAll = new Int32Array(k);
  for (let i = 0; i < aligned.length; i++) {
    if (dim === 3) addMemberToConsensus3(aligned[i], cellOf[i], kept[i], sum, all, n, nAll);
    else addMemberToConsensus(aligned[i], cellOf[i], kept[i], sum, all, n, nAll, dim);
  }
  const out: number[][] = [];
  for (let c = 0; c < k; c++) {
    const row = new Array<number>(dim);
    for (let a = 0; a < dim; a++) row[a] = n[c] > 0 ? sum[c * dim + a] / n[c] : all[c * dim + a] / nAll[c];
    out.push(row);
  }
  return out;
}

function addMemberToConsensus(y: Float64Array, cells: Int32Array, kept: Uint8Array, sum: Float64Array, all: Float64Array, n: Int32Array, nAll: Int32Array, dim: number): void {
  for (let j = 0; j < cells.length; j++) {
    const c = cells[j];
    for (let a = 0; a < dim; a++) all[c * dim + a] += y[j * dim + a];
    nAll[c]++;
    if (kept[j]) {
      for (let a = 0; a < dim; a++) sum[c * dim + a] += y[j * dim + a];
      n[c]++;
    }
  }
}

/** addMemberToConsensus for d = 3, unrolled: the same sums in the same order. */
function addMemberToConsensus3(y: Float64Array, cells: Int32Array, kept: Uint8Array, sum: Float64Array, all: Float64Array, n: Int32Array, nAll: Int32Array): void {
  for (let j = 0; j < cells.length; j++) {
    const c = cells[j];
    const co = c * 3, yo = j * 3;
    const y0 = y[yo], y1 = y[yo + 1], y2 = y[yo + 2];
    all[co] += y0;
    all[co + 1] += y1;
    all[co + 2] += y2;
    nAll[c]++;
    if (kept[j]) {
      sum[co] += y0;
      sum[co + 1] += y1;
      sum[co + 2] += y2;
      n[c]++;
    }
  }
}

function frameMap(
  consensus: Points,
  entries: readonly LabelledEntry[],
  cellOf: readonly (readonly number[])[],
  kept: readonly ArrayLike<number>[],
  transforms: readonly Transform[],
  kind: TemplateSettings['alignment'],
  transformsFitTemplateToSample = false,
): Transform {
  if (kind === 'rigid') return canonicalFrame(consensus, 1);
  if (kind === 'similarity' && transformsFitTemplateToSample) {
    // The members' maps are inverses of template -> sample fits made against the consensus
    // of this iteration's alignment step: c'_i = 1 / scale(T_i). At the fixed point the
    // consensus no longer moves, so the rule below holds there exactly.
    let total = 0;
    for (const t of transforms) total += 1 / transformScale(t);
    return canonicalFrame(consensus, total / transforms.length);
  }
  if (kind === 'similarity') {
    // Size: s = mean_i c'_i, c'_i the scale of the least-squares similarity taking the consensus
    // (its cells kept for sample i) onto sample i's own points.
    let total = 0, n = 0;
    for (let i = 0; i < entries.length; i++) {
      const own: (readonly number[])[] = [], cons: (readonly number[])[] = [];
      for (let j = 0; j < entries[i].coords.length; j++) {
        if (!kept[i][j]) continue;
        own.push(entries[i].coords[j]);
        cons.push(consensus[cellOf[i][j]]);
      }
      try {
        total += fitTransform('similarity', cons, own).scale;
        n++;
      } catch (err) {
        if (!(err instanceof FitError)) throw err;
      }
    }
    return canonicalFrame(consensus, n > 0 ? total / n : 1);
  }
  // affine: G = Pbar^-1, Pbar = mean_i (A_i A_i^T)^(1/2).
  const d = consensus[0].length;
  const pbar = zeros(d, d);
  for (const t of transforms) {
    const { values, vectors } = symmetricEigen(multiply(t.linear, transpose(t.linear)));
    for (let c = 0; c < d; c++) {
      const r = Math.sqrt(Math.max(0, values[c])) / transforms.length;
      for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) pbar[a][b] += r * vectors[a][c] * vectors[b][c];
    }
  }
  return canonicalFrame(consensus, 1, inverse(pbar));
}

/**
 * Hard-rejection weights from leave-one-out Mahalanobis residuals (module
 * comment, step 5). Returns the new kept flags and the distances D (not squared).
 */
export function robustWeights(
  aligned: readonly (readonly (readonly number[])[])[],
  cellOf: readonly (readonly number[])[],
  kept: readonly (readonly boolean[])[],
  k: number,
  dim: number,
  priorStrength: number,
  cutoff: (n: number) => number,
): { kept: boolean[][]; distance: number[][] } {
  const w = robustWeightsFlat(
    aligned.map((rows) => flatPoints(rows, dim)),
    cellOf.map((row) => Int32Array.from(row)),
    kept.map((row) => Uint8Array.from(row, (v) => (v ? 1 : 0))),
    k,
    dim,
    priorStrength,
    cutoff,
  );
  return { kept: w.kept.map((row) => Array.from(row, (v) => v === 1)), distance: w.distance.map((row) => Array.from(row)) };
}

/**
 * robustWeights on flat storage: per member, aligned points row-major
 * (point j, axis a at j * dim + a), cell indices, kept flags (1 = kept).
 */
function robustWeightsFlat(
  aligned: readonly Float64Array[],
  cellOf: readonly Int32Array[],
  kept: readonly Uint8Array[],
  k: number,
  dim: number,
  priorStrength: number,
  cutoff: (n: number) => number,
): { kept: Uint8Array[]; distance: Float64Array[] } {
  // Kept statistics per cell: n, mean, scatter (two passes for accuracy), on flat
  // typed arrays (mean k x d, scatter k x d x d row-major); same sums in the same order.
  const dd = dim * dim;
  const n = new Int32Array(k);
  const mean = new Float64Array(k * dim);
  // Per-member helpers (small functions called once per member are optimised by the JIT
  // within the first build; one long loop in a function called 3 times per build is not).
  for (let i = 0; i < aligned.length; i++) {
    if (dim === 3) addMemberToMeans3(aligned[i], cellOf[i], kept[i], n, mean);
    else addMemberToMeans(aligned[i], cellOf[i], kept[i], n, mean, dim);
  }
  for (let c = 0; c < k; c++) if (n[c] > 0) for (let a = 0; a < dim; a++) mean[c * dim + a] /= n[c];
  const scatter = new Float64Array(k * dd);
  for (let i = 0; i < aligned.length; i++) {
    if (dim === 3) addMemberToScatter3(aligned[i], cellOf[i], kept[i], mean, scatter);
    else addMemberToScatter(aligned[i], cellOf[i], kept[i], mean, scatter, dim);
  }
  const scatters: { n: number; scatter: number[][] }[] = [];
  for (let c = 0; c < k; c++) {
    const m: number[][] = [];
    for (let a = 0; a < dim; a++) {
      const row = new Array<number>(dim);
      for (let b = 0; b < dim; b++) row[b] = scatter[c * dd + a * dim + b];
      m.push(row);
    }
    scatters.push({ n: n[c], scatter: m });
  }
  const pooled = pooledCovariance(scatters, dim);
  const pooledFlat = new Float64Array(dd);
  for (let a = 0; a < dim; a++) for (let b = 0; b < dim; b++) pooledFlat[a * dim + b] = pooled[a][b];
  const outKept: Uint8Array[] = [], outDist: Float64Array[] = [];
  const scratch = new Float64Array(dd + 3 * dim);
  // Cut-off radius by leave-one-out count, computed once per count (NaN = not yet).
  let maxN = 0;
  for (let c = 0; c < k; c++) if (n[c] > maxN) maxN = n[c];
  const cutoffs = new Float64Array(maxN + 1).fill(Number.NaN);
  for (let i = 0; i < aligned.length; i++) {
    const rowKept = new Uint8Array(cellOf[i].length);
    const rowDist = new Float64Array(cellOf[i].length);
    if (dim === 3) weighMember3(aligned[i], cellOf[i], kept[i], n, mean, scatter, pooledFlat, priorStrength, cutoffs, cutoff, rowKept, rowDist);
    else weighMember(aligned[i], cellOf[i], kept[i], n, mean, scatter, pooledFlat, priorStrength, dim, cutoffs, cutoff, scratch, rowKept, rowDist);
    outKept.push(rowKept);
    outDist.push(rowDist);
  }
  return { kept: outKept, distance: outDist };
}

function addMemberToMeans(y: Float64Array, cells: Int32Array, kept: Uint8Array, n: Int32Array, mean: Float64Array, dim: number): void {
  for (let j = 0; j < cells.length; j++)
    if (kept[j]) {
      const c = cells[j];
      n[c]++;
      for (let a = 0; a < dim; a++) mean[c * dim + a] += y[j * dim + a];
    }
}

function addMemberToScatter(y: Float64Array, cells: Int32Array, kept: Uint8Array, mean: Float64Array, scatter: Float64Array, dim: number): void {
  const dd = dim * dim;
  for (let j = 0; j < cells.length; j++)
    if (kept[j]) {
      const c = cells[j];
      const yo = j * dim, mo = c * dim, so = c * dd;
      for (let a = 0; a < dim; a++) {
        const ya = y[yo + a] - mean[mo + a];
        for (let b = 0; b < dim; b++) scatter[so + a * dim + b] += ya * (y[yo + b] - mean[mo + b]);
      }
    }
}

/** One member's kept flags and distances (robustWeights, module comment step 5), written into rowKept / rowDist. */
function weighMember(
  y: Float64Array,
  cells: Int32Array,
  kept: Uint8Array,
  n: Int32Array,
  mean: Float64Array,
  scatter: Float64Array,
  pooledFlat: Float64Array,
  priorStrength: number,
  dim: number,
  cutoffs: Float64Array,
  cutoff: (n: number) => number,
  scratch: Float64Array,
  rowKept: Uint8Array,
  rowDist: Float64Array,
): void {
  const dd = dim * dim;
  const cov = scratch.subarray(0, dd);
  const r = scratch.subarray(dd, dd + dim);
  const m1 = scratch.subarray(dd + dim, dd + 2 * dim);
  const z = scratch.subarray(dd + 2 * dim, dd + 3 * dim);
  for (let j = 0; j < cells.length; j++) {
    const c = cells[j];
    const yo = j * dim, mo = c * dim, so = c * dd;
    let n1 = n[c];
    for (let a = 0; a < dim; a++) {
      r[a] = y[yo + a] - mean[mo + a];
      m1[a] = mean[mo + a];
    }
    const self = kept[j] === 1;
    if (self) {
      n1 = n[c] - 1;
      // m' = (n m - y) / (n - 1); W' = W - n/(n-1) (y - m)(y - m)^T.
      if (n1 >= 1) for (let a = 0; a < dim; a++) m1[a] = mean[mo + a] - r[a] / n1;
    }
    if (n1 < 2) {
      rowKept[j] = 1;
      rowDist[j] = Number.NaN;
      continue;
    }
    const f = self ? n[c] / n1 : 0;
    const denom = priorStrength + n1 - 1;
    const infl = 1 + 1 / n1;
    for (let a = 0; a < dim; a++)
      for (let b = 0; b <= a; b++) cov[a * dim + b] = (infl * (priorStrength * pooledFlat[a * dim + b] + scatter[so + a * dim + b] - f * r[a] * r[b])) / denom;
    for (let a = 0; a < dim; a++) r[a] = y[yo + a] - m1[a];
    const d2 = choleskyQuadraticForm(cov, r, dim, z);
    let limit = cutoffs[n1];
    if (Number.isNaN(limit)) limit = cutoffs[n1] = cutoff(n1);
    rowKept[j] = d2 <= limit ? 1 : 0;
    rowDist[j] = Math.sqrt(d2);
  }
}

/** addMemberToMeans for d = 3, unrolled: the same sums in the same order. */
function addMemberToMeans3(y: Float64Array, cells: Int32Array, kept: Uint8Array, n: Int32Array, mean: Float64Array): void {
  for (let j = 0; j < cells.length; j++)
    if (kept[j]) {
      const c = cells[j];
      n[c]++;
      const mo = c * 3, yo = j * 3;
      mean[mo] += y[yo];
      mean[mo + 1] += y[yo + 1];
      mean[mo + 2] += y[yo + 2];
    }
}

/** addMemberToScatter for d = 3, unrolled: the same sums in the same order. */
function addMemberToScatter3(y: Float64Array, cells: Int32Array, kept: Uint8Array, mean: Float64Array, scatter: Float64Array): void {
  for (let j = 0; j < cells.length; j++)
    if (kept[j]) {
      const c = cells[j];
      const yo = j * 3, mo = c * 3, so = c * 9;
      const y0 = y[yo] - mean[mo], y1 = y[yo + 1] - mean[mo + 1], y2 = y[yo + 2] - mean[mo + 2];
      scatter[so] += y0 * y0;
      scatter[so + 1] += y0 * y1;
      scatter[so + 2] += y0 * y2;
      scatter[so + 3] += y1 * y0;
      scatter[so + 4] += y1 * y1;
      scatter[so + 5] += y1 * y2;
      scatter[so + 6] += y2 * y0;
      scatter[so + 7] += y2 * y1;
      scatter[so + 8] += y2 * y2;
    }
}

/**
 * weighMember for d = 3, unrolled, with the Cholesky quadratic form inline: the same
 * operations in the same order as weighMember and choleskyQuadraticForm, so the
 * flags and distances are equal to the bit; the same FitError when a covariance is
 * not positive definite.
 */
function weighMember3(
  y: Float64Array,
  cells: Int32Array,
  kept: Uint8Array,
  n: Int32Array,
  mean: Float64Array,
  scatter: Float64Array,
  pooledFlat: Float64Array,
  priorStrength: number,
  cutoffs: Float64Array,
  cutoff: (n: number) => number,
  rowKept: Uint8Array,
  rowDist: Float64Array,
): void {
  const p00 = priorStrength * pooledFlat[0], p10 = priorStrength * pooledFlat[3], p11 = priorStrength * pooledFlat[4];
  const p20 = priorStrength * pooledFlat[6], p21 = priorStrength * pooledFlat[7], p22 = priorStrength * pooledFlat[8];
  for (let j = 0; j < cells.length; j++) {
    const c = cells[j];
    const yo = j * 3, mo = c * 3, so = c * 9;
    const nc = n[c];
    let n1 = nc;
    const mean0 = mean[mo], mean1 = mean[mo + 1], mean2 = mean[mo + 2];
    const y0 = y[yo], y1 = y[yo + 1], y2 = y[yo + 2];
    const r0 = y0 - mean0, r1 = y1 - mean1, r2 = y2 - mean2;
    let m0 = mean0, m1 = mean1, m2 = mean2;
    const self = kept[j] === 1;
    if (self) {
      n1 = nc - 1;
      // m' = (n m - y) / (n - 1); W' = W - n/(n-1) (y - m)(y - m)^T.
      if (n1 >= 1) {
        m0 = mean0 - r0 / n1;
        m1 = mean1 - r1 / n1;
        m2 = mean2 - r2 / n1;
      }
    }
    if (n1 < 2) {
      rowKept[j] = 1;
      rowDist[j] = Number.NaN;
      continue;
    }
    const f = self ? nc / n1 : 0;
    const denom = priorStrength + n1 - 1;
    const infl = 1 + 1 / n1;
    // Lower triangle of the leave-one-out predictive covariance.
    const c00 = (infl * (p00 + scatter[so] - f * r0 * r0)) / denom;
    const c10 = (infl * (p10 + scatter[so + 3] - f * r1 * r0)) / denom;
    const c11 = (infl * (p11 + scatter[so + 4] - f * r1 * r1)) / denom;
    const c20 = (infl * (p20 + scatter[so + 6] - f * r2 * r0)) / denom;
    const c21 = (infl * (p21 + scatter[so + 7] - f * r2 * r1)) / denom;
    const c22 = (infl * (p22 + scatter[so + 8] - f * r2 * r2)) / denom;
    const e0 = y0 - m0, e1 = y1 - m1, e2 = y2 - m2;
    // r^T C^-1 r by C = L L^T (choleskyQuadraticForm).
    if (!(c00 > 0)) throw new FitError(`cell covariance is not positive definite (pivot 0 is ${c00})`);
    const L00 = Math.sqrt(c00);
    const z0 = e0 / L00;
    const L10 = c10 / L00;
    const q1 = c11 - L10 * L10;
    if (!(q1 > 0)) throw new FitError(`cell covariance is not positive definite (pivot 1 is ${q1})`);
    const L11 = Math.sqrt(q1);
    const z1 = (e1 - L10 * z0) / L11;
    const L20 = c20 / L00;
    const L21 = (c21 - L20 * L10) / L11;
    const q2 = c22 - L20 * L20 - L21 * L21;
    if (!(q2 > 0)) throw new FitError(`cell covariance is not positive definite (pivot 2 is ${q2})`);
    const z2 = (e2 - L20 * z0 - L21 * z1) / Math.sqrt(q2);
    const d2 = z0 * z0 + z1 * z1 + z2 * z2;
    let limit = cutoffs[n1];
    if (Number.isNaN(limit)) limit = cutoffs[n1] = cutoff(n1);
    rowKept[j] = d2 <= limit ? 1 : 0;
    rowDist[j] = Math.sqrt(d2);
  }
}

/**
 * r^T C^-1 r for a symmetric positive definite C given by its lower triangle
 * (upper triangle ignored; flat row-major d x d), d <= 3, by the Cholesky factor C = L L^T without
 * allocating: z = L^-1 r, result |z|^2 (Golub & Van Loan, Matrix Computations,
 * Algorithm 4.2.1). Throws FitError when C is not positive definite. `z` is
 * scratch space of length d.
 */
function choleskyQuadraticForm(c: Float64Array, r: Float64Array, d: number, z: Float64Array): number {
  // d <= 3: factor into a local lower-triangular array.
  const l00 = c[0];
  if (!(l00 > 0)) throw new FitError(`cell covariance is not positive definite (pivot 0 is ${l00})`);
  const L00 = Math.sqrt(l00);
  z[0] = r[0] / L00;
  if (d === 1) return z[0] * z[0];
  const L10 = c[d] / L00;
  const p1 = c[d + 1] - L10 * L10;
  if (!(p1 > 0)) throw new FitError(`cell covariance is not positive definite (pivot 1 is ${p1})`);
  const L11 = Math.sqrt(p1);
  z[1] = (r[1] - L10 * z[0]) / L11;
  if (d === 2) return z[0] * z[0] + z[1] * z[1];
  const L20 = c[2 * d] / L00;
  const L21 = (c[2 * d + 1] - L20 * L10) / L11;
  const p2 = c[2 * d + 2] - L20 * L20 - L21 * L21;
  if (!(p2 > 0)) throw new FitError(`cell covariance is not positive definite (pivot 2 is ${p2})`);
  z[2] = (r[2] - L20 * z[0] - L21 * z[1]) / Math.sqrt(p2);
  return z[0] * z[0] + z[1] * z[1] + z[2] * z[2];
}
