/**
 * Weighted least-squares fits of a transform mapping points `source` onto
 * `target`: minimise sum_i w_i |target_i - (A source_i + t)|^2.
 *
 * - similarity: A = c R (Umeyama 1991, IEEE TPAMI 13(4):376-380, Theorem / eqs. 40-42)
 * - rigid: A = R (same, with c = 1)
 * - affine: A = S_ts S_ss^-1 (ordinary weighted least squares)
 *
 * R is a proper rotation (det R = +1) unless `allowReflection` is set, by the
 * sign correction S of Umeyama's eq. 39. Degenerate configurations throw
 * FitError saying why; nothing is fitted silently. (Umeyama's equation numbers
 * are quoted from memory of the paper; the worked example of its section III is
 * reproduced in test/geometry/procrustes.test.ts.)
 *
 * Shapes: `source` and `target` are n x d (d = 1, 2 or 3), row i of one
 * corresponding to row i of the other; `weights` has length n. Column-vector
 * convention: the fitted map is y = A x + t, so A = c R acts on the left.
 */
import { FitError } from '../errors.js';
import type { Points, Transform } from '../types.js';
import {
  crossCovariance,
  determinant,
  inverse,
  multiply,
  multiplyVector,
  svd,
} from './linear-algebra.js';
import { symmetricEigenvaluesSmall } from './small-decompositions.js';

export type TransformKind = Transform['kind'];

export interface FitOptions {
  /** Per-point non-negative weights (default all 1). */
  readonly weights?: readonly number[];
  /** Allow det R = -1 (a mirror image); default false. */
  readonly allowReflection?: boolean;
  /**
   * Relative eigenvalue threshold below which the source spread along an axis
   * counts as zero (collinear / coplanar). Default 1e-10.
   */
  readonly degeneracyTolerance?: number;
}

export interface FitResult {
  readonly transform: Transform;
  /** Rotation R (d x d); for affine fits, the closest rotation to A (polar factor). */
  readonly rotation: number[][];
  /** Uniform scale c (1 for rigid; |det A|^(1/d) for affine). */
  readonly scale: number;
  readonly translation: number[];
  /** Weighted mean squared residual (1/W) sum_i w_i |target_i - T(source_i)|^2 (Umeyama eq. 33 with weights). */
  readonly meanSquaredResidual: number;
  /** True when the fitted linear part has det < 0. */
  readonly reflected: boolean;
}

/**
 * Fit the transform of the given family ('similarity', 'rigid' or 'affine');
 * see fitSimilarity, fitRigid and fitAffine for formulas and errors.
 */
export function fitTransform(kind: TransformKind, source: Points, target: Points, options: FitOptions = {}): FitResult {
  if (kind === 'affine') return fitAffine(source, target, options);
  return fitOrthogonal(kind, source, target, options);
}

/**
 * Weighted similarity fit: minimise (1/W) sum_i w_i |y_i - (c R x_i + t)|^2 over
 * rotations R, scales c > 0 and translations t (Umeyama 1991, eqs. 38-42):
 * Sigma_xy = U D V^T, R = U S V^T, c = tr(D S) / sigma_x^2, t = mu_y - c R mu_x,
 * with S = diag(1, ..., 1, -1) when det(U) det(V) < 0 and reflection is not allowed.
 *
 * Example (Umeyama 1991, section III): x = (0,0),(1,0),(0,2), y = (0,0),(-1,0),(0,2)
 * gives R = [[3,2],[-2,3]]/sqrt(13), c = sqrt(13)/5, t = (-0.8, 0.4), residual 8/15.
 *
 * Throws FitError when: source and target differ in length or dimension; a
 * coordinate or weight is not finite, or a weight is negative; fewer than
 * max(2, d) points have positive weight; the weighted source spread has rank
 * below max(1, d - 1) (coincident points, or collinear points in 3-D); the
 * cross-covariance has rank below max(1, d - 1) (e.g. all target points
 * coincide); the best scale is not positive.
 */
export function fitSimilarity(source: Points, target: Points, options: FitOptions = {}): FitResult {
  return fitOrthogonal('similarity', source, target, options);
}

/**
 * Weighted rigid fit: as fitSimilarity with c fixed to 1, so R = U S V^T and
 * t = mu_y - R mu_x (Umeyama 1991 with c = 1; the rotation does not depend on c).
 * Throws FitError in the same cases as fitSimilarity, except the scale check.
 */
