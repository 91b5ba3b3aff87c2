/**
 * The matching model and its one-to-one posterior.
 *
 * Model (docs/algorithms.md, "Confidence model"). Given the map T (sample ->
 * template, Jacobian J = |det A|) and y_i = T x_i, a labelling is a partial
 * one-to-one matching M between points and cells; points outside M are
 * outliers, cells outside M are missing. Each cell is detected with
 * probability rho; detected cell k puts its point at y ~ N(mu_k, S_k);
 * outliers form a Poisson process of intensity Lambda u_i at point i, with
 * u = 1 / V (V the volume of the sample's bounding box along its principal
 * axes: density-grid.ts, boundingVolume) and
 * u_i = u exp(delta_i), delta_i >= 0 where outliers are known to crowd
 * (excess-density.ts; delta_i = 0 everywhere unless given). The likelihood
 * of a matching is, up to terms that do not depend on it,
 *
 *   p(X, M) ∝ prod_{(i,k) in M} rho J N(y_i; mu_k, S_k)
 *           * prod_{i unmatched} Lambda u_i * prod_{k unmatched} (1 - rho).
 *
 * Dividing by the all-unmatched configuration, a matching's log-likelihood
 * ratio is sum_{(i,k) in M} g_ik with the pair gain
 *
 *   g_ik = log(rho J N(y_i; mu_k, S_k)) - log(Lambda u) - delta_i - log(1 - rho).
 *
 * The most probable labelling maximises sum g_ik: a rectangular linear
 * assignment with cost -g_ik and a no-label option of cost 0 per point (pairs
 * with g_ik <= 0 can never win and are forbidden).
 *
 * The posterior marginals P(i -> k) over all matchings are approximated by
 * balancing the matrix W_ik = exp(g_ik) (Sinkhorn 1964; "softassign", Gold &
 * Rangarajan 1996) with a slack column per point (its outlier option, weight
 * 1 after the division above) and the inequality sum_i P_ik <= 1 per cell (a
 * cell explains at most one point): P(i -> k) = a_i b_k W_ik with
 *   a_i = 1 / (1 + sum_k b_k W_ik),   b_k = min(1, 1 / sum_i a_i W_ik),
 * found by alternating Bregman projections (Bregman 1967; Benamou et al.
 * 2015, SIAM J. Sci. Comput. 37(2), section 3). Without competition
 * (b_k = 1) this is the exact per-point posterior W_ik / (1 + sum_l W_il)
 * of the mixture model; when several points claim one cell, their shares are
 * scaled down so that they sum to one. The balancing counts a point's own
 * claim on a cell against it, so on dense problems its marginals are spread
 * too wide; the confidences of the final proposals use the Bethe
 * approximation of belief-propagation.ts instead, which is closer to exact.
 * The balancing, cheaper and smooth in the pose, stays for the pose search,
 * the bend and the polish.
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
  /**
   * Per point i, delta_i = log(u_i / u) >= 0: how much denser than uniform
   * the outliers are at that point (excess-density.ts). Absent: 0 for every
   * point. Indexed like the points the gains are computed for.
   */
  readonly outlierExcess?: Float64Array;
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
 * With `positiveOnly`, pairs with g_ik <= 0 are left out (they can never be
 * matched; enough for the matchings, not for the posterior).
 *
 * Speed: a pair is first screened by the Euclidean bound
 * e2 = p^T S_k^-1 p >= |p|^2 / lambda_max(S_k) (Rayleigh quotient), so that
 * the full quadratic form is computed only for pairs that can pass (the
 * bound is applied with a relative slack of 1e-9, so it never drops a pair
 * the exact test would keep). Each cell's mean and precision are read from
 * one interleaved array (CellModel.meanPrecision), and the output buffers are
 * grown before a voxel's list is scanned, never inside the scan (on a
 * 190-cell template about 8-13% less time per call than reading the two
 * separate arrays with a check per pair, same output bit for bit; best of
 * 30 rounds of 100 calls, a scratch microbenchmark, December 2026). With
 * `scratch`, the returned arrays are views of buffers reused by the next
 * call made with `scratch` (for callers that consume the table at once).
 */
