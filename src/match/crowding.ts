/**
 * Crowded points: detections packed more densely than any part of the
 * template can produce, such as a clump of bright spots beside the head
 * (structured outliers; ../../docs/algorithms.md, "Crowded points").
 *
 * The statistic of a point i of a point set P is its crowding
 *
 *   c(i) = #{ j != i : |p_j - p_i| < 2 h(P) },
 *
 * h(P) the median nearest-neighbour distance of P. Measuring the radius in the
 * set's own spacing makes c free of the set's scale and, to first order, of
 * the share of cells detected. A one-to-one match allows at most one point per
 * cell, so where c(i) exceeds what the template's cells ever reach, some of
 * the points around i must be outliers. The reference is the largest c over
 * pseudo-animals drawn from the template's Gaussians (every cell kept with
 * probability 0.85, positions from N(mu_k, S_k) independently); real nuclei do
 * not overlap and are less crowded than independent draws, so the reference
 * errs towards flagging too little.
 *
 * The matcher uses the flags only to leave crowded points out of the pose
 * search (a clump laid onto a dense part of the template can outscore the
 * true pose there); every later stage scores all points.
 */
import type { Rng } from '../random.js';
import { cholesky } from '../geometry/index.js';
import type { Points } from '../types.js';
import { drawPseudoAnimal, type CellModel } from './cell-model.js';

/** Pseudo-animals drawn for the reference. */
const PSEUDO_ANIMALS = 8;
/** Radius of the crowding count in units of the set's median nearest-neighbour distance. */
const RADIUS_IN_SPACINGS = 2;

/** Crowding c(i) of every point (see the module comment). */
export function crowding(points: Points): Int32Array {
  const n = points.length;
  const out = new Int32Array(n);
  if (n < 2) return out;
  const d = points[0].length;
  const dist2 = new Float64Array(n * n);
  const nearest = new Float64Array(n).fill(Infinity);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let a = 0; a < d; a++) s += (points[i][a] - points[j][a]) ** 2;
      dist2[i * n + j] = dist2[j * n + i] = s;
      if (s < nearest[i]) nearest[i] = s;
      if (s < nearest[j]) nearest[j] = s;
    }
  const sorted = Float64Array.from(nearest).sort();
  const h2 = sorted[Math.floor((n - 1) / 2)];
  const r2 = RADIUS_IN_SPACINGS * RADIUS_IN_SPACINGS * h2;
  for (let i = 0; i < n; i++) {
    let c = 0;
    for (let j = 0; j < n; j++) if (j !== i && dist2[i * n + j] < r2) c++;
    out[i] = c;
  }
  return out;
}

/** The largest crowding of a cell over pseudo-animals drawn from the template's Gaussians (cell-model.ts, drawPseudoAnimal). */
export function crowdingLimit(model: CellModel, rng: Rng): number {
  const factors = model.covariances.map((s) => cholesky(s));
  let limit = 0;
  for (let rep = 0; rep < PSEUDO_ANIMALS; rep++) {
    for (const c of crowding(drawPseudoAnimal(model, factors, rng).points)) limit = Math.max(limit, c);
  }
  return limit;
}

/** Points whose crowding exceeds the template's limit. */
export function crowdedPoints(points: Points, limit: number): boolean[] {
  return Array.from(crowding(points), (c) => c > limit);
}