export function fitRigid(source: Points, target: Points, options: FitOptions = {}): FitResult {
  return fitOrthogonal('rigid', source, target, options);
}

function checkInputs(name: string, source: Points, target: Points, options: FitOptions, minPoints: number): void {
  if (source.length !== target.length) {
    throw new FitError(`${name}: source and target have different numbers of points (${source.length} vs ${target.length})`);
  }
  if (source.length === 0) throw new FitError(`${name}: no points given`);
  const d = source[0].length;
  if (d < 1 || d > 3) throw new FitError(`${name}: dimension must be 1, 2 or 3, got ${d}`);
  for (let i = 0; i < source.length; i++) {
    if (source[i].length !== d || target[i].length !== d) {
      throw new FitError(`${name}: shapes differ at point ${i} (${source[i].length} vs ${target[i].length}, expected ${d})`);
    }
    for (let j = 0; j < d; j++) {
      if (!Number.isFinite(source[i][j]) || !Number.isFinite(target[i][j])) {
        throw new FitError(`${name}: point ${i} has a non-finite coordinate`);
      }
    }
  }
  const w = options.weights;
  let positive = source.length;
  if (w) {
    if (w.length !== source.length) {
      throw new FitError(`${name}: ${w.length} weights for ${source.length} points`);
    }
    positive = 0;
    for (const v of w) {
      if (!(v >= 0) || !Number.isFinite(v)) throw new FitError(`${name}: weights must be finite and non-negative, got ${v}`);
      if (v > 0) positive++;
    }
  }
  if (positive < minPoints) {
    throw new FitError(`${name} needs at least ${minPoints} points with positive weight, got ${positive}`);
  }
}

/**
 * Rank of the weighted source scatter: the number of eigenvalues above
 * tolerance * largest eigenvalue.
 */
function spreadRank(scatter: number[][], tolerance: number): { rank: number } {
  // The eigenvalues symmetricEigen gives (d <= 3 here), without its eigenvectors.
  const values = EIGENVALUES;
  symmetricEigenvaluesSmall(scatter, values);
  const top = values[0];
  if (!(top > 0)) return { rank: 0 };
  let rank = 0;
  for (let i = 0; i < scatter.length; i++) if (values[i] > tolerance * top) rank++;
  return { rank };
}
const EIGENVALUES = new Float64Array(3);

function describeRankDeficiency(d: number, rank: number, which = 'points'): string {
  if (rank === 0) return `all ${which} coincide`;
  if (rank === 1) return `the ${which} are collinear`;
  return `the ${which} are coplanar`;
}

