/**
 * The matching model and its one-to-one posterior.
 *
 * Model (docs/algorithms.md, "Confidence model"). Given the map T (sample ->
 * template, Jacobian J = |det A|) and y_i = T x_i, a labelling is a partial
 * one-to-one matching M between points and cells; points outside M are
 * outliers, cells outside M are missing. Each cell is detected with
 * probability rho; detected cell k puts its point at y ~ N(mu_k, S_k);
 * outliers form a Poisson process of intensity Lambda u (u = 1 / V, V the
 * sample's bounding-box volume, in the sample's frame). The likelihood of a
 * matching is, up to terms that do not depend on it,
 *
 *   p(X, M) ∝ prod_{(i,k) in M} rho J N(y_i; mu_k, S_k)
 *           * prod_{i unmatched} Lambda u * prod_{k unmatched} (1 - rho).
 *
 * Dividing by the all-unmatched configuration, a matching's log-likelihood
 * ratio is sum_{(i,k) in M} g_ik with the pair gain
 *
 *   g_ik = log(rho J N(y_i; mu_k, S_k)) - log(Lambda u) - log(1 - rho).
 *
 * The most probable labelling maximises sum g_ik: a rectangular linear
 * assignment with cost -g_ik and a no-label option of cost 0 per point (pairs
 * with g_ik <= 0 can never win and are forbidden).
 *
 * The posterior marginals P(i -> k) over all matchings are approximated by
 * Sinkhorn balancing with slack (Sinkhorn 1964; "softassign", Gold &
 * Rangarajan 1996; the same fixed point as the Bethe approximation of the
 * matching posterior): find a_i, b_k with
 *   a_i (sum_k b_k W_ik + 1) = 1,   b_k (sum_i a_i W_ik + 1) = 1,
 *   W_ik = exp(g_ik),
 * then P(i -> k) = a_i b_k W_ik and P(i is an outlier) = a_i. The slack
 * entries 1 are the outlier and missing-cell options (they carry weight
 * Lambda u and 1 - rho before the division above).
 */
import type { Points } from '../types.js';
import type { CellGrid } from './cell-grid.js';
import { voxelOf } from './cell-grid.js';
import type { CellModel } from './cell-model.js';

export interface MatchModelParameters {
  /** Detection probability rho of a cell, in (0, 1). */
  readonly detection: number;
  /** Expected number of outliers Lambda (> 0). */
  readonly outliers: number;
  /** Uniform outlier density u = 1 / V in the sample frame. */
  readonly outlierDensity: number;
  /** Multiplies every S_k (>= 1 widens the cells while annealing; 1 = the model). */
  readonly inflation?: number;
}

/** Sparse pair table: for each point, its candidate cells and gains g_ik. */
export interface PairGains {
  readonly rowStart: Int32Array;
  readonly cells: Int32Array;
  readonly gains: Float64Array;
  /** Squared Mahalanobis distances (under S_k, not inflated). */
  readonly distances: Float64Array;
}

/**
 * Gains g_ik for all pairs within 3.5 standard deviations (cells from the
 * grid, which must have been built with radius >= 3.5 * sqrt(inflation)).
 */
export function pairGains(
  model: CellModel,
  grid: CellGrid,
  mapped: Points,
  jacobian: number,
  params: MatchModelParameters,
): PairGains {
  const d = model.dim;
  const infl = params.inflation ?? 1;
  const base =
    Math.log(params.detection * jacobian) -
    Math.log(params.outliers * params.outlierDensity) -
    Math.log(1 - params.detection) -
    0.5 * d * Math.log(2 * Math.PI * infl);
  const rowStart = new Int32Array(mapped.length + 1);
  const cells: number[] = [], gains: number[] = [], dists: number[] = [];
  const limit = 12.25 * infl;
  for (let i = 0; i < mapped.length; i++) {
    const y = mapped[i];
    const v = voxelOf(grid, y);
    if (v >= 0) {
      for (let c = grid.offsets[v]; c < grid.offsets[v + 1]; c++) {
        const k = grid.cells[c];
        const po = k * d * d, mo = k * d;
        let e2 = 0;
        for (let a = 0; a < d; a++) {
          let r = 0;
          for (let b = 0; b < d; b++) r += model.precisions[po + a * d + b] * (y[b] - model.means[mo + b]);
          e2 += (y[a] - model.means[mo + a]) * r;
        }
        if (e2 > limit) continue;
        cells.push(k);
        gains.push(base - 0.5 * model.logDets[k] - (0.5 * e2) / infl);
        dists.push(e2);
      }
    }
    rowStart[i + 1] = cells.length;
  }
  return { rowStart, cells: Int32Array.from(cells), gains: Float64Array.from(gains), distances: Float64Array.from(dists) };
}

export interface Marginals {
  /** P(i -> k) per pair, aligned with PairGains.cells. */
  readonly pair: Float64Array;
  /** P(i is an outlier). */
  readonly outlier: Float64Array;
  /** P(cell k is missing). */
  readonly missing: Float64Array;
}

/** Sinkhorn balancing with slack (see the module comment). */
export function sinkhorn(pairs: PairGains, points: number, cells: number, iterations = 60, tolerance = 1e-6): Marginals {
  const w = new Float64Array(pairs.gains.length);
  for (let j = 0; j < w.length; j++) w[j] = Math.exp(Math.min(pairs.gains[j], 600));
  const a = new Float64Array(points).fill(1), b = new Float64Array(cells).fill(1);
  const colSum = new Float64Array(cells);
  for (let it = 0; it < iterations; it++) {
    let change = 0;
    for (let i = 0; i < points; i++) {
      let s = 1;
      for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) s += b[pairs.cells[j]] * w[j];
      const na = 1 / s;
      change = Math.max(change, Math.abs(na - a[i]));
      a[i] = na;
    }
    colSum.fill(1);
    for (let i = 0; i < points; i++)
      for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) colSum[pairs.cells[j]] += a[i] * w[j];
    for (let k = 0; k < cells; k++) {
      const nb = 1 / colSum[k];
      change = Math.max(change, Math.abs(nb - b[k]));
      b[k] = nb;
    }
    if (change < tolerance) break;
  }
  const pair = new Float64Array(w.length);
  for (let i = 0; i < points; i++)
    for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) pair[j] = a[i] * b[pairs.cells[j]] * w[j];
  // Row slack after the final column update.
  const outlier = new Float64Array(points);
  for (let i = 0; i < points; i++) {
    let s = 0;
    for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) s += pair[j];
    outlier[i] = Math.max(0, 1 - s);
  }
  return { pair, outlier, missing: b.slice() };
}

/**
 * Greedy one-to-one matching by descending gain (pairs with g_ik > 0 only):
 * a fast lower bound on max sum g_ik, used to compare candidate poses.
 */
export function greedyMatchingGain(pairs: PairGains, points: number, cells: number): number {
  const idx: number[] = [];
  for (let j = 0; j < pairs.gains.length; j++) if (pairs.gains[j] > 0) idx.push(j);
  idx.sort((x, y) => pairs.gains[y] - pairs.gains[x]);
  const rowOf = new Int32Array(pairs.gains.length);
  for (let i = 0; i < points; i++) for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) rowOf[j] = i;
  const usedPoint = new Uint8Array(points), usedCell = new Uint8Array(cells);
  let total = 0;
  for (const j of idx) {
    const i = rowOf[j], k = pairs.cells[j];
    if (usedPoint[i] || usedCell[k]) continue;
    usedPoint[i] = 1;
    usedCell[k] = 1;
    total += pairs.gains[j];
  }
  return total;
}
