/**
 * Iterative closest point (ICP) baseline: align an unlabelled sample to the
 * template's cell means without correspondences.
 *
 * Besl & McKay (1992), "A method for registration of 3-D shapes", IEEE TPAMI
 * 14(2):239-256, Sec. IV: alternate (a) pairing every sample point with its
 * closest template mean and (b) the least-squares transform for those pairs,
 * until the pairs stop changing. With `trimFraction` > 0 the pairs with the
 * largest residuals are left out of step (b): the trimmed ICP of Chetverikov,
 * Svirko, Stepanov & Krsek (2002), "The trimmed iterative closest point
 * algorithm", ICPR, vol. 3, pp. 545-548 (a fixed overlap ratio
 * xi = 1 - trimFraction, not their automatic choice of xi).
 *
 * ICP is local; it is run from several starting orientations (the sample's
 * own, the principal axes with every sign pattern giving a proper rotation,
 * then uniformly random rotations) and the start with the lowest trimmed
 * residual wins.
 */

import { FitError, UsageError } from '../errors.js';
import { applyToPoint, fitTransform, invertTransform, symmetricEigen, determinant } from '../geometry/index.js';
import { randomRotation, type Rng } from '../random.js';
import type { Points, Transform } from '../types.js';
import { PointIndex } from './nearest.js';

export type AlignmentKind = 'rigid' | 'similarity' | 'affine';

export interface IcpOptions {
  /** Seeded generator for the random starting rotations. */
  readonly rng: Rng;
  /** Transform family (default 'similarity'). */
  readonly kind?: AlignmentKind;
  /** Number of starting orientations (default 24). */
  readonly starts?: number;
  /** Iteration cap per start (default 100). */
  readonly maxIterations?: number;
  /** Fraction of pairs with the largest residuals left out of each fit, in [0, 1) (default 0.2; 0 = plain ICP). */
  readonly trimFraction?: number;
}

export interface IcpResult {
  /** Maps sample coordinates into the template frame. */
  readonly transform: Transform;
  /** ICP iterations (fits) of the winning start. */
  readonly iterations: number;
  /**
   * Trimmed root-mean-square residual of the winning start, in sample units (um):
   * sqrt(mean over kept pairs of |x_i - T^-1(m_j(i))|^2).
   */
  readonly rmsResidual: number;
  /** Starting orientations tried. */
  readonly starts: number;
  /** Index of the winning start (0-based: identity, then principal axes, then random rotations). */
  readonly bestStart: number;
  /** Starts abandoned because a fit was degenerate. */
  readonly failedStarts: number;
}

/**
 * Align `samplePoints` to `templateMeans` by multi-start (trimmed) ICP.
 *
 * Objective, per start: minimise over transforms F (template -> sample) and pairings j(i)
 *   sum over the kept i of |x_i - F(m_j(i))|^2,
 * where j(i) = argmin_j |T(x_i) - m_j| with T = F^-1, and the kept i are the
 * ceil((1 - trimFraction) n) points with the smallest current distances.
 * The fit is made in the direction template -> sample and inverted, because
 * regressing noisy sample points onto the template biases a similarity's
 * scale low (see docs/algorithms.md, "ICP baseline").
 *
 * Shapes: templateMeans M x d, samplePoints N x d, d = 2 or 3; need M >= d + 1
 * and at least d + 1 kept sample points.
 *
 * Returns the sample -> template transform of the start with the lowest
 * trimmed residual (ties: the earlier start).
 *
 * @throws UsageError for bad options, mismatched dimensions or non-finite coordinates.
 * @throws FitError when there are too few points or every start degenerates.
 */
export function alignIcp(templateMeans: Points, samplePoints: Points, options: IcpOptions): IcpResult {
  const d = checkPointSets('alignIcp', templateMeans, samplePoints);
  const kind = options.kind ?? 'similarity';
  const starts = options.starts ?? 24;
  const maxIterations = options.maxIterations ?? 100;
  const trimFraction = options.trimFraction ?? 0.2;
  if (kind !== 'rigid' && kind !== 'similarity' && kind !== 'affine') throw new UsageError(`alignIcp: unknown kind "${String(kind)}"`);
  checkCount('alignIcp', 'starts', starts, 1);
  checkCount('alignIcp', 'maxIterations', maxIterations, 1);
  if (!(trimFraction >= 0 && trimFraction < 1)) throw new UsageError(`alignIcp: trimFraction must be in [0, 1), got ${trimFraction}`);
  const n = samplePoints.length;
  const keep = Math.ceil((1 - trimFraction) * n);
  if (keep < d + 1) {
    throw new FitError(`alignIcp needs at least ${d + 1} kept sample points, got ${keep} (${n} points, trimFraction ${trimFraction})`);
  }

  const index = new PointIndex(templateMeans);
  const poses = startingPoses(templateMeans, samplePoints, kind, starts, options.rng);
  let best: { transform: Transform; iterations: number; rms: number; start: number } | null = null;
  let failed = 0;
  for (let s = 0; s < poses.length; s++) {
    let run: { transform: Transform; iterations: number; rms: number };
    try {
      run = icpFromStart(templateMeans, samplePoints, index, poses[s], kind, keep, maxIterations);
    } catch (e) {
      if (e instanceof FitError) {
        failed++;
        continue;
      }
      throw e;
    }
    if (best === null || run.rms < best.rms) best = { ...run, start: s };
  }
  if (best === null) throw new FitError(`alignIcp: every one of the ${poses.length} starts gave a degenerate fit`);
  return {
    transform: best.transform,
    iterations: best.iterations,
    rmsResidual: best.rms,
    starts: poses.length,
    bestStart: best.start,
    failedStarts: failed,
  };
}

