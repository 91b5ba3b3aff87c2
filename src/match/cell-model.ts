/**
 * The per-cell Gaussian model the matcher scores against, precomputed once per
 * template into flat typed arrays for the hot loops.
 *
 * For cell k with member covariance Sigma_k estimated from n_k observations,
 * a new animal's cell position is modelled by the predictive distribution
 *
 *   y ~ N(mu_k, S_k),   S_k = (1 + 1/n_k) Sigma_k
 *
 * (the Gaussian approximation of the posterior predictive of a normal model
 * with known covariance and a flat prior on the mean: the spread of the
 * members plus the uncertainty of the mean; Gelman et al., Bayesian Data
 * Analysis, 3rd ed., section 3.5); the template module's predictiveCovariance
 * computes S_k. Cells with n_k <= 0 are treated as n_k = 1.
 */
import { FitError } from '../errors.js';
import { cholesky, precisionMatrix, symmetricEigen } from '../geometry/index.js';
import { randomNormal, type Rng } from '../random.js';
import { predictiveCovariance } from '../template/cell-statistics.js';
import type { Template } from '../types.js';

export interface CellModel {
  readonly dim: number;
  /** Number of cells K. */
  readonly size: number;
  readonly labels: readonly string[];
  readonly labelIndex: ReadonlyMap<string, number>;
  /** K x d means, flattened. */
  readonly means: Float64Array;
  /** Means as rows (for fits and indexes). */
  readonly meanRows: number[][];
  /** Predictive covariances S_k (K of d x d). */
  readonly covariances: number[][][];
  /** K x d x d precisions S_k^-1, flattened row-major. */
  readonly precisions: Float64Array;
  /**
   * Per cell, its mean then its precision (row-major), d + d^2 values per cell:
   * the same numbers as `means` and `precisions`, interleaved so that the
   * pair-gain loop reads one cell's data from one place.
   */
  readonly meanPrecision: Float64Array;
  /** log det S_k. */
  readonly logDets: Float64Array;
  /** Largest standard deviation sqrt(lambda_max(S_k)). */
  readonly maxStd: Float64Array;
  /** Isotropic variance trace(S_k) / d (for distance-consistency tolerances and fit weights). */
  readonly isoVar: Float64Array;
  /** Member counts n_k. */
  readonly counts: Float64Array;
}

/**
 * Build the cell model of a template. Throws FitError when a cell's predictive
 * covariance is not positive definite, naming the cell.
 */
export function buildCellModel(template: Template): CellModel {
  const d = template.dim;
  const K = template.cells.length;
  if (K === 0) throw new FitError('matching needs a template with at least one cell, got 0');
  const means = new Float64Array(K * d);
  const precisions = new Float64Array(K * d * d);
  const logDets = new Float64Array(K);
  const maxStd = new Float64Array(K);
  const isoVar = new Float64Array(K);
  const counts = new Float64Array(K);
  const covariances: number[][][] = [];
  const labels: string[] = [];
  const labelIndex = new Map<string, number>();
  const meanRows: number[][] = [];
  template.cells.forEach((cell, k) => {
    labels.push(cell.label);
    labelIndex.set(cell.label, k);
    meanRows.push(cell.mean.slice());
    for (let a = 0; a < d; a++) means[k * d + a] = cell.mean[a];
    const s = predictiveCovariance(cell);
    let l: number[][];
    try {
      l = cholesky(s);
    } catch {
      throw new FitError(`template cell "${cell.label}": covariance is not positive definite`);
    }
    let ld = 0;
    for (let a = 0; a < d; a++) ld += 2 * Math.log(l[a][a]);
    logDets[k] = ld;
    const p = precisionMatrix(s);
    for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) precisions[k * d * d + a * d + b] = p[a][b];
    maxStd[k] = Math.sqrt(Math.max(...symmetricEigen(s).values));
    let tr = 0;
    for (let a = 0; a < d; a++) tr += s[a][a];
    isoVar[k] = tr / d;
    counts[k] = cell.count;
    covariances.push(s);
  });
  const stride = d + d * d;
  const meanPrecision = new Float64Array(K * stride);
  for (let k = 0; k < K; k++) {
    meanPrecision.set(means.subarray(k * d, (k + 1) * d), k * stride);
    meanPrecision.set(precisions.subarray(k * d * d, (k + 1) * d * d), k * stride + d);
  }
  return { dim: d, size: K, labels, labelIndex, means, meanRows, covariances, precisions, meanPrecision, logDets, maxStd, isoVar, counts };
}

/** Squared Mahalanobis distance of y (length d) from cell k under S_k. */
export function cellMahalanobisSquared(model: CellModel, k: number, y: ArrayLike<number>): number {
  const d = model.dim;
  const m = model.means, p = model.precisions;
  const mo = k * d, po = k * d * d;
  if (d === 3) {
    const a = y[0] - m[mo], b = y[1] - m[mo + 1], c = y[2] - m[mo + 2];
    return (
      a * (p[po] * a + p[po + 1] * b + p[po + 2] * c) +
      b * (p[po + 3] * a + p[po + 4] * b + p[po + 5] * c) +
      c * (p[po + 6] * a + p[po + 7] * b + p[po + 8] * c)
    );
  }
  let s = 0;
  for (let i = 0; i < d; i++) {
    const di = y[i] - m[mo + i];
    let r = 0;
    for (let j = 0; j < d; j++) r += p[po + i * d + j] * (y[j] - m[mo + j]);
    s += di * r;
  }
  return s;
}

/** Share of cells a pseudo-animal misses (drawPseudoAnimal). */
const PSEUDO_MISSING = 0.15;

/**
 * One pseudo-animal drawn from the model: each cell kept with probability
 * 0.85, its point drawn from N(mu_k, S_k); `factors` are the lower Cholesky
 * factors of the S_k. Draws per cell, in cell order: one uniform, then d
 * normals when the cell is kept.
 */
export function drawPseudoAnimal(model: CellModel, factors: readonly (readonly (readonly number[])[])[], rng: Rng): { cells: number[]; points: number[][] } {
  const d = model.dim;
  const cells: number[] = [], points: number[][] = [];
  for (let k = 0; k < model.size; k++) {
    if (rng() < PSEUDO_MISSING) continue;
    const z = Array.from({ length: d }, () => randomNormal(rng));
    const p = new Array<number>(d);
    for (let a = 0; a < d; a++) {
      let s = model.means[k * d + a];
      for (let b = 0; b <= a; b++) s += factors[k][a][b] * z[b];
      p[a] = s;
    }
    cells.push(k);
    points.push(p);
  }
  return { cells, points };
}