export function pairGains(
  model: CellModel,
  grid: CellGrid,
  mapped: Points,
  jacobian: number,
  params: MatchModelParameters,
  positiveOnly = false,
  scratch = false,
): PairGains {
  const d = model.dim;
  const infl = params.inflation ?? 1;
  const base =
    Math.log(params.detection * jacobian) -
    Math.log(params.outliers * params.outlierDensity) -
    Math.log(1 - params.detection) -
    0.5 * d * Math.log(2 * Math.PI * infl);
  const n = mapped.length;
  const outlierExcess = params.outlierExcess ?? null;
  if (outlierExcess && outlierExcess.length !== n) throw new RangeError(`pairGains: outlierExcess has ${outlierExcess.length} entries for ${n} points`);
  const rowStart = new Int32Array(n + 1);
  let capacity = Math.max(64, n * 32);
  let cells: Int32Array, gains: Float64Array, dists: Float64Array;
  if (scratch) {
    if (scratchCells.length < capacity) {
      scratchCells = new Int32Array(capacity);
      scratchGains = new Float64Array(capacity);
      scratchDists = new Float64Array(capacity);
    }
    cells = scratchCells;
    gains = scratchGains;
    dists = scratchDists;
    capacity = cells.length;
  } else {
    cells = new Int32Array(capacity);
    gains = new Float64Array(capacity);
    dists = new Float64Array(capacity);
  }
  let used = 0;
  const limit = 12.25 * infl;
  const half = 0.5 / infl;
  const logDets = model.logDets, maxStd = model.maxStd;
  const offsets = grid.offsets, list = grid.cells;
  // Per cell: the part of g_ik that does not depend on the point, base - (1/2) log det S_k, and the
  // largest |p|^2 that can still pass (e2 <= limit and, with positiveOnly, gain > 0).
  const K = model.size;
  const cellBase = new Float64Array(K);
  const reach2 = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    cellBase[k] = base - 0.5 * logDets[k];
    let lim = limit;
    if (positiveOnly) lim = Math.min(lim, cellBase[k] / half);
    reach2[k] = lim < 0 ? -1 : lim * maxStd[k] * maxStd[k] * (1 + 1e-9) + 1e-12;
  }
  const mp = model.meanPrecision, stride = d + d * d;
  const origin = grid.origin, voxel = grid.voxel, shape = grid.shape;
  for (let i = 0; i < n; i++) {
    const y = mapped[i];
    const v = d === 3 ? voxelOf3(origin, voxel, shape, y[0], y[1], y[2]) : voxelOf(grid, y);
    if (v >= 0) {
      const from = offsets[v], to = offsets[v + 1];
      // Room for every cell of the voxel's list, so that the scan below needs no check.
      if (used + (to - from) > capacity) {
        capacity = Math.max(2 * capacity, used + (to - from));
        const nc = new Int32Array(capacity), ng = new Float64Array(capacity), nd = new Float64Array(capacity);
        nc.set(cells.subarray(0, used));
        ng.set(gains.subarray(0, used));
        nd.set(dists.subarray(0, used));
        cells = nc;
        gains = ng;
        dists = nd;
        if (scratch) {
          scratchCells = nc;
          scratchGains = ng;
          scratchDists = nd;
        }
      }
      const y0 = y[0], y1 = d > 1 ? y[1] : 0, y2 = d > 2 ? y[2] : 0;
      const excess = outlierExcess ? outlierExcess[i] : 0;
      for (let c = from; c < to; c++) {
        const k = list[c];
        let e2: number;
        if (d === 3) {
          const o = k * stride;
          const p0 = y0 - mp[o], p1 = y1 - mp[o + 1], p2 = y2 - mp[o + 2];
          if (p0 * p0 + p1 * p1 + p2 * p2 > reach2[k]) continue;
          e2 =
            p0 * (mp[o + 3] * p0 + mp[o + 4] * p1 + mp[o + 5] * p2) +
            p1 * (mp[o + 6] * p0 + mp[o + 7] * p1 + mp[o + 8] * p2) +
            p2 * (mp[o + 9] * p0 + mp[o + 10] * p1 + mp[o + 11] * p2);
        } else {
          e2 = 0;
          const o = k * stride;
          for (let a = 0; a < d; a++) {
            let r = 0;
            for (let b = 0; b < d; b++) r += mp[o + d + a * d + b] * (y[b] - mp[o + b]);
            e2 += (y[a] - mp[o + a]) * r;
          }
        }
        if (e2 > limit) continue;
        const gain = cellBase[k] - half * e2 - excess;
        if (positiveOnly && !(gain > 0)) continue;
        cells[used] = k;
        gains[used] = gain;
        dists[used] = e2;
        used++;
      }
    }
    rowStart[i + 1] = used;
  }
  return { rowStart, cells: cells.subarray(0, used), gains: gains.subarray(0, used), distances: dists.subarray(0, used) };
}

