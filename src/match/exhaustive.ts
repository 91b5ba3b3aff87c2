/**
 * Exhaustive hypothesis enumeration for problems small enough to try every
 * minimal set: 1-D layouts (cells along a line) and tiny 2-D / 3-D ones.
 *
 * 1-D: every point-cell pair (i, k) fixes the translation of a map at the
 * template's scale, x -> x + (mu_k - x_i); when points and cells number at
 * most `pairLimit1d` each, every two pairs (i, k), (j, l) with i < j and
 * mu_l - mu_k of the same sign as x_j - x_i additionally fix the scale,
 * x -> mu_k + s (x - x_i), s = (mu_l - mu_k) / (x_j - x_i). Reflections are
 * excluded (s > 0).
 * 2-D / 3-D: every set of D points (in index order; D points in general
 * position fix a similarity) with every ordered choice of D distinct cells
 * whose distances agree (the consistency test of ransac.ts), fitted
 * template -> sample and inverted.
 *
 * Every hypothesis is handed to `visit`, so the best one under the caller's
 * score is found exactly among all minimal sets.
 */
import type { Points, Transform } from '../types.js';
import type { Plausibility } from './affine-flat.js';
import type { CellModel } from './cell-model.js';
import { fitPairs, type Pair } from './ransac.js';

/** True when `exhaustiveHypotheses` can enumerate everything within budget. */
export function isTinyProblem(dim: number, points: number, cells: number): boolean {
  if (dim === 1) return true;
  return points <= 8 && cells <= 8;
}

/** Enumerate all hypotheses; returns how many were visited. */
export function exhaustiveHypotheses(
  model: CellModel,
  points: Points,
  limits: Plausibility,
  visit: (t: Transform) => void,
  pairLimit1d = 30,
): number {
  const d = model.dim, K = model.size, n = points.length;
  let count = 0;
  if (d === 1) {
    for (let i = 0; i < n; i++)
      for (let k = 0; k < K; k++) {
        count++;
        visit({ kind: 'similarity', linear: [[1]], translation: [model.means[k] - points[i][0]] });
      }
    if (n <= pairLimit1d && K <= pairLimit1d) {
      for (let i = 0; i < n; i++)
        for (let j = i + 1; j < n; j++) {
          const dx = points[j][0] - points[i][0];
          if (dx === 0) continue;
          for (let k = 0; k < K; k++)
            for (let l = 0; l < K; l++) {
              if (l === k) continue;
              const s = (model.means[l] - model.means[k]) / dx;
              if (!(s >= limits.scaleRange[0] && s <= limits.scaleRange[1])) continue;
              count++;
              visit({ kind: 'similarity', linear: [[s]], translation: [model.means[k] - s * points[i][0]] });
            }
        }
    }
    return count;
  }
  const m = Math.max(2, d);
  if (n < m || K < m) return 0;
  const chosen: Pair[] = [];
  const dist = (p: readonly number[], q: readonly number[]): number => {
    let s = 0;
    for (let a = 0; a < d; a++) s += (p[a] - q[a]) ** 2;
    return Math.sqrt(s);
  };
  const consistent = (pair: Pair): boolean => {
    for (const q of chosen) {
      if (q.cell === pair.cell) return false;
      const dx = dist(points[q.point], points[pair.point]);
      const dm = dist(model.meanRows[q.cell], model.meanRows[pair.cell]);
      const tol = 2.5 * Math.sqrt(model.isoVar[q.cell] + model.isoVar[pair.cell]);
      if (dm < limits.scaleRange[0] * dx - tol || dm > limits.scaleRange[1] * dx + tol) return false;
    }
    return true;
  };
  const recurse = (fromPoint: number): void => {
    if (chosen.length === m) {
      const t = fitPairs(model, points, chosen, 'similarity', limits);
      count++;
      if (t) visit(t);
      return;
    }
    for (let i = fromPoint; i <= n - (m - chosen.length); i++)
      for (let k = 0; k < K; k++) {
        const pair = { point: i, cell: k };
        if (!consistent(pair)) continue;
        chosen.push(pair);
        recurse(i + 1);
        chosen.pop();
      }
  };
  recurse(0);
  return count;
}
