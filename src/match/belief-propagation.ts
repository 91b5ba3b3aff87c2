/**
 * Posterior marginals of the one-to-one matching model by loopy belief
 * propagation (sum-product): the Bethe approximation of the sum over all
 * matchings, which is a permanent.
 *
 * The model is the one of softassign.ts: a partial matching M between points
 * and cells has weight prod_{(i,k) in M} W_ik, W_ik = exp(g_ik); every point
 * may stay unmatched (an outlier) and every cell may stay unmatched (missing),
 * each with weight 1. With one binary variable per pair and an "at most one"
 * factor per point and per cell, the messages are, as likelihood ratios
 * (Bayati, Shah & Sharma 2008, IEEE Trans. Inf. Theory 54(3), for the
 * max-product form; Huang & Jebara 2009, arXiv:0908.1769, and Chertkov &
 * Yedidia 2013, arXiv:1108.0065, for the sum-product form on permanents):
 *
 *   r_ik = 1 / (1 + sum_{l != k} W_il c_il)     (point i to pair (i, k))
 *   c_ik = 1 / (1 + sum_{j != i} W_jk r_jk)     (cell k to pair (i, k))
 *
 * and at a fixed point
 *
 *   P(i -> k) = W_ik c_ik / (1 + sum_l W_il c_il),   P(i is an outlier) = 1 / (1 + sum_l W_il c_il).
 *
 * The Sinkhorn balancing of softassign.ts is the same update with the point's
 * own pair left in the cell's sum (c_ik = b_k for every i). Counting a point's
 * own claim against it spreads its posterior over its rivals: on dense
 * problems the Sinkhorn marginals are under-confident, while the Bethe
 * approximation of a permanent is close to exact (Vontobel 2013, IEEE Trans.
 * Inf. Theory 59(3); see the tests against brute-force enumeration).
 *
 * The loopy iteration runs undamped while the largest relative change of a
 * cell-to-pair message shrinks; from the first sweep where it grows, the
 * messages are damped (geometric mean of old and new) so that it settles. It
 * stops when no message changes by more than `tolerance` (relative) or after
 * `iterations` sweeps.
 */
import { exponentiate, type Marginals, type PairGains } from './softassign.js';

/** P(i -> k) per pair, P(i is an outlier) and P(cell k is missing), from the converged messages. */
export function betheMarginals(pairs: PairGains, points: number, cells: number, iterations = 200, tolerance = 1e-7): Marginals {
  const { w, c } = messages(pairs, points, cells, iterations, tolerance);
  const m = w.length, rowStart = pairs.rowStart, cellOf = pairs.cells;
  const pair = new Float64Array(m);
  const outlier = new Float64Array(points);
  const claimed = new Float64Array(cells);
  for (let i = 0; i < points; i++) {
    let s = 1;
    for (let j = rowStart[i]; j < rowStart[i + 1]; j++) s += w[j] * c[j];
    outlier[i] = 1 / s;
    for (let j = rowStart[i]; j < rowStart[i + 1]; j++) {
      pair[j] = (w[j] * c[j]) / s;
      claimed[cellOf[j]] += pair[j];
    }
  }
  const missing = new Float64Array(cells);
  for (let k = 0; k < cells; k++) missing[k] = Math.max(0, 1 - claimed[k]);
  return { pair, outlier, missing };
}

/** W_ik and the converged cell-to-pair messages c_ik (module comment). */
function messages(pairs: PairGains, points: number, cells: number, iterations: number, tolerance: number): { w: Float64Array; c: Float64Array } {
  const m = pairs.rowStart[points];
  const rowStart = pairs.rowStart, cellOf = pairs.cells;
  const w = exponentiate(pairs, points, new Float64Array(m));
  // Pairs grouped by cell (column-major order of pair indices).
  const colStart = new Int32Array(cells + 1);
  for (let j = 0; j < m; j++) colStart[cellOf[j] + 1]++;
  for (let k = 0; k < cells; k++) colStart[k + 1] += colStart[k];
  const byCell = new Int32Array(m);
  const fill = colStart.slice(0, cells);
  for (let j = 0; j < m; j++) byCell[fill[cellOf[j]]++] = j;
  const next = new Float64Array(m);

  const c = new Float64Array(m).fill(1);
  const r = new Float64Array(m);
  const term = new Float64Array(m);
  // Each message leaves its own pair out of a group's sum; the sum of the others is formed from a
  // prefix and a suffix sum, so that no large term is subtracted from a sum that contains it.
  let change = Infinity, lastChange = Infinity, damped = false;
  for (let it = 0; it < iterations && change > tolerance; it++) {
    pointMessages(w, c, r, term, rowStart, points);
    for (let j = 0; j < m; j++) term[j] = w[j] * r[j];
    change = 0;
    for (let k = 0; k < cells; k++) {
      const from = colStart[k], to = colStart[k + 1];
      let prefix = 0;
      for (let t = from; t < to; t++) {
        next[t] = prefix;
        prefix += term[byCell[t]];
      }
      let suffix = 0;
      for (let t = to - 1; t >= from; t--) {
        const e = byCell[t];
        const v = 1 / (1 + next[t] + suffix);
        suffix += term[e];
        // Damped (geometric mean of old and new; each root taken apart so that tiny messages do not
        // underflow) once an undamped sweep has failed to shrink the change.
        const value = damped ? Math.sqrt(c[e]) * Math.sqrt(v) : v;
        const rel = Math.abs(value - c[e]) / c[e];
        if (rel > change) change = rel;
        c[e] = value;
      }
    }
    if (change > lastChange) damped = true;
    lastChange = change;
  }
  return { w, c };
}

/** r_ik = 1 / (1 + sum_{l != k} W_il c_il) for every pair, into r (term is scratch space). */
function pointMessages(w: Float64Array, c: Float64Array, r: Float64Array, term: Float64Array, rowStart: Int32Array, points: number): void {
  for (let j = 0; j < w.length; j++) term[j] = w[j] * c[j];
  for (let i = 0; i < points; i++) {
    const from = rowStart[i], to = rowStart[i + 1];
    let prefix = 0;
    for (let j = from; j < to; j++) {
      r[j] = prefix; // the prefix sum for now
      prefix += term[j];
    }
    let suffix = 0;
    for (let j = to - 1; j >= from; j--) {
      const t = term[j];
      r[j] = 1 / (1 + r[j] + suffix);
      suffix += t;
    }
  }
}