function icpFromStart(
  template: Points,
  sample: Points,
  index: PointIndex,
  start: Transform,
  kind: AlignmentKind,
  keep: number,
  maxIterations: number,
): { transform: Transform; iterations: number; rms: number } {
  const n = sample.length;
  const scaleSquared = spreadSquared(template);
  let transform = start;
  let previous: Int32Array | null = null;
  let iterations = 0;
  const order = new Array<number>(n);
  const nearest = new Int32Array(n);
  const dist = new Float64Array(n);
  const d = sample[0].length;
  const q = new Array<number>(d).fill(0);
  let previousMse = Infinity;
  for (;;) {
    const a = transform.linear;
    const t = transform.translation;
    for (let i = 0; i < n; i++) {
      const x = sample[i];
      for (let r = 0; r < d; r++) {
        let v = t[r];
        for (let c = 0; c < d; c++) v += a[r][c] * x[c];
        q[r] = v;
      }
      const hit = index.nearest(q);
      nearest[i] = hit.index;
      dist[i] = hit.distanceSquared;
      order[i] = i;
    }
    order.sort((u, v) => dist[u] - dist[v] || u - v);
    // Pairs of this iteration, as a canonical code: the template index of each kept point, -1 elsewhere.
    const pairs = new Int32Array(n).fill(-1);
    let mse = 0;
    for (let k = 0; k < keep; k++) {
      pairs[order[k]] = nearest[order[k]];
      mse += dist[order[k]];
    }
    mse /= keep;
    // Stop at a fixed point (same pairs give the same fit), when the trimmed
    // mean squared distance stops falling (relative change below 1e-9, as in
    // Chetverikov et al. 2002's stopping rule), or at the cap.
    const stalled =
      (Number.isFinite(previousMse) && Math.abs(previousMse - mse) <= 1e-9 * previousMse) || mse <= 1e-24 * scaleSquared;
    if ((previous !== null && sameCode(previous, pairs)) || stalled || iterations >= maxIterations) break;
    previous = pairs;
    previousMse = mse;
    const source: number[][] = [];
    const target: number[][] = [];
    for (let k = 0; k < keep; k++) {
      source.push(template[nearest[order[k]]] as number[]);
      target.push(sample[order[k]] as number[]);
    }
    const fit = fitTransform(kind, source, target);
    transform = invertTransform(fit.transform);
    iterations++;
  }
  // Trimmed residual in the sample frame under the final pairs.
  const back = invertTransform(transform);
  let sum = 0;
  for (let k = 0; k < keep; k++) {
    const i = order[k];
    const y = applyToPoint(back, template[nearest[i]]);
    for (let j = 0; j < y.length; j++) sum += (sample[i][j] - y[j]) ** 2;
  }
  return { transform, iterations, rms: Math.sqrt(sum / keep) };
}

/** Mean squared distance of points to their centroid (sets the scale of "zero" residuals). */
function spreadSquared(points: Points): number {
  const m = centroid(points);
  let s = 0;
  for (const p of points) for (let j = 0; j < m.length; j++) s += (p[j] - m[j]) ** 2;
  return s / points.length;
}

