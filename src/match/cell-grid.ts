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
  /** Hit radius nu (Mahalanobis units) the grid was built for: lookups never miss a cell within it. */
  readonly radius: number;
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
  // (voxel, cell) entries in order of k, then a stable counting sort by voxel: each voxel's list
  // keeps ascending cell order.
  let entryVoxel = new Int32Array(1024), entryCell = new Int32Array(1024);
  let entries = 0;
  const push = (flat: number, k: number): void => {
    if (entries === entryVoxel.length) {
      const nv = new Int32Array(2 * entries), nc = new Int32Array(2 * entries);
      nv.set(entryVoxel);
      nc.set(entryCell);
      entryVoxel = nv;
      entryCell = nc;
    }
    entryVoxel[entries] = flat;
    entryCell[entries] = k;
    entries++;
  };
  const idx = new Int32Array(d);
  for (let k = 0; k < K; k++) {
    const r = reach[k];
    const from = new Int32Array(d), to = new Int32Array(d);
    for (let a = 0; a < d; a++) {
      const m = model.means[k * d + a];
      from[a] = Math.max(0, Math.floor((m - r - lo[a]) / h));
      to[a] = Math.min(shape[a] - 1, Math.floor((m + r - lo[a]) / h));
    }
    const limit = radius + halfDiagonal / minStd[k];
    if (d === 3) {
      listCell3(model, k, lo, h, shape, from, to, r, limit, push);
      continue;
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
        if (e2 <= limit * limit) push(flat, k);
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
  for (let e = 0; e < entries; e++) offsets[entryVoxel[e] + 1]++;
  for (let v = 0; v < total; v++) offsets[v + 1] += offsets[v];
  const cells = new Int32Array(entries);
  const fill = offsets.slice(0, total);
  for (let e = 0; e < entries; e++) cells[fill[entryVoxel[e]]++] = entryCell[e];
  return { dim: d, radius, origin: lo, voxel: h, shape, offsets, cells };
}

/**
 * The 3-D case of buildCellGrid's voxel loop: the same tests with the same
 * sums in the same order (so the same lists), visiting along the last axis
 * only voxels whose centre can pass the Mahalanobis test (root interval of
 * the quadratic in the last coordinate, widened by a relative 1e-9 and one
 * voxel each side).
 */
function listCell3(
  model: CellModel,
  k: number,
  lo: Float64Array,
  h: number,
  shape: Int32Array,
  from: Int32Array,
  to: Int32Array,
  r: number,
  limit: number,
  push: (flat: number, k: number) => void,
): void {
  const P = model.precisions, po = k * 9, mo = k * 3;
  const m0 = model.means[mo], m1 = model.means[mo + 1], m2 = model.means[mo + 2];
  const p00 = P[po], p01 = P[po + 1], p02 = P[po + 2], p10 = P[po + 3], p11 = P[po + 4], p12 = P[po + 5], p20 = P[po + 6], p21 = P[po + 7], p22 = P[po + 8];
  const lim2 = limit * limit;
  const gapOf = (m: number, b0: number): number => {
    const b1 = b0 + h;
    return m < b0 ? b0 - m : m > b1 ? m - b1 : 0;
  };
  for (let i0 = from[0]; i0 <= to[0]; i0++) {
    const g0 = gapOf(m0, lo[0] + i0 * h);
    const c0 = lo[0] + (i0 + 0.5) * h - m0;
    for (let i1 = from[1]; i1 <= to[1]; i1++) {
      const g1 = gapOf(m1, lo[1] + i1 * h);
      const c1 = lo[1] + (i1 + 0.5) * h - m1;
      const bq = ((p02 + p20) * c0 + (p12 + p21) * c1) / 2;
      const e0 = p00 * c0 * c0 + (p01 + p10) * c0 * c1 + p11 * c1 * c1;
      const disc = bq * bq - p22 * (e0 - lim2 * (1 + 1e-9));
      if (!(disc >= 0)) continue;
      const root = Math.sqrt(disc);
      const yLo = (-bq - root) / p22, yHi = (-bq + root) / p22;
      const a2 = Math.max(from[2], Math.floor((yLo + m2 - lo[2]) / h - 0.5) - 1);
      const b2 = Math.min(to[2], Math.ceil((yHi + m2 - lo[2]) / h - 0.5) + 1);
      const row = (i0 * shape[1] + i1) * shape[2];
      for (let i2 = a2; i2 <= b2; i2++) {
        const g2 = gapOf(m2, lo[2] + i2 * h);
        let dist2 = 0;
        dist2 += g0 * g0;
        dist2 += g1 * g1;
        dist2 += g2 * g2;
        if (!(dist2 <= r * r)) continue;
        const c2 = lo[2] + (i2 + 0.5) * h - m2;
        const q0 = p00 * c0 + p01 * c1 + p02 * c2;
        const q1 = p10 * c0 + p11 * c1 + p12 * c2;
        const q2 = p20 * c0 + p21 * c1 + p22 * c2;
        const e2 = c0 * q0 + c1 * q1 + c2 * q2;
        if (e2 <= lim2) push(row + i2, k);
      }
    }
  }
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