let scratchCells = new Int32Array(0);
let scratchGains = new Float64Array(0);
let scratchDists = new Float64Array(0);

/** voxelOf for d = 3 without the generic loop (same result). */
function voxelOf3(origin: Float64Array, h: number, shape: Int32Array, y0: number, y1: number, y2: number): number {
  const i0 = Math.floor((y0 - origin[0]) / h);
  if (i0 < 0 || i0 >= shape[0]) return -1;
  const i1 = Math.floor((y1 - origin[1]) / h);
  if (i1 < 0 || i1 >= shape[1]) return -1;
  const i2 = Math.floor((y2 - origin[2]) / h);
  if (i2 < 0 || i2 >= shape[2]) return -1;
  return (i0 * shape[1] + i1) * shape[2] + i2;
}

export interface Marginals {
  /** P(i -> k) per pair, aligned with PairGains.cells. */
  readonly pair: Float64Array;
  /** P(i is an outlier). */
  readonly outlier: Float64Array;
  /** P(cell k is missing). */
  readonly missing: Float64Array;
}

/**
 * Posterior marginals by alternating Bregman projections (see the module
 * comment): rows onto sum_k P_ik + P_i0 = 1, columns onto sum_i P_ik <= 1.
 * Stops when no scaling changes by more than `tolerance` (relative).
 */
export function sinkhorn(pairs: PairGains, points: number, cells: number, iterations = 60, tolerance = 1e-6): Marginals {
  const w = exponentiate(pairs, points, new Float64Array(pairs.rowStart[points]));
  const a = new Float64Array(points).fill(1), b = new Float64Array(cells).fill(1);
  balance(pairs, w, points, cells, a, b, iterations, tolerance);
  // Final row projection so that every row is exactly normalised.
  for (let i = 0; i < points; i++) {
    let s = 1;
    for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) s += b[pairs.cells[j]] * w[j];
    a[i] = 1 / s;
  }
  const pair = new Float64Array(w.length);
  const claimed = new Float64Array(cells);
  for (let i = 0; i < points; i++)
    for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) {
      pair[j] = a[i] * b[pairs.cells[j]] * w[j];
      claimed[pairs.cells[j]] += pair[j];
    }
  const missing = new Float64Array(cells);
  for (let k = 0; k < cells; k++) missing[k] = Math.max(0, 1 - claimed[k]);
  return { pair, outlier: a.slice(), missing };
}

/**
 * Log-likelihood of the points with the cells' weights balanced by Sinkhorn
 * scaling (not the exact marginal likelihood of the one-to-one model, which
 * sums over all matchings: a permanent), relative to "all points are
 * outliers":
 *
 *   L = sum_i log(1 + sum_k b_k W_ik) = -sum_i log a_i,
 *
 * with a_i, b_k the scalings of the module comment. With every b_k = 1 this
 * is the mixture log-likelihood of the points (each point a cell's point or an
 * outlier, independently); the column factors b_k <= 1 scale down the cells
 * that the points would otherwise claim more than once, so a pose cannot gain
 * by piling points onto the same cells. Unlike the best matching's gain (a
 * maximum over labellings), L sums over the labellings, so it does not reward
 * a pose for making its own labelling look certain.
 *
 * `columns` (length `cells`) holds the b_k: it is read as the starting point
 * and overwritten with the result, so that a caller scoring nearby poses can
 * warm-start each call from the last (a few iterations then suffice; fill it
 * with 1 for a cold start). `weights` is scratch space of at least the
 * number of pairs (reallocated when shorter; the caller keeps the returned one).
 */