function fitOrthogonal(kind: 'similarity' | 'rigid', source: Points, target: Points, options: FitOptions): FitResult {
  const name = kind === 'similarity' ? 'fitSimilarity' : 'fitRigid';
  const d = source[0]?.length ?? 0;
  // A rotation in d dimensions is fixed by d points in general position (2 in 2-D, 3 in 3-D); 1-D needs 2 for the scale.
  const minPoints = Math.max(2, d);
  const w = options.weights;
  const tol = options.degeneracyTolerance ?? 1e-10;
  const m = momentsOrThrow(name, source, target, options, minPoints);
  const mx = meanOf(m, MX, d);
  const my = meanOf(m, MY, d);
  const sxx = matrixOf(m, SXX, d);
  // Umeyama's uniqueness condition: rank(Sigma_xy) >= d - 1, which needs the source spread to have rank >= d - 1.
  const { rank } = spreadRank(sxx, tol);
  if (rank < Math.max(1, d - 1)) {
    throw new FitError(`${name}: ${describeRankDeficiency(d, rank)}, so the rotation is not determined (spread rank ${rank}, need ${Math.max(1, d - 1)})`);
  }
  let sigmaX2 = 0;
  for (let i = 0; i < d; i++) sigmaX2 += sxx[i][i];
  // Sigma_xy = (1/W) sum w (y - my)(x - mx)^T, Umeyama eq. 38.
  const sxy = matrixOf(m, SXY, d);
  const { u, s, v } = svd(sxy);
  // The rotation is unique only when rank(Sigma_xy) >= d - 1 (Umeyama 1991, Lemma / eq. 39); a
  // full-rank source is not enough when the target points coincide or lie on a line (3-D).
  let sigmaY2 = 0;
  for (let i = 0; i < d; i++) sigmaY2 += m[SYY + i];
  let crossRank = 0;
  if (s[0] > tol * Math.sqrt(sigmaX2 * sigmaY2)) for (let i = 0; i < d; i++) if (s[i] > tol * s[0]) crossRank++;
  if (crossRank < Math.max(1, d - 1)) {
    // Error path only: the full target scatter, for the reason given.
    const syy = crossCovariance(target, my, target, my, w);
    const targetRank = spreadRank(syy, tol).rank;
    const why =
      targetRank < Math.max(1, d - 1)
        ? describeRankDeficiency(d, targetRank, 'target points')
        : 'the target points are not linearly related to the source';
    throw new FitError(`${name}: ${why}, so the rotation is not determined (cross-covariance rank ${crossRank}, need ${Math.max(1, d - 1)})`);
  }
  // Sign correction S (eq. 39): flip the smallest singular direction when det(U) det(V) < 0.
  const reflectedSvd = determinant(u) * determinant(v) < 0;
  const flipLast = reflectedSvd && !options.allowReflection;
  // R = U S V^T (eq. 40)
  const rotation = rotationFromSvd(u, v, d, flipLast);
  let traceDS = 0;
  for (let i = 0; i < d; i++) traceDS += s[i] * (flipLast && i === d - 1 ? -1 : 1);
  // c = tr(DS) / sigma_x^2 (eq. 42)
  const scale = kind === 'similarity' ? traceDS / sigmaX2 : 1;
  if (kind === 'similarity' && !(scale > 0)) {
    throw new FitError(`${name}: the best scale is not positive (${scale}); target points carry no spread matching the source`);
  }
  // t = mu_y - c R mu_x (eq. 41)
  const linear: number[][] = [];
  const translation = new Array<number>(d);
  for (let i = 0; i < d; i++) {
    const row = new Array<number>(d);
    let rmx = 0;
    for (let j = 0; j < d; j++) {
      row[j] = rotation[i][j] * scale;
      rmx += row[j] * mx[j];
    }
    linear.push(row);
    translation[i] = my[i] - rmx;
  }
  const transform: Transform = { kind, linear, translation };
  return {
    transform,
    rotation,
    scale,
    translation,
    meanSquaredResidual: weightedResidual(transform, source, target, w),
    reflected: determinant(rotation) < 0,
  };
}

/**
 * Weighted affine least-squares fit y = A x + t: with weighted means mu and
 * biased (divide by W) covariances, A = Sigma_yx Sigma_xx^-1 and t = mu_y - A mu_x
 * (the normal equations of ordinary weighted least squares). The reported
 * `rotation` is the orthogonal polar factor of A (U V^T from A = U D V^T, sign
 * corrected unless reflection is allowed) and `scale` is |det A|^(1/d).
 *
 * Throws FitError when: inputs are malformed (as fitSimilarity); fewer than
 * d + 1 points have positive weight; the weighted source spread has rank
 * below d (collinear points in 2-D, coplanar in 3-D); det A < 0 and reflection
 * is not allowed.
 */
export function fitAffine(source: Points, target: Points, options: FitOptions = {}): FitResult {
  const d = source[0]?.length ?? 0;
  const w = options.weights;
  const tol = options.degeneracyTolerance ?? 1e-10;
  const m = momentsOrThrow('fitAffine', source, target, options, d + 1);
  const mx = meanOf(m, MX, d);
  const my = meanOf(m, MY, d);
  const sxx = matrixOf(m, SXX, d);
  const { rank } = spreadRank(sxx, tol);
  if (rank < d) {
    throw new FitError(`fitAffine: ${describeRankDeficiency(d, rank)}, so an affine map is not determined (spread rank ${rank}, need ${d})`);
  }
  const syx = matrixOf(m, SXY, d);
  const linear = multiply(syx, inverse(sxx));
  const amx = multiplyVector(linear, mx);
  const translation = my.map((val, i) => val - amx[i]);
  const transform: Transform = { kind: 'affine', linear, translation };
  // Polar decomposition A = R P via the SVD A = U S V^T: R = U V^T (with sign fix).
  const dec = svd(linear);
  const rotation = rotationFromSvd(dec.u, dec.v, d, determinant(dec.u) * determinant(dec.v) < 0 && !options.allowReflection);
  const det = determinant(linear);
  if (det < 0 && !options.allowReflection) {
    throw new FitError('fitAffine: the best affine map is a reflection (det A < 0); pass allowReflection to accept it');
  }
  return {
    transform,
    rotation,
    scale: Math.pow(Math.abs(det), 1 / d),
    translation,
    meanSquaredResidual: weightedResidual(transform, source, target, w),
    reflected: det < 0,
  };
}

