/**
 * Per-cell statistics in the template frame, from exact sufficient statistics.
 *
 * For cell k with n_k kept observations y_1..y_n (aligned positions, um):
 *   S_k = sum_i y_i,  Q_k = sum_i y_i y_i^T                 (stored in the template)
 *   m_k = S_k / n_k,  W_k = Q_k - S_k S_k^T / n_k           (mean, scatter about the mean)
 *
 * Pooled within-cell covariance (the prior's centre), over cells with n_k >= 2:
 *   Sigma_pool = sum_k W_k / sum_k (n_k - 1)
 * with its eigenvalues floored at POOLED_EIGENVALUE_FLOOR so it is positive definite.
 *
 * Shrinkage (conjugate prior): Sigma_k ~ inverse-Wishart(nu_0 + d + 1, nu_0 Sigma_pool),
 * whose mean is Sigma_pool. Updating with the scatter W_k on n_k - 1 degrees of
 * freedom gives the posterior inverse-Wishart(nu_0 + d + n_k, nu_0 Sigma_pool + W_k),
 * with posterior mean (Gelman et al., Bayesian Data Analysis, 3rd ed., 3.6; the
 * mean of IW(nu, Psi) is Psi / (nu - d - 1)):
 *   Sigma_k = (nu_0 Sigma_pool + W_k) / (nu_0 + n_k - 1)
 * a weighted average of the pooled covariance (weight nu_0 pseudo-observations) and
 * the cell's unbiased sample covariance (weight n_k - 1). It is positive definite for
 * every n_k >= 1, because Sigma_pool is and W_k is positive semi-definite. The mean
 * gets a flat prior, so m_k is the plain average. Sigma_pool is estimated from the
 * same data (an empirical-Bayes plug-in).
 */
import { FitError } from '../errors.js';
import { symmetricEigen, zeros } from '../geometry/index.js';
import type { Matrix, Template, TemplateCell } from '../types.js';
import { chiSquareQuantile, fQuantile } from '../stats/index.js';

/** Smallest eigenvalue allowed in the pooled covariance: (0.001 um)^2. */
export const POOLED_EIGENVALUE_FLOOR = 1e-6;

/** Raw sufficient statistics of one cell: count, sum and sum of outer products. */
export interface CellSums {
  n: number;
  sum: number[];
  sumOfSquares: number[][];
}

export function emptySums(dim: number): CellSums {
  return { n: 0, sum: new Array<number>(dim).fill(0), sumOfSquares: zeros(dim, dim) };
}

/** Add one observation y to the sums in place: n += 1, S += y, Q += y y^T. */
export function addObservationInPlace(sums: CellSums, y: readonly number[]): void {
  sums.n += 1;
  const d = y.length;
  for (let a = 0; a < d; a++) {
    sums.sum[a] += y[a];
    for (let b = 0; b < d; b++) sums.sumOfSquares[a][b] += y[a] * y[b];
  }
}

/** Scatter about the mean W = Q - S S^T / n (zero matrix for n <= 1), symmetrised. */
export function scatterFromSums(n: number, sum: readonly number[], sumOfSquares: Matrix): number[][] {
  const d = sum.length;
  const w = zeros(d, d);
  if (n <= 1) return w;
  for (let a = 0; a < d; a++)
    for (let b = 0; b <= a; b++) {
      const v = 0.5 * (sumOfSquares[a][b] + sumOfSquares[b][a]) - (sum[a] * sum[b]) / n;
      w[a][b] = v;
      w[b][a] = v;
    }
  return w;
}

/**
 * Sigma_pool = sum_k W_k / sum_k (n_k - 1), eigenvalues floored at
 * POOLED_EIGENVALUE_FLOOR. Throws FitError when no cell was seen twice
 * (no within-cell spread can be estimated from one member).
 */
export function pooledCovariance(scatters: readonly { n: number; scatter: Matrix }[], dim: number): number[][] {
  const total = zeros(dim, dim);
  let dof = 0;
  for (const { n, scatter } of scatters) {
    if (n < 2) continue;
    dof += n - 1;
    for (let a = 0; a < dim; a++) for (let b = 0; b < dim; b++) total[a][b] += scatter[a][b];
  }
  if (dof === 0) throw new FitError('pooledCovariance: no cell was observed in two or more samples, so no within-cell spread can be estimated');
  for (let a = 0; a < dim; a++) for (let b = 0; b < dim; b++) total[a][b] /= dof;
  return floorEigenvalues(total, POOLED_EIGENVALUE_FLOOR);
}

/** V diag(max(lambda, floor)) V^T of a symmetric matrix. */
export function floorEigenvalues(m: Matrix, floor: number): number[][] {
  const { values, vectors } = symmetricEigen(m);
  if (values[values.length - 1] >= floor) return m.map((row, i) => row.map((v, j) => 0.5 * (v + m[j][i])));
  const d = m.length;
  const out = zeros(d, d);
  for (let k = 0; k < d; k++) {
    const l = Math.max(values[k], floor);
    for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) out[a][b] += l * vectors[a][k] * vectors[b][k];
  }
  for (let a = 0; a < d; a++) for (let b = 0; b < a; b++) out[a][b] = out[b][a] = 0.5 * (out[a][b] + out[b][a]);
  return out;
}