export function pointLikelihood(
  pairs: PairGains,
  points: number,
  cells: number,
  columns: Float64Array,
  iterations: number,
  weights: Float64Array = new Float64Array(0),
): { value: number; weights: Float64Array } {
  const m = pairs.rowStart[points];
  const w = exponentiate(pairs, points, weights.length >= m ? weights : new Float64Array(Math.max(m, 2 * weights.length)));
  const b = columns;
  // Tolerance 0: every sweep runs (the change is never below 0).
  balance(pairs, w, points, cells, new Float64Array(points), b, iterations, 0);
  let value = 0;
  for (let i = 0; i < points; i++) {
    let s = 1;
    for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) s += b[pairs.cells[j]] * w[j];
    value += Math.log(s);
  }
  return { value, weights: w };
}

/** W_ij = exp(g_ij) (capped at e^600) into `into`, which must hold every pair; returns `into`. */
export function exponentiate(pairs: PairGains, points: number, into: Float64Array): Float64Array {
  const m = pairs.rowStart[points];
  for (let j = 0; j < m; j++) into[j] = Math.exp(Math.min(pairs.gains[j], 600));
  return into;
}

/**
 * Sinkhorn sweeps (module comment): a_i = 1 / (1 + sum_k b_k W_ik) for every
 * row, then b_k = min(1, 1 / sum_i a_i W_ik); `a` and `b` are updated in place
 * (b is read as the start). Stops after `iterations` sweeps or when no b_k
 * changed by more than `tolerance` (relative).
 */
function balance(pairs: PairGains, w: Float64Array, points: number, cells: number, a: Float64Array, b: Float64Array, iterations: number, tolerance: number): void {
  const colSum = new Float64Array(cells);
  for (let it = 0; it < iterations; it++) {
    let change = 0;
    for (let i = 0; i < points; i++) {
      let s = 1;
      for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) s += b[pairs.cells[j]] * w[j];
      a[i] = 1 / s;
    }
    colSum.fill(0);
    for (let i = 0; i < points; i++)
      for (let j = pairs.rowStart[i]; j < pairs.rowStart[i + 1]; j++) colSum[pairs.cells[j]] += a[i] * w[j];
    for (let k = 0; k < cells; k++) {
      const nb = colSum[k] > 1 ? 1 / colSum[k] : 1;
      change = Math.max(change, Math.abs(nb - b[k]) / b[k]);
      b[k] = nb;
    }
    if (change < tolerance) break;
  }
}

export interface HardMatching {
  /** Sum of the gains of the matched pairs. */
  readonly total: number;
  /** Matched cell of each point, -1 = none. */
  readonly cellOfPoint: Int32Array;
}

/** Total gain of the greedy one-to-one matching (see greedyMatching). */
export function greedyMatchingGain(pairs: PairGains, points: number, cells: number): number {
  return greedyMatching(pairs, points, cells).total;
}

/**
 * Greedy one-to-one matching by descending gain, pairs with g_ik > 0 only
 * (each point and each cell at most once). A fast approximation of the
 * optimal assignment, within a factor 1/2 of its total (the greedy bound for
 * weighted bipartite matching; Avis 1983).
 *
 * Order: pairs are taken by descending g_ik, equal gains by ascending pair
 * index (the index into `pairs.gains`); a pair is kept when its point and its
 * cell are both still free. The total is summed in that order.
 *
 * Method (same result as sorting every positive pair, found with less work):
 * the positive pairs are split by a stable counting sort into GREEDY_BANDS
 * bands of equal width in gain, band(g) = min(B - 1, max(0, floor((T - g) B / T)))
 * with T the largest finite gain among every 8th pair (or, when none of those
 * is positive, of all pairs); gains at or above T, +Infinity included, fall
 * in band 0. The band index never increases with g, whatever T > 0 is, so
 * going band by band respects the order.
 * At the start of a band, its pairs whose point or cell is already matched
 * are dropped (the greedy would skip them: matched ends stay matched); only
 * the rest are sorted exactly (insertion sort for a few, else an LSD radix
 * sort on the IEEE-754 bit patterns, which order positive doubles like their
 * values) and taken in order. On 190-point tables most pairs are dropped
 * before any sorting.
 *
 * Shapes: `pairs.rowStart` has points + 1 entries with rowStart[points] =
 * pairs.gains.length; cells in [0, cells). Returns cellOfPoint (length
 * points, -1 = unmatched) and the total gain. Throws nothing.
 */