/** U S V^T with S = diag(1, ..., 1, -1) when flipLast, else I (U, V d x d; sums in the order of multiply). */
function rotationFromSvd(u: number[][], v: number[][], d: number, flipLast: boolean): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < d; i++) {
    const row = new Array<number>(d);
    for (let j = 0; j < d; j++) {
      let sum = 0;
      for (let l = 0; l < d; l++) sum += (flipLast && l === d - 1 ? -u[i][l] : u[i][l]) * v[j][l];
      row[j] = sum;
    }
    out.push(row);
  }
  return out;
}

/*
 * Moments of the paired points, accumulated without per-point allocation.
 *
 * The classical two-pass algorithm (Chan, Golub & LeVeque 1983, "Algorithms for
 * computing the sample variance: analysis and recommendations", Am. Stat.
 * 37:242-247, the two-pass form (1.2)): pass 1 the weighted means
 * mu = sum_i w_i p_i / W, pass 2 the centred products
 * (1/W) sum_i (w_i (a_i - mu_a)) (b_i - mu_b) for Sigma_xx, Sigma_yx and the
 * diagonal of Sigma_yy, all in one sweep. Pass 1 also checks the inputs (the
 * full check in checkInputs runs only to word the error). The sums are the ones
 * weightedMean and crossCovariance (linear-algebra.ts) form, term by term in the
 * same order, so the results are equal to the bit; d = 3 is unrolled.
 *
 * Layout of the result (module scratch, overwritten by the next fit):
 * [W, mu_x (3), mu_y (3), Sigma_xx (3 x 3 row-major, stride 3), Sigma_yx (same), diag Sigma_yy (3)].
 */
const TOTAL = 0, MX = 1, MY = 4, SXX = 7, SXY = 16, SYY = 25;
const moments = new Float64Array(28);

/** Moments of (source, target) into `moments`; throws the FitError of checkInputs on bad input. */
function momentsOrThrow(name: string, source: Points, target: Points, options: FitOptions, minPoints: number): Float64Array {
  const n = source.length;
  const d = n > 0 ? source[0].length : 0;
  const w = options.weights;
  let ok = n > 0 && target.length === n && (w === undefined || w.length === n);
  if (ok) {
    if (d === 3) ok = means3(source, target, w, minPoints);
    else if (d === 1 || d === 2) ok = meansAny(source, target, w, minPoints, d);
    else ok = false;
  }
  if (!ok) {
    checkInputs(name, source, target, options, minPoints);
    // checkInputs throws for every case the passes above reject.
    throw new Error(`${name}: internal error: input rejected without a reason`);
  }
  if (d === 3) scatter3(source, target, w);
  else scatterAny(source, target, w, d);
  return moments;
}

/**
 * Pass 1 in 3-D: W and the weighted means; false when a point is not 3-D, a
 * coordinate is not finite (x * 0 is NaN exactly for infinite or NaN x), a weight
 * is negative or not finite, or fewer than minPoints weights are positive.
 */
function means3(source: Points, target: Points, w: readonly number[] | undefined, minPoints: number): boolean {
  const n = source.length;
  let total = 0, positive = 0, bad = 0;
  let x0 = 0, x1 = 0, x2 = 0, y0 = 0, y1 = 0, y2 = 0;
  for (let i = 0; i < n; i++) {
    const p = source[i], q = target[i];
    if (p.length !== 3 || q.length !== 3) return false;
    const p0 = p[0], p1 = p[1], p2 = p[2], q0 = q[0], q1 = q[1], q2 = q[2];
    bad += p0 * 0 + p1 * 0 + p2 * 0 + q0 * 0 + q1 * 0 + q2 * 0;
    let wi = 1;
    if (w !== undefined) {
      wi = w[i];
      if (!(wi >= 0 && wi <= Number.MAX_VALUE)) return false;
      if (wi > 0) positive++;
    } else positive++;
    total += wi;
    x0 += wi * p0;
    x1 += wi * p1;
    x2 += wi * p2;
    y0 += wi * q0;
    y1 += wi * q1;
    y2 += wi * q2;
  }
  if (bad !== 0 || positive < minPoints) return false;
  const m = moments;
  m[TOTAL] = total;
  m[MX] = x0 / total;
  m[MX + 1] = x1 / total;
  m[MX + 2] = x2 / total;
  m[MY] = y0 / total;
  m[MY + 1] = y1 / total;
  m[MY + 2] = y2 / total;
  return true;
}

