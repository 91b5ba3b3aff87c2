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
  symmetricEigen,
  transpose,
  weightedMean,
} from './linear-algebra.js';

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
function spreadRank(scatter: number[][], tolerance: number): { rank: number; values: number[] } {
  const { values } = symmetricEigen(scatter);
  const top = values[0];
  if (!(top > 0)) return { rank: 0, values };
  return { rank: values.filter((v) => v > tolerance * top).length, values };
}

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
  checkInputs(name, source, target, options, minPoints);
  const w = options.weights;
  const tol = options.degeneracyTolerance ?? 1e-10;
  const mx = weightedMean(source, w);
  const my = weightedMean(target, w);
  const sxx = crossCovariance(source, mx, source, mx, w);
  // Umeyama's uniqueness condition: rank(Sigma_xy) >= d - 1, which needs the source spread to have rank >= d - 1.
  const { rank } = spreadRank(sxx, tol);
  if (rank < Math.max(1, d - 1)) {
    throw new FitError(`${name}: ${describeRankDeficiency(d, rank)}, so the rotation is not determined (spread rank ${rank}, need ${Math.max(1, d - 1)})`);
  }
  const sigmaX2 = sxx.reduce((s, row, i) => s + row[i], 0);
  // Sigma_xy = (1/W) sum w (y - my)(x - mx)^T, Umeyama eq. 38.
  const sxy = crossCovariance(target, my, source, mx, w);
  const { u, s, v } = svd(sxy);
  // The rotation is unique only when rank(Sigma_xy) >= d - 1 (Umeyama 1991, Lemma / eq. 39); a
  // full-rank source is not enough when the target points coincide or lie on a line (3-D).
  const syy = crossCovariance(target, my, target, my, w);
  const sigmaY2 = syy.reduce((acc, row, i) => acc + row[i], 0);
  const crossRank = s[0] > tol * Math.sqrt(sigmaX2 * sigmaY2) ? s.filter((val) => val > tol * s[0]).length : 0;
  if (crossRank < Math.max(1, d - 1)) {
    const targetRank = spreadRank(syy, tol).rank;
    const why =
      targetRank < Math.max(1, d - 1)
        ? describeRankDeficiency(d, targetRank, 'target points')
        : 'the target points are not linearly related to the source';
    throw new FitError(`${name}: ${why}, so the rotation is not determined (cross-covariance rank ${crossRank}, need ${Math.max(1, d - 1)})`);
  }
  // Sign correction S (eq. 39): flip the smallest singular direction when det(U) det(V) < 0.
  const sign = new Array<number>(d).fill(1);
  const reflectedSvd = determinant(u) * determinant(v) < 0;
  if (reflectedSvd && !options.allowReflection) sign[d - 1] = -1;
  // R = U S V^T (eq. 40)
  const us = u.map((row) => row.map((val, j) => val * sign[j]));
  const rotation = multiply(us, transpose(v));
  let traceDS = 0;
  for (let i = 0; i < d; i++) traceDS += s[i] * sign[i];
  // c = tr(DS) / sigma_x^2 (eq. 42)
  const scale = kind === 'similarity' ? traceDS / sigmaX2 : 1;
  if (kind === 'similarity' && !(scale > 0)) {
    throw new FitError(`${name}: the best scale is not positive (${scale}); target points carry no spread matching the source`);
  }
  const linear = rotation.map((row) => row.map((val) => val * scale));
  // t = mu_y - c R mu_x (eq. 41)
  const rmx = multiplyVector(linear, mx);
  const translation = my.map((val, i) => val - rmx[i]);
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
  checkInputs('fitAffine', source, target, options, d + 1);
  const w = options.weights;
  const tol = options.degeneracyTolerance ?? 1e-10;
  const mx = weightedMean(source, w);
  const my = weightedMean(target, w);
  const sxx = crossCovariance(source, mx, source, mx, w);
  const { rank } = spreadRank(sxx, tol);
  if (rank < d) {
    throw new FitError(`fitAffine: ${describeRankDeficiency(d, rank)}, so an affine map is not determined (spread rank ${rank}, need ${d})`);
  }
  const syx = crossCovariance(target, my, source, mx, w);
  const linear = multiply(syx, inverse(sxx));
  const amx = multiplyVector(linear, mx);
  const translation = my.map((val, i) => val - amx[i]);
  const transform: Transform = { kind: 'affine', linear, translation };
  // Polar decomposition A = R P via the SVD A = U S V^T: R = U V^T (with sign fix).
  const dec = svd(linear);
  const sign = new Array<number>(d).fill(1);
  if (determinant(dec.u) * determinant(dec.v) < 0 && !options.allowReflection) sign[d - 1] = -1;
  const rotation = multiply(dec.u.map((row) => row.map((val, j) => val * sign[j])), transpose(dec.v));
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

function weightedResidual(transform: Transform, source: Points, target: Points, w?: readonly number[]): number {
  let total = 0, sum = 0;
  const d = source[0].length;
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