export function greedyMatching(pairs: PairGains, points: number, cells: number): HardMatching {
  const cellOfPoint = new Int32Array(points).fill(-1);
  const gains = pairs.gains;
  // Scale of the bands: the largest finite gain among every 8th pair (any positive scale keeps the
  // order exact; gains above it share band 0), else the largest finite gain of all.
  let top = sampledLargestGain(gains);
  if (top <= 0) {
    top = largestFinitePositiveGain(gains);
    if (top < 0) return { total: 0, cellOfPoint };
  }
  if (greedyOrder.length < gains.length) growGreedyBuffers(gains.length);
  const bandEnd = sortIntoGainBands(gains, top);
  const rowStart = pairs.rowStart, rowOf = greedyRowOf;
  for (let i = 0; i < points; i++) rowOf.fill(i, rowStart[i], rowStart[i + 1]);
  const total = greedyByBands(pairs.cells, gains, bandEnd, cellOfPoint, new Uint8Array(cells));
  return { total, cellOfPoint };
}

/** Bands of greedyMatching (33 per point on 190-point tables leaves about 300 pairs to sort). */
const GREEDY_BANDS = 32;
/** Above this many pairs to sort in one band, the radix sort replaces the insertion sort. */
const GREEDY_INSERTION_LIMIT = 48;

/** Largest finite gain among pairs 0, 8, 16, ... (-1 when none of them is positive). */
function sampledLargestGain(gains: Float64Array): number {
  let top = -1;
  for (let j = 0; j < gains.length; j += 8) {
    const g = gains[j];
    if (g > top && g !== Infinity) top = g;
  }
  return top;
}

/** Largest finite gain > 0; 0 when every positive gain is +Infinity; -1 when no gain is positive. */
function largestFinitePositiveGain(gains: Float64Array): number {
  let top = -1;
  for (let j = 0; j < gains.length; j++) {
    const g = gains[j];
    if (g > 0) {
      if (g === Infinity) {
        if (top < 0) top = 0;
      } else if (g > top) top = g;
    }
  }
  return top;
}

/**
 * Stable counting sort of the pairs with g > 0 into GREEDY_BANDS bands of
 * decreasing gain (see greedyMatching); leaves the pair indices, band after
 * band and in index order inside a band, in greedyOrder and returns the end
 * of each band.
 */
function sortIntoGainBands(gains: Float64Array, top: number): Int32Array {
  const end = greedyBandEnd, bandOf = greedyBandOf, order = greedyOrder;
  const P = gains.length, last = GREEDY_BANDS - 1;
  let scale = GREEDY_BANDS / top;
  if (!(scale < Infinity)) scale = 0; // top 0 or subnormal: one band, sorted exactly
  end.fill(0);
  for (let j = 0; j < P; j++) {
    const g = gains[j];
    let b = -1;
    if (g > 0) {
      // x = (top - g) * scale is at most B(1 + eps); x <= 0 (g >= top, including +Infinity) and NaN
      // (+Infinity when scale = 0) go to band 0, the rest to floor(x) (| 0 never wraps below B).
      const x = (top - g) * scale;
      b = x > 0 ? Math.min(last, x | 0) : 0;
      end[b]++;
    }
    bandOf[j] = b;
  }
  let sum = 0;
  for (let b = 0; b < GREEDY_BANDS; b++) {
    const c = end[b];
    end[b] = sum;
    sum += c;
  }
  for (let j = 0; j < P; j++) {
    const b = bandOf[j];
    if (b >= 0) order[end[b]++] = j;
  }
  return end;
}

/** The greedy over the bands of greedyOrder; fills cellOfPoint and usedCell, returns the total gain. */
function greedyByBands(
  cellOf: Int32Array,
  gains: Float64Array,
  bandEnd: Int32Array,
  cellOfPoint: Int32Array,
  usedCell: Uint8Array,
): number {
  const order = greedyOrder, rowOf = greedyRowOf, free = greedyFree;
  let total = 0;
  let lo = 0;
  for (let b = 0; b < GREEDY_BANDS; b++) {
    const hi = bandEnd[b];
    let s = 0;
    for (let x = lo; x < hi; x++) {
      const j = order[x];
      if (cellOfPoint[rowOf[j]] < 0 && !usedCell[cellOf[j]]) free[s++] = j;
    }
    lo = hi;
    if (s > 1) sortByGainDescending(free, s, gains);
    for (let x = 0; x < s; x++) {
      const j = free[x];
      const i = rowOf[j], k = cellOf[j];
      if (cellOfPoint[i] >= 0 || usedCell[k]) continue;
      cellOfPoint[i] = k;
      usedCell[k] = 1;
      total += gains[j];
    }
  }
  return total;
}

