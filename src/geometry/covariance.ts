/**
 * Covariance helpers: Cholesky factor, log-determinant, precision, and the
 * squared Mahalanobis distance (x - mu)^T Sigma^-1 (x - mu).
 */
import { FitError } from '../errors.js';
import type { Matrix, Points } from '../types.js';
import { zeros } from './linear-algebra.js';

/**
 * Lower-triangular L with Sigma = L L^T and L_ii > 0, computed row by row
 * (Cholesky-Banachiewicz order): L_ij = (S_ij - sum_{k<j} L_ik L_jk) / L_jj,
 * L_ii = sqrt(S_ii - sum_{k<i} L_ik^2). See Golub & Van Loan, Matrix
 * Computations, 4th ed., sec. 4.2 (section cited from memory). Reads the lower
 * triangle; the upper one must agree to 1e-9 relative to the entries and to
 * sqrt(|S_ii S_jj|).
 *
 * Throws FitError when Sigma is not square, not symmetric, or not positive
 * definite (a pivot is <= 0 or not finite; the message names the pivot).
 */
export function cholesky(sigma: Matrix): number[][] {
  const d = sigma.length;
  const l = zeros(d, d);
  for (let i = 0; i < d; i++) {
    if (sigma[i].length !== d) throw new FitError(`cholesky: matrix is not square (${d}x${sigma[i].length})`);
    for (let j = 0; j <= i; j++) {
      // Asymmetry is judged against the scale sqrt(|S_ii S_jj|) as well as the entries themselves: a rotated
      // covariance R S R^T has off-diagonals that should be 0 but differ by rounding (1e-15 of the diagonal).
      const scale = Math.abs(sigma[i][j]) + Math.abs(sigma[j][i]) + Math.sqrt(Math.abs(sigma[i][i] * sigma[j][j]));
      if (Math.abs(sigma[i][j] - sigma[j][i]) > 1e-9 * scale) {
        throw new FitError(`cholesky: matrix is not symmetric at (${i}, ${j})`);
      }
      let s = sigma[i][j];
      for (let k = 0; k < j; k++) s -= l[i][k] * l[j][k];
      if (i === j) {
        if (!(s > 0) || !Number.isFinite(s)) {
          throw new FitError(`cholesky: matrix is not positive definite (pivot ${i} is ${s})`);
        }
        l[i][i] = Math.sqrt(s);
      } else {
        l[i][j] = s / l[j][j];
      }
    }
  }
  return l;
}

/** True when Sigma is symmetric positive definite (Cholesky succeeds). */
export function isPositiveDefinite(sigma: Matrix): boolean {
  try {
    cholesky(sigma);
    return true;
  } catch {
    return false;
  }
}

/**
 * log det Sigma = 2 sum_i log L_ii from the Cholesky factor; stable where det
 * itself would under- or overflow. Throws FitError as cholesky does.
 */
export function logDeterminant(sigma: Matrix): number {
  const l = cholesky(sigma);
  let s = 0;
  for (let i = 0; i < l.length; i++) s += Math.log(l[i][i]);
  return 2 * s;
}

/**
 * Precision matrix Sigma^-1 = L^-T L^-1 of a symmetric positive definite matrix,
 * via its Cholesky factor (symmetric by construction). Throws FitError as cholesky does.
 */
export function precisionMatrix(sigma: Matrix): number[][] {
  const l = cholesky(sigma);
  const d = l.length;
  // Invert L (lower triangular) by forward substitution, then Sigma^-1 = L^-T L^-1.
  const li = zeros(d, d);
  for (let i = 0; i < d; i++) {
    li[i][i] = 1 / l[i][i];
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let k = j; k < i; k++) s += l[i][k] * li[k][j];
      li[i][j] = -s / l[i][i];
    }
  }
  const out = zeros(d, d);
  for (let i = 0; i < d; i++)
    for (let j = 0; j < d; j++) {
      let s = 0;
      for (let k = Math.max(i, j); k < d; k++) s += li[k][i] * li[k][j];
      out[i][j] = s;
    }
  return out;
}

/**
 * Squared Mahalanobis distance (x - mu)^T P (x - mu), where P = Sigma^-1 is the
 * precision matrix (Mahalanobis 1936). Takes the precision, not the covariance,
 * so that hot loops invert once. x and mu have length d, P is d x d; shapes and
 * finiteness are not checked (hot path).
 */
export function mahalanobisSquared(x: readonly number[], mu: readonly number[], precision: Matrix): number {
  const d = x.length;
  let s = 0;
  for (let i = 0; i < d; i++) {
    const di = x[i] - mu[i];
    const row = precision[i];
    let r = 0;
    for (let j = 0; j < d; j++) r += row[j] * (x[j] - mu[j]);
    s += di * r;
  }
  return s;
}

/**
 * Mahalanobis distance (not squared) sqrt((x - mu)^T Sigma^-1 (x - mu)); takes the
 * covariance. Equals scipy.spatial.distance.mahalanobis(x, mu, inv(Sigma)).
 * Throws FitError when Sigma is not symmetric positive definite.
 */
export function mahalanobisDistance(x: readonly number[], mu: readonly number[], sigma: Matrix): number {
  return Math.sqrt(mahalanobisSquared(x, mu, precisionMatrix(sigma)));
}

/**
 * Sample covariance with the n - 1 denominator (unbiased), of the rows of an
 * n x d array: S = sum_i (p_i - mean)(p_i - mean)^T / (n - 1), as numpy.cov(points,
 * rowvar=False). Throws FitError for fewer than 2 points.
 */
export function sampleCovariance(points: Points): number[][] {
  const n = points.length;
  if (n < 2) throw new FitError(`sampleCovariance needs at least 2 points, got ${n}`);
  const d = points[0].length;
  const mean = new Array<number>(d).fill(0);
  for (const p of points) for (let j = 0; j < d; j++) mean[j] += p[j] / n;
  const out = zeros(d, d);
  for (const p of points)
    for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) out[a][b] += ((p[a] - mean[a]) * (p[b] - mean[b])) / (n - 1);
  return out;
}

/**
 * Log density of N(mu, Sigma) at x:
 * -0.5 (d log 2pi + log det Sigma + (x - mu)^T Sigma^-1 (x - mu)).
 * Throws FitError when Sigma is not symmetric positive definite.
 */
export function gaussianLogDensity(x: readonly number[], mu: readonly number[], sigma: Matrix): number {
  const d = x.length;
  return -0.5 * (d * Math.log(2 * Math.PI) + logDeterminant(sigma) + mahalanobisSquared(x, mu, precisionMatrix(sigma)));
}
