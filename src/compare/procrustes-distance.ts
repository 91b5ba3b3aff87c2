/**
 * Procrustes distances between two configurations of corresponding points.
 */
import { FitError } from '../errors.js';
import { determinant, multiply, svd, transpose } from '../geometry/linear-algebra.js';
import type { Points } from '../types.js';

export interface ProcrustesDistances {
  /** Riemannian shape distance rho = arccos(sum_i lambda_i) in [0, pi/2]. */
  readonly riemannian: number;
  /** Full Procrustes distance d_F = sin(rho). */
  readonly full: number;
  /** Partial Procrustes distance d_P = 2 sin(rho / 2) = sqrt(2 (1 - cos rho)). */
  readonly partial: number;
}

/**
 * Shape distances between configurations X and Y (k x m, same k corresponding
 * points, m = 2 or 3) after removing location, scale and rotation (no reflection).
 *
 * Centre both, scale each to unit centroid size (Z = X_c / ||X_c||), take the
 * singular values lambda_1 >= ... >= lambda_m of Z_Y^T Z_X with the sign of the
 * smallest flipped when det(Z_Y^T Z_X) < 0; then cos rho = sum lambda_i,
 * d_F = sin rho, d_P = 2 sin(rho / 2). Dryden & Mardia (2016), Statistical Shape
 * Analysis, 2nd ed., section 3.3 (eqs. 3.5-3.8 as remembered; checked against
 * R shapes::procdist in test/fixtures/reference/stats-procrustes.json).
 *
 * @throws FitError when the shapes differ, fewer than 3 points are given, or a
 *   configuration has zero centroid size.
 */
export function procrustesDistances(x: Points, y: Points): ProcrustesDistances {
  if (x.length !== y.length) throw new FitError(`procrustesDistances: configurations have ${x.length} and ${y.length} points`);
  if (x.length < 3) throw new FitError(`procrustesDistances needs at least 3 points, got ${x.length}`);
  const zx = preshape(x, 'first');
  const zy = preshape(y, 'second');
  const m = multiply(transpose(zy), zx);
  const { s } = svd(m);
  let sum = s.reduce((acc, v) => acc + v, 0);
  if (determinant(m) < 0) sum -= 2 * s[s.length - 1];
  const cos = Math.max(-1, Math.min(1, sum));
  const rho = Math.acos(cos);
  return { riemannian: rho, full: Math.sin(rho), partial: 2 * Math.sin(rho / 2) };
}

function preshape(points: Points, which: string): number[][] {
  const k = points.length;
  const m = points[0].length;
  const centre = new Array<number>(m).fill(0);
  for (const p of points) {
    if (p.length !== m) throw new FitError(`procrustesDistances: ${which} configuration has rows of different lengths`);
    for (let j = 0; j < m; j++) centre[j] += p[j] / k;
  }
  const c = points.map((p) => p.map((v, j) => v - centre[j]));
  const size = Math.sqrt(c.reduce((acc, row) => acc + row.reduce((a2, v) => a2 + v * v, 0), 0));
  if (!(size > 0)) throw new FitError(`procrustesDistances: the ${which} configuration has zero centroid size (all points coincide)`);
  return c.map((row) => row.map((v) => v / size));
}