/**
 * Sorts list[0..s), pair indices in ascending order with gains > 0, by
 * descending gain; equal gains keep their (index) order.
 */
function sortByGainDescending(list: Int32Array, s: number, gains: Float64Array): void {
  if (s > GREEDY_INSERTION_LIMIT) {
    radixSortByGainDescending(list, s, gains);
    return;
  }
  for (let x = 1; x < s; x++) {
    const j = list[x];
    const g = gains[j];
    let y = x - 1;
    while (y >= 0) {
      const o = list[y];
      if (gains[o] >= g) break;
      list[y + 1] = o;
      y--;
    }
    list[y + 1] = j;
  }
}

const LITTLE_ENDIAN = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;

/**
 * Stable LSD radix sort of list[0..s) by descending gain, on the 8 bytes of
 * each gain's IEEE-754 bit pattern (for doubles > 0, including +Infinity, the
 * pattern read as an unsigned integer orders like the value), least
 * significant byte first, with complemented digits for the descending order.
 * Passes in which every key has the same digit are skipped.
 */
function radixSortByGainDescending(list: Int32Array, s: number, gains: Float64Array): void {
  if (radixKeys.length < s) {
    const size = Math.max(s, 2 * radixKeys.length);
    radixKeys = new Float64Array(size);
    radixKeysSpare = new Float64Array(size);
    radixListSpare = new Int32Array(size);
  }
  let keys: Float64Array = radixKeys, keysSpare: Float64Array = radixKeysSpare;
  let src: Int32Array = list, dst: Int32Array = radixListSpare;
  for (let x = 0; x < s; x++) keys[x] = gains[list[x]];
  for (let pass = 0; pass < 8; pass++) {
    const word = (pass >> 2) ^ (LITTLE_ENDIAN ? 0 : 1); // low 32 bits first
    const shift = (pass & 3) * 8;
    const words = new Uint32Array(keys.buffer, 0, 2 * s);
    if (!radixDigitStarts(words, word, shift, s)) continue;
    const start = radixStarts;
    for (let x = 0; x < s; x++) {
      const at = start[255 - ((words[2 * x + word] >>> shift) & 255)]++;
      dst[at] = src[x];
      keysSpare[at] = keys[x];
    }
    const t = src;
    src = dst;
    dst = t;
    const tk = keys;
    keys = keysSpare;
    keysSpare = tk;
  }
  if (src !== list) list.set(src.subarray(0, s));
}

/** Start of each complemented digit in radixStarts; false when all s keys share the digit (nothing to move). */
function radixDigitStarts(words: Uint32Array, word: number, shift: number, s: number): boolean {
  const start = radixStarts;
  start.fill(0);
  for (let x = 0; x < s; x++) start[255 - ((words[2 * x + word] >>> shift) & 255)]++;
  let sum = 0;
  for (let d = 0; d < 256; d++) {
    const c = start[d];
    if (c === s) return false;
    start[d] = sum;
    sum += c;
  }
  return true;
}

function growGreedyBuffers(P: number): void {
  const size = Math.max(P, 2 * greedyOrder.length);
  greedyOrder = new Int32Array(size);
  greedyRowOf = new Int32Array(size);
  greedyBandOf = new Int32Array(size);
  greedyFree = new Int32Array(size);
}

// Scratch buffers of greedyMatching (reused across calls; single-threaded per worker).
let greedyOrder = new Int32Array(0);
let greedyRowOf = new Int32Array(0);
let greedyBandOf = new Int32Array(0);
let greedyFree = new Int32Array(0);
const greedyBandEnd = new Int32Array(GREEDY_BANDS);
let radixKeys = new Float64Array(0);
let radixKeysSpare = new Float64Array(0);
let radixListSpare = new Int32Array(0);
const radixStarts = new Int32Array(256);