/** Pass 1 in any dimension d <= 3 (used for d = 1, 2; the same sums as means3). */
function meansAny(source: Points, target: Points, w: readonly number[] | undefined, minPoints: number, d: number): boolean {
  const n = source.length;
  let total = 0, positive = 0, bad = 0;
  const m = moments;
  for (let a = 0; a < d; a++) m[MX + a] = m[MY + a] = 0;
  for (let i = 0; i < n; i++) {
    const p = source[i], q = target[i];
    if (p.length !== d || q.length !== d) return false;
    let wi = 1;
    if (w !== undefined) {
      wi = w[i];
      if (!(wi >= 0 && wi <= Number.MAX_VALUE)) return false;
      if (wi > 0) positive++;
    } else positive++;
    total += wi;
    for (let a = 0; a < d; a++) {
      bad += p[a] * 0 + q[a] * 0;
      m[MX + a] += wi * p[a];
      m[MY + a] += wi * q[a];
    }
  }
  if (bad !== 0 || positive < minPoints) return false;
  m[TOTAL] = total;
  for (let a = 0; a < d; a++) {
    m[MX + a] /= total;
    m[MY + a] /= total;
  }
  return true;
}

/** Pass 2 in 3-D: Sigma_xx, Sigma_yx and diag Sigma_yy about the means of pass 1. */
function scatter3(source: Points, target: Points, w: readonly number[] | undefined): void {
  const m = moments;
  const mx0 = m[MX], mx1 = m[MX + 1], mx2 = m[MX + 2], my0 = m[MY], my1 = m[MY + 1], my2 = m[MY + 2];
  let xx00 = 0, xx01 = 0, xx02 = 0, xx10 = 0, xx11 = 0, xx12 = 0, xx20 = 0, xx21 = 0, xx22 = 0;
  let yx00 = 0, yx01 = 0, yx02 = 0, yx10 = 0, yx11 = 0, yx12 = 0, yx20 = 0, yx21 = 0, yx22 = 0;
  let yy0 = 0, yy1 = 0, yy2 = 0;
  const n = source.length;
  for (let i = 0; i < n; i++) {
    const p = source[i], q = target[i];
    const wi = w === undefined ? 1 : w[i];
    const dx0 = p[0] - mx0, dx1 = p[1] - mx1, dx2 = p[2] - mx2;
    const dy0 = q[0] - my0, dy1 = q[1] - my1, dy2 = q[2] - my2;
    const a0 = wi * dx0, a1 = wi * dx1, a2 = wi * dx2;
    const b0 = wi * dy0, b1 = wi * dy1, b2 = wi * dy2;
    xx00 += a0 * dx0;
    xx01 += a0 * dx1;
    xx02 += a0 * dx2;
    xx10 += a1 * dx0;
    xx11 += a1 * dx1;
    xx12 += a1 * dx2;
    xx20 += a2 * dx0;
    xx21 += a2 * dx1;
    xx22 += a2 * dx2;
    yx00 += b0 * dx0;
    yx01 += b0 * dx1;
    yx02 += b0 * dx2;
    yx10 += b1 * dx0;
    yx11 += b1 * dx1;
    yx12 += b1 * dx2;
    yx20 += b2 * dx0;
    yx21 += b2 * dx1;
    yx22 += b2 * dx2;
    yy0 += b0 * dy0;
    yy1 += b1 * dy1;
    yy2 += b2 * dy2;
  }
  const t = m[TOTAL];
  m[SXX] = xx00 / t;
  m[SXX + 1] = xx01 / t;
  m[SXX + 2] = xx02 / t;
  m[SXX + 3] = xx10 / t;
  m[SXX + 4] = xx11 / t;
  m[SXX + 5] = xx12 / t;
  m[SXX + 6] = xx20 / t;
  m[SXX + 7] = xx21 / t;
  m[SXX + 8] = xx22 / t;
  m[SXY] = yx00 / t;
  m[SXY + 1] = yx01 / t;
  m[SXY + 2] = yx02 / t;
  m[SXY + 3] = yx10 / t;
  m[SXY + 4] = yx11 / t;
  m[SXY + 5] = yx12 / t;
  m[SXY + 6] = yx20 / t;
  m[SXY + 7] = yx21 / t;
  m[SXY + 8] = yx22 / t;
  m[SYY] = yy0 / t;
  m[SYY + 1] = yy1 / t;
  m[SYY + 2] = yy2 / t;
}