/** Posterior-mean covariance (nu_0 Sigma_pool + W) / (nu_0 + n - 1); see the module comment. */
export function shrunkCovariance(n: number, scatter: Matrix, pooled: Matrix, priorStrength: number): number[][] {
  const denom = priorStrength + n - 1;
  return pooled.map((row, a) => row.map((p, b) => (priorStrength * p + scatter[a][b]) / denom));
}

/**
 * The covariance a matcher should use for a NEW animal's cell: the Gaussian
 * predictive covariance (1 + 1/n) Sigma_k, where Sigma_k is the cell's shrunk
 * covariance and n its count. It adds the uncertainty of the mean m_k
 * (Cov(m_k) = Sigma_k / n) to the spread of one animal (Sigma_k); a new
 * observation y satisfies Cov(y - m_k) = (1 + 1/n) Sigma_k when y and the
 * members are independent draws (Anderson, An Introduction to Multivariate
 * Statistical Analysis, 3rd ed., 5.2, the Hotelling T^2 construction). The
 * Student-t that also integrates over Sigma_k is not used: the shrinkage
 * already keeps Sigma_k away from its small-sample extremes.
 * `template` is accepted for interface stability and not used.
 */
export function predictiveCovariance(cell: TemplateCell, template?: Template): number[][] {
  void template;
  const f = 1 + 1 / Math.max(1, cell.count);
  return cell.covariance.map((row) => row.map((v) => v * f));
}

/**
 * Template cells from sufficient statistics: mean S / n, covariance shrunk toward
 * the pooled covariance of all cells, sparse when n < minCount. Cells are
 * returned in the order given; cells with n = 0 are dropped.
 */
export function cellsFromSums(
  entries: readonly { label: string; sums: CellSums }[],
  dim: number,
  priorStrength: number,
  minCount: number,
): { cells: TemplateCell[]; pooled: number[][] } {
  const kept = entries.filter((e) => e.sums.n > 0);
  const scatters = kept.map((e) => ({ n: e.sums.n, scatter: scatterFromSums(e.sums.n, e.sums.sum, e.sums.sumOfSquares) }));
  const pooled = pooledCovariance(scatters, dim);
  const cells = kept.map((e, i): TemplateCell => ({
    label: e.label,
    mean: e.sums.sum.map((v) => v / e.sums.n),
    covariance: shrunkCovariance(e.sums.n, scatters[i].scatter, pooled, priorStrength),
    count: e.sums.n,
    sum: e.sums.sum.slice(),
    sumOfSquares: e.sums.sumOfSquares.map((r) => r.slice()),
    sparse: e.sums.n < minCount,
  }));
  return { cells, pooled };
}

/** Reference distribution for flagging: see `predictiveCutoff`. */
export type FlagReference = 'student-t' | 'chi-square';

/**
 * The squared Mahalanobis radius, in units of the predictive covariance
 * (1 + 1/n) Sigma_k, beyond which an observation of a cell with n observations
 * has tail probability below `tail`.
 *
 * 'student-t' (default): under the conjugate model of this module (flat prior on
 * the mean, Sigma_k ~ IW(nu_0 + d + n, nu_0 Sigma_pool + W_k) a posteriori) the
 * predictive of a new observation is multivariate t with nu = nu_0 + n + 1 degrees
 * of freedom and scale (1 + 1/n)(nu_0 Sigma_pool + W_k) / nu (Gelman et al.,
 * Bayesian Data Analysis, 3rd ed., 3.6; Kotz & Nadarajah, Multivariate t
 * Distributions, 2004, 1.4: D_t^2 / d ~ F(d, nu)). In units of (1 + 1/n) Sigma_k:
 *   r^2 = d F^-1_{d, nu}(1 - tail) (nu_0 + n - 1) / (nu_0 + n + 1).
 * It tends to the chi-square quantile as n grows and is wider for small n, where
 * Sigma_k is uncertain.
 * 'chi-square': r^2 = chi2_d^-1(1 - tail), ignoring the uncertainty of Sigma_k.
 * Results are cached per (n, d, nu_0, tail, reference).
 */
export function predictiveCutoff(n: number, d: number, priorStrength: number, tail: number, reference: FlagReference = 'student-t'): number {
  const key = `${reference}|${n}|${d}|${priorStrength}|${tail}`;
  const hit = cutoffCache.get(key);
  if (hit !== undefined) return hit;
  const value =
    reference === 'chi-square'
      ? chiSquareQuantile(1 - tail, d)
      : (d * fQuantile(1 - tail, d, priorStrength + n + 1) * (priorStrength + n - 1)) / (priorStrength + n + 1);
  if (cutoffCache.size > 10000) cutoffCache.clear();
  cutoffCache.set(key, value);
  return value;
}
const cutoffCache = new Map<string, number>();