function sameCode(a: Int32Array, b: Int32Array): boolean {
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/**
 * Starting poses (sample -> template) for the local aligners:
 *   x -> c0 R (x - mu_s) + mu_t,
 * mu = centroids, c0 = sqrt(tr Cov_t / tr Cov_s) (1 for 'rigid'), and R taken
 * in this order: the identity (the sample's own orientation); the principal
 * axes, R = E_t S E_s^T with E the eigenvector columns of each covariance
 * (descending eigenvalues) and S every diagonal sign pattern with det R = +1
 * (2 in 2-D, 4 in 3-D); then uniformly random rotations from `rng`. With
 * `starts` below the number of deterministic poses (3 in 2-D, 5 in 3-D), the
 * first `starts` of them are used.
 *
 * @throws UsageError when random starts are needed and no rng is given.
 */
export function startingPoses(
  templateMeans: Points,
  samplePoints: Points,
  kind: AlignmentKind,
  starts: number,
  rng: Rng | undefined,
): Transform[] {
  const d = templateMeans[0].length;
  const mt = centroid(templateMeans);
  const ms = centroid(samplePoints);
  const ct = covarianceAbout(templateMeans, mt);
  const cs = covarianceAbout(samplePoints, ms);
  const tt = ct.reduce((s, row, i) => s + row[i], 0);
  const ts = cs.reduce((s, row, i) => s + row[i], 0);
  const c0 = kind === 'rigid' || !(ts > 0) || !(tt > 0) ? 1 : Math.sqrt(tt / ts);
  const et = symmetricEigen(ct).vectors;
  const es = symmetricEigen(cs).vectors;
  // The sample's own orientation first (identity rotation): samples are often roughly oriented.
  const rotations: number[][][] = [Array.from({ length: d }, (_, r) => Array.from({ length: d }, (_, c) => (r === c ? 1 : 0)))];
  const baseSign = Math.sign(determinant(et) * determinant(es)) || 1;
  for (let mask = 0; mask < 1 << d; mask++) {
    const signs: number[] = Array.from({ length: d }, (_, j) => ((mask >> j) & 1 ? -1 : 1));
    if (baseSign * signs.reduce((p, v) => p * v, 1) < 0) continue;
    // R = E_t diag(signs) E_s^T
    rotations.push(
      Array.from({ length: d }, (_, r) =>
        Array.from({ length: d }, (_, c) => {
          let v = 0;
          for (let k = 0; k < d; k++) v += et[r][k] * signs[k] * es[c][k];
          return v;
        }),
      ),
    );
  }
  const chosen = rotations.slice(0, starts);
  if (chosen.length < starts) {
    if (rng === undefined) {
      throw new UsageError(`${starts} starts need an rng for the random rotations (only ${rotations.length} deterministic starts exist)`);
    }
    while (chosen.length < starts) chosen.push(randomRotation(rng, d as 2 | 3));
  }
  return chosen.map((r) => {
    const linear = r.map((row) => row.map((v) => c0 * v));
    const translation = mt.map((v, i) => v - linear[i].reduce((s, a, j) => s + a * ms[j], 0));
    return { kind: kind === 'affine' ? 'affine' : kind, linear, translation };
  });
}

function centroid(points: Points): number[] {
  const d = points[0].length;
  const out = new Array<number>(d).fill(0);
  for (const p of points) for (let j = 0; j < d; j++) out[j] += p[j];
  return out.map((v) => v / points.length);
}

function covarianceAbout(points: Points, mean: readonly number[]): number[][] {
  const d = mean.length;
  const out = Array.from({ length: d }, () => new Array<number>(d).fill(0));
  for (const p of points) {
    for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) out[a][b] += (p[a] - mean[a]) * (p[b] - mean[b]);
  }
  return out.map((row) => row.map((v) => v / points.length));
}

/**
 * Shared input checks of the point-set aligners: both sets non-empty, rows of
 * one dimension d in {2, 3}, all finite, and at least d + 1 template means.
 * Returns d.
 */
export function checkPointSets(name: string, templateMeans: Points, samplePoints: Points): number {
  if (templateMeans.length === 0) throw new FitError(`${name}: the template has no cell means`);
  if (samplePoints.length === 0) throw new FitError(`${name}: the sample has no points`);
  const d = templateMeans[0].length;
  if (d !== 2 && d !== 3) throw new UsageError(`${name}: points must have 2 or 3 coordinates, got ${d}`);
  const check = (points: Points, what: string): void => {
    points.forEach((p, i) => {
      if (p.length !== d) throw new UsageError(`${name}: ${what} row ${i} has ${p.length} coordinates, expected ${d}`);
      for (let j = 0; j < d; j++) {
        if (!Number.isFinite(p[j])) throw new UsageError(`${name}: ${what} row ${i} coordinate ${j} is not finite (${p[j]})`);
      }
    });
  };
  check(templateMeans, 'template');
  check(samplePoints, 'sample');
  if (templateMeans.length < d + 1) {
    throw new FitError(`${name} needs at least ${d + 1} template means in ${d}-D, got ${templateMeans.length}`);
  }
  return d;
}

export function checkCount(name: string, option: string, value: number, min: number): void {
  if (!Number.isInteger(value) || value < min) throw new UsageError(`${name}: ${option} must be an integer >= ${min}, got ${value}`);
}