/** Pass 2 in any dimension d <= 3 (used for d = 1, 2; the same sums as scatter3). */
function scatterAny(source: Points, target: Points, w: readonly number[] | undefined, d: number): void {
  const m = moments;
  for (let r = 0; r < d; r++) {
    m[SYY + r] = 0;
    for (let c = 0; c < d; c++) m[SXX + 3 * r + c] = m[SXY + 3 * r + c] = 0;
  }
  for (let i = 0; i < source.length; i++) {
    const p = source[i], q = target[i];
    const wi = w === undefined ? 1 : w[i];
    for (let r = 0; r < d; r++) {
      const a = wi * (p[r] - m[MX + r]);
      const b = wi * (q[r] - m[MY + r]);
      for (let c = 0; c < d; c++) {
        const dxc = p[c] - m[MX + c];
        m[SXX + 3 * r + c] += a * dxc;
        m[SXY + 3 * r + c] += b * dxc;
      }
      m[SYY + r] += b * (q[r] - m[MY + r]);
    }
  }
  const t = m[TOTAL];
  for (let r = 0; r < d; r++) {
    m[SYY + r] /= t;
    for (let c = 0; c < d; c++) {
      m[SXX + 3 * r + c] /= t;
      m[SXY + 3 * r + c] /= t;
    }
  }
}

function meanOf(m: Float64Array, at: number, d: number): number[] {
  const out = new Array<number>(d);
  for (let a = 0; a < d; a++) out[a] = m[at + a];
  return out;
}

function matrixOf(m: Float64Array, at: number, d: number): number[][] {
  const out: number[][] = [];
  for (let r = 0; r < d; r++) {
    const row = new Array<number>(d);
    for (let c = 0; c < d; c++) row[c] = m[at + 3 * r + c];
    out.push(row);
  }
  return out;
}

/**
 * (1/W) sum_i w_i |target_i - (A source_i + t)|^2 over the points with w_i > 0,
 * each y_a formed as t_a + sum_b A_ab x_b in that order (as applyToPoint).
 */
function weightedResidual(transform: Transform, source: Points, target: Points, w?: readonly number[]): number {
  const d = source[0].length;
  const A = transform.linear, t = transform.translation;
  let total = 0, sum = 0;
  if (d === 3) {
    const a00 = A[0][0], a01 = A[0][1], a02 = A[0][2], a10 = A[1][0], a11 = A[1][1], a12 = A[1][2];
    const a20 = A[2][0], a21 = A[2][1], a22 = A[2][2], t0 = t[0], t1 = t[1], t2 = t[2];
    for (let i = 0; i < source.length; i++) {
      const wi = w === undefined ? 1 : w[i];
      if (wi === 0) continue;
      const p = source[i], q = target[i];
      const x0 = p[0], x1 = p[1], x2 = p[2];
      const e0 = q[0] - (t0 + a00 * x0 + a01 * x1 + a02 * x2);
      const e1 = q[1] - (t1 + a10 * x0 + a11 * x1 + a12 * x2);
      const e2 = q[2] - (t2 + a20 * x0 + a21 * x1 + a22 * x2);
      sum += wi * (e0 * e0 + e1 * e1 + e2 * e2);
      total += wi;
    }
    return sum / total;
  }
  if (d === 2) {
    const a00 = A[0][0], a01 = A[0][1], a10 = A[1][0], a11 = A[1][1], t0 = t[0], t1 = t[1];
    for (let i = 0; i < source.length; i++) {
      const wi = w === undefined ? 1 : w[i];
      if (wi === 0) continue;
      const p = source[i], q = target[i];
      const x0 = p[0], x1 = p[1];
      const e0 = q[0] - (t0 + a00 * x0 + a01 * x1);
      const e1 = q[1] - (t1 + a10 * x0 + a11 * x1);
      sum += wi * (e0 * e0 + e1 * e1);
      total += wi;
    }
    return sum / total;
  }
  for (let i = 0; i < source.length; i++) {
    const wi = w ? w[i] : 1;
    if (wi === 0) continue;
    let r2 = 0;
    for (let a = 0; a < d; a++) {
      let y = transform.translation[a];
      for (let b = 0; b < d; b++) y += transform.linear[a][b] * source[i][b];
      const diff = target[i][a] - y;
      r2 += diff * diff;
    }
    sum += wi * r2;
    total += wi;
  }
  return sum / total;
}
