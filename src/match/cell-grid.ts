/**
 * A uniform voxel grid over the template cells for the pair-gain hot loop: each
 * voxel lists every cell whose hit region can reach into it, so that finding
 * the cells a transformed point may hit is one array lookup.
 *
 * Cell k's hit region {y : (y - mu_k)^T S_k^-1 (y - mu_k) < nu^2} lies inside
 * the ball of radius nu sqrt(lambda_max(S_k)) around mu_k; cell k is listed in
 * every voxel whose box is within that radius of mu_k (box-to-point distance,
 * Arvo 1990), so lookups never miss a hit. A general k-d tree (PointIndex)
 * answers the same question; the grid is used here only because the pair-gain
 * loop runs it hundreds of thousands of times per sample.
 */
import { symmetricEigen } from '../geometry/index.js';
import type { CellModel } from './cell-model.js';

export interface CellGrid {
  readonly dim: number;
  readonly origin: Float64Array;
  readonly voxel: number;
  readonly shape: Int32Array;
  /** Start offset of each voxel's list in `cells` (length voxels + 1). */
  readonly offsets: Int32Array;
  readonly cells: Int32Array;
}

/**
 * @param model the cell model
 * @param radius hit radius nu in Mahalanobis units (> 0)
 * @param voxel edge length of a voxel in template units (default: the median
 *   smallest standard deviation of the cells)
 *
 * A cell is listed in a voxel when the voxel's box lies within the ball of
 * radius nu sqrt(lambda_max) around its mean AND the voxel centre is within
 * Mahalanobis distance nu + (half voxel diagonal) / sqrt(lambda_min) of it
 * (both are necessary for any point of the box to be within nu).
 */
export function buildCellGrid(model: CellModel, radius: number, voxel?: number): CellGrid {
  const d = model.dim, K = model.size;
  const reach = new Float64Array(K);
  const minStd = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    reach[k] = radius * model.maxStd[k];
    const { values } = symmetricEigen(model.covariances[k]);
    minStd[k] = Math.sqrt(Math.max(1e-300, values[values.length - 1]));
  }
  const sortedMin = Array.from(minStd).sort((a, b) => a - b);
  const h = voxel ?? Math.max(1e-9, sortedMin[sortedMin.length >> 1]);
  const halfDiagonal = (h * Math.sqrt(d)) / 2;
  const lo = new Float64Array(d).fill(Infinity);
  const hi = new Float64Array(d).fill(-Infinity);
  for (let k = 0; k < K; k++)
    for (let a = 0; a < d; a++) {
      lo[a] = Math.min(lo[a], model.means[k * d + a] - reach[k]);
      hi[a] = Math.max(hi[a], model.means[k * d + a] + reach[k]);
    }
  const shape = new Int32Array(d);
  let total = 1;
  for (let a = 0; a < d; a++) {
    shape[a] = Math.max(1, Math.ceil((hi[a] - lo[a]) / h));
    total *= shape[a];
  }
  const lists: number[][] = Array.from({ length: total }, () => []);
  const idx = new Int32Array(d);
  for (let k = 0; k < K; k++) {
    const r = reach[k];
    const from = new Int32Array(d), to = new Int32Array(d);
    for (let a = 0; a < d; a++) {
      const m = model.means[k * d + a];
      from[a] = Math.max(0, Math.floor((m - r - lo[a]) / h));
      to[a] = Math.min(shape[a] - 1, Math.floor((m + r - lo[a]) / h));
    }
    // Iterate over the voxel box [from, to] and keep voxels within distance r.
    for (let a = 0; a < d; a++) idx[a] = from[a];
    for (;;) {
      let dist2 = 0, flat = 0;
      for (let a = 0; a < d; a++) {
        const m = model.means[k * d + a];
        const b0 = lo[a] + idx[a] * h, b1 = b0 + h;
        const gap = m < b0 ? b0 - m : m > b1 ? m - b1 : 0;
        dist2 += gap * gap;
        flat = flat * shape[a] + idx[a];
      }
      if (dist2 <= r * r) {
        let e2 = 0;
        for (let a = 0; a < d; a++) {
          let q = 0;
          for (let b = 0; b < d; b++) q += model.precisions[k * d * d + a * d + b] * (lo[b] + (idx[b] + 0.5) * h - model.means[k * d + b]);
          e2 += (lo[a] + (idx[a] + 0.5) * h - model.means[k * d + a]) * q;
        }
        const limit = radius + halfDiagonal / minStd[k];
        if (e2 <= limit * limit) lists[flat].push(k);
      }
      let a = d - 1;
      while (a >= 0) {
        idx[a]++;
        if (idx[a] <= to[a]) break;
        idx[a] = from[a];
        a--;
      }
      if (a < 0) break;
    }
  }
  const offsets = new Int32Array(total + 1);
  for (let v = 0; v < total; v++) offsets[v + 1] = offsets[v] + lists[v].length;
  const cells = new Int32Array(offsets[total]);
  for (let v = 0; v < total; v++) cells.set(lists[v], offsets[v]);
  return { dim: d, origin: lo, voxel: h, shape, offsets, cells };
}

/** Flat voxel index of y, or -1 when y lies outside the grid. */
export function voxelOf(grid: CellGrid, y: ArrayLike<number>): number {
  let flat = 0;
  for (let a = 0; a < grid.dim; a++) {
    const i = Math.floor((y[a] - grid.origin[a]) / grid.voxel);
    if (i < 0 || i >= grid.shape[a]) return -1;
    flat = flat * grid.shape[a] + i;
  }
  return flat;
}
