/**
 * Covariance ellipses for the projection figures.
 *
 * A cell's position is modelled as N(mu, Sigma) in d dimensions. Its
 * orthogonal projection onto a coordinate plane (u, v) is N(mu_uv, Sigma_uv),
 * where Sigma_uv is the 2 x 2 sub-matrix of Sigma on rows and columns u, v
 * (a marginal of a Gaussian is Gaussian with the sub-matrix as covariance).
 * The ellipse (x - mu)^T Sigma_uv^-1 (x - mu) = r^2 contains probability p of
 * the projected distribution when r^2 is the p-quantile of chi-square with 2
 * degrees of freedom (Johnson & Wichern, Applied Multivariate Statistical
 * Analysis, 6th ed., 2007, Result 4.7; citation from memory). With 2 degrees of freedom the
 * chi-square CDF is 1 - exp(-x / 2), so the quantile is r^2 = -2 ln(1 - p).
 */
import { UsageError } from '../errors.js';
import type { Matrix } from '../types.js';

/**
 * p-quantile of the chi-square distribution with 2 degrees of freedom:
 * -2 ln(1 - p). Throws UsageError unless 0 < p < 1.
 * Example: p = 0.95 gives 5.991 (every chi-square table).
 */
export function chiSquare2Quantile(p: number): number {
  if (!(p > 0 && p < 1)) throw new UsageError(`chiSquare2Quantile: probability must be in (0, 1), got ${p}`);
  return -2 * Math.log1p(-p);
}

/** An ellipse in a plane: centre, semi-axes (major first) and the major axis angle. */
export interface Ellipse {
  readonly centre: readonly [number, number];
  /** Semi-axis lengths, major first (same units as the covariance's square root). */
  readonly semiAxes: readonly [number, number];
  /** Angle of the major axis from the +u axis, radians in (-pi/2, pi/2], counter-clockwise towards +v. */
  readonly angle: number;
}

/**
 * The p-probability ellipse of N(centre, sigma) for a 2 x 2 covariance sigma:
 * semi-axes r sqrt(lambda_1) >= r sqrt(lambda_2), with lambda the eigenvalues
 * of sigma (closed form for a symmetric 2 x 2 matrix) and r^2 = -2 ln(1 - p).
 * Throws UsageError for a matrix that is not 2 x 2, not finite, or not
 * positive semi-definite, or for p outside (0, 1).
 */
export function covarianceEllipse(centre: readonly number[], sigma: Matrix, p: number): Ellipse {
  if (centre.length !== 2 || sigma.length !== 2 || sigma[0].length !== 2 || sigma[1].length !== 2) {
    throw new UsageError(`covarianceEllipse: needs a 2-vector and a 2x2 matrix, got ${centre.length} and ${sigma.length}x${sigma[0]?.length ?? 0}`);
  }
  const a = sigma[0][0];
  const d = sigma[1][1];
  const b = 0.5 * (sigma[0][1] + sigma[1][0]);
  if (![a, b, d, centre[0], centre[1]].every(Number.isFinite)) throw new UsageError('covarianceEllipse: non-finite input');
  const half = 0.5 * (a + d);
  const disc = Math.sqrt(0.25 * (a - d) * (a - d) + b * b);
  const l1 = half + disc;
  const l2 = half - disc;
  if (l2 < -1e-12 * Math.max(1, Math.abs(l1))) {
    throw new UsageError(`covarianceEllipse: covariance is not positive semi-definite (eigenvalues ${l1}, ${l2})`);
  }
  const r = Math.sqrt(chiSquare2Quantile(p));
  // Major-axis direction: eigenvector of lambda_1, angle = atan2(l1 - a, b) or 0/pi/2 when b = 0.
  let angle: number;
  if (Math.abs(b) > 1e-15 * Math.max(1, Math.abs(l1))) angle = Math.atan(((l1 - a) / b));
  else angle = a >= d ? 0 : Math.PI / 2;
  return {
    centre: [centre[0], centre[1]],
    semiAxes: [r * Math.sqrt(Math.max(0, l1)), r * Math.sqrt(Math.max(0, l2))],
    angle,
  };
}

/** The 2 x 2 sub-matrix of sigma on rows and columns u and v (the marginal covariance of a projection). */
export function marginalCovariance(sigma: Matrix, u: number, v: number): number[][] {
  return [
    [sigma[u][u], sigma[u][v]],
    [sigma[v][u], sigma[v][v]],
  ];
}
