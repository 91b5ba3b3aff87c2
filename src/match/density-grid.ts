/**
 * The template as a density: the equal-weight mixture of the cells'
 * predictive Gaussians,
 *
 *   f(y) = (1/K) sum_k N(y; mu_k, S_k),
 *
 * tabulated once on a regular grid (voxel edge h, tabulated out to 3.5
 * standard deviations beyond every cell) and read back by multilinear
 * interpolation, so that the likelihood of a whole pose hypothesis costs one
 * table lookup per point.
 *
 * The pose likelihood (MLESAC: Torr & Zisserman 2000, eq. 9, with the
 * template's Gaussians as the inlier model) of sample points x_i under a map
 * y = A x + t (sample -> template) is, in the sample's own frame,
 *
 *   L(A, t) = sum_i log( (1 - pi_0) |det A| f(A x_i + t) + pi_0 u )
 *
 * with outlier share pi_0 and a uniform outlier density u = 1 / V over the
 * sample's bounding box V along its principal axes (boundingVolume). The
 * Jacobian |det A| makes the likelihood a density
 * of the sample's points, so that shrinking the sample into the dense centre
 * of the template is not rewarded.
 */
import type { CellModel } from './cell-model.js';
import { sampleCovariance, symmetricEigen, zeros } from '../geometry/index.js';
import type { Points } from '../types.js';
import type { FlatAffine } from './affine-flat.js';

export interface DensityGrid {
  readonly dim: number;
  readonly origin: Float64Array;
  readonly voxel: number;
  readonly shape: Int32Array;
  /** Row-major (last axis fastest) values of f at the grid nodes. */
  readonly values: Float64Array;
  readonly strides: Int32Array;
}

/**
 * Tabulate f. `voxel` defaults to 0.75 x the smallest per-cell standard deviation
 * (bounded below so the grid holds at most about 2 million nodes).
 */
export function buildDensityGrid(model: CellModel, voxel?: number): DensityGrid {
  const d = model.dim, K = model.size;
  const lo = new Float64Array(d).fill(Infinity), hi = new Float64Array(d).fill(-Infinity);
  let minStd = Infinity;
  const reach = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    reach[k] = 3.5 * model.maxStd[k];
    const sMin = Math.sqrt(1 / Math.max(...diagonalPrecisionBound(model, k)));
    minStd = Math.min(minStd, sMin);
    for (let a = 0; a < d; a++) {
      lo[a] = Math.min(lo[a], model.means[k * d + a] - reach[k]);
      hi[a] = Math.max(hi[a], model.means[k * d + a] + reach[k]);
    }
  }
  let h = voxel ?? Math.max(1e-9, 0.75 * minStd);
  let volume = 1;
  for (let a = 0; a < d; a++) volume *= hi[a] - lo[a];
  const maxNodes = 2e6;
  if (volume / Math.pow(h, d) > maxNodes) h = Math.pow(volume / maxNodes, 1 / d);
  const shape = new Int32Array(d);
  let total = 1;
  for (let a = 0; a < d; a++) {
    shape[a] = Math.floor((hi[a] - lo[a]) / h) + 2;
    total *= shape[a];
  }
  const strides = new Int32Array(d);
  let st = 1;
  for (let a = d - 1; a >= 0; a--) {
    strides[a] = st;
    st *= shape[a];
  }
  const values = new Float64Array(total);
  const y = new Float64Array(d);
  const idx = new Int32Array(d), from = new Int32Array(d), to = new Int32Array(d);
  for (let k = 0; k < K; k++) {
    const norm = Math.exp(-0.5 * (d * Math.log(2 * Math.PI) + model.logDets[k])) / K;
    for (let a = 0; a < d; a++) {
      const m = model.means[k * d + a];
      from[a] = Math.max(0, Math.ceil((m - reach[k] - lo[a]) / h));
      to[a] = Math.min(shape[a] - 1, Math.floor((m + reach[k] - lo[a]) / h));
      idx[a] = from[a];
    }
    const po = k * d * d, mo = k * d;
    if (d === 3) {
      fillCell3(values, model.precisions, po, model.means, mo, lo, h, strides, from, to, norm);
      continue;
    }
    for (;;) {
      let flat = 0;
      for (let a = 0; a < d; a++) {
        y[a] = lo[a] + idx[a] * h - model.means[mo + a];
        flat += idx[a] * strides[a];
      }
      let e2 = 0;
      for (let a = 0; a < d; a++) {
        let r = 0;
        for (let b = 0; b < d; b++) r += model.precisions[po + a * d + b] * y[b];
        e2 += y[a] * r;
      }
      if (e2 < 12.25) values[flat] += norm * Math.exp(-0.5 * e2);
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
  return { dim: d, origin: lo, voxel: h, shape, values, strides };
}

/**
 * The 3-D case of the loop above, the same sums in the same order (so the
 * same table), visiting along the last axis only the nodes whose e2 can be
 * below 12.25: for fixed first two coordinates e2 is the quadratic
 * P22 y2^2 + 2 c y2 + e0 in y2, and the nodes outside its root interval
 * (widened by a relative 1e-9 and one node each side) are skipped.
 */
function fillCell3(
  values: Float64Array,
  prec: Float64Array,
  po: number,
  means: Float64Array,
  mo: number,
  lo: Float64Array,
  h: number,
  strides: Int32Array,
  from: Int32Array,
  to: Int32Array,
  norm: number,
): void {
  const p00 = prec[po], p01 = prec[po + 1], p02 = prec[po + 2];
  const p10 = prec[po + 3], p11 = prec[po + 4], p12 = prec[po + 5];
  const p20 = prec[po + 6], p21 = prec[po + 7], p22 = prec[po + 8];
  const m0 = means[mo], m1 = means[mo + 1], m2 = means[mo + 2];
  const s0 = strides[0], s1 = strides[1], s2 = strides[2];
  for (let i0 = from[0]; i0 <= to[0]; i0++) {
    const y0 = lo[0] + i0 * h - m0;
    for (let i1 = from[1]; i1 <= to[1]; i1++) {
      const y1 = lo[1] + i1 * h - m1;
      // e2(y2) = p22 y2^2 + (p02 + p20) y0 y2 + (p12 + p21) y1 y2 + e0.
      const bq = ((p02 + p20) * y0 + (p12 + p21) * y1) / 2;
      const e0 = p00 * y0 * y0 + (p01 + p10) * y0 * y1 + p11 * y1 * y1;
      const disc = bq * bq - p22 * (e0 - 12.25 * (1 + 1e-9));
      if (!(disc >= 0)) continue;
      const root = Math.sqrt(disc);
      const yLo = (-bq - root) / p22, yHi = (-bq + root) / p22;
      const a2 = Math.max(from[2], Math.floor((yLo + m2 - lo[2]) / h) - 1);
      const b2 = Math.min(to[2], Math.ceil((yHi + m2 - lo[2]) / h) + 1);
      const base = i0 * s0 + i1 * s1;
      for (let i2 = a2; i2 <= b2; i2++) {
        const y2 = lo[2] + i2 * h - m2;
        const r0 = p00 * y0 + p01 * y1 + p02 * y2;
        const r1 = p10 * y0 + p11 * y1 + p12 * y2;
        const r2 = p20 * y0 + p21 * y1 + p22 * y2;
        const e2 = y0 * r0 + y1 * r1 + y2 * r2;
        if (e2 < 12.25) values[base + i2 * s2] += norm * Math.exp(-0.5 * e2);
      }
    }
  }
}

/** 1 / diag(S_k^-1) entries, i.e. conditional variances; their min bounds the smallest spread from above. */
function diagonalPrecisionBound(model: CellModel, k: number): number[] {
  const d = model.dim;
  const out: number[] = [];
  for (let a = 0; a < d; a++) out.push(model.precisions[k * d * d + a * d + a]);
  return out;
}

/** f(y) by multilinear interpolation; 0 outside the grid. */
export function densityAt(grid: DensityGrid, y: ArrayLike<number>): number {
  const d = grid.dim;
  const h = grid.voxel;
  if (d === 3) {
    const fx = (y[0] - grid.origin[0]) / h, fy = (y[1] - grid.origin[1]) / h, fz = (y[2] - grid.origin[2]) / h;
    const ix = Math.floor(fx), iy = Math.floor(fy), iz = Math.floor(fz);
    if (ix < 0 || iy < 0 || iz < 0 || ix >= grid.shape[0] - 1 || iy >= grid.shape[1] - 1 || iz >= grid.shape[2] - 1) return 0;
    const tx = fx - ix, ty = fy - iy, tz = fz - iz;
    const sx = grid.strides[0], sy = grid.strides[1];
    const v = grid.values;
    const o = ix * sx + iy * sy + iz;
    const c00 = v[o] * (1 - tz) + v[o + 1] * tz;
    const c01 = v[o + sy] * (1 - tz) + v[o + sy + 1] * tz;
    const c10 = v[o + sx] * (1 - tz) + v[o + sx + 1] * tz;
    const c11 = v[o + sx + sy] * (1 - tz) + v[o + sx + sy + 1] * tz;
    return (c00 * (1 - ty) + c01 * ty) * (1 - tx) + (c10 * (1 - ty) + c11 * ty) * tx;
  }
  const base = new Int32Array(d), frac = new Float64Array(d);
  for (let a = 0; a < d; a++) {
    const f = (y[a] - grid.origin[a]) / h;
    const i = Math.floor(f);
    if (i < 0 || i >= grid.shape[a] - 1) return 0;
    base[a] = i;
    frac[a] = f - i;
  }
  let s = 0;
  for (let corner = 0; corner < 1 << d; corner++) {
    let w = 1, flat = 0;
    for (let a = 0; a < d; a++) {
      const bit = (corner >> a) & 1;
      w *= bit ? frac[a] : 1 - frac[a];
      flat += (base[a] + bit) * grid.strides[a];
    }
    s += w * grid.values[flat];
  }
  return s;
}

/** Evaluates L(A, t) for one sample; allocation-free per call. */
export class MixtureScorer {
  readonly grid: DensityGrid;
  readonly points: Float64Array;
  readonly count: number;
  readonly dim: number;
  readonly outlierShare: number;
  readonly outlierDensity: number;
  private readonly y: Float64Array;

  constructor(grid: DensityGrid, points: readonly (readonly number[])[], outlierShare: number) {
    this.grid = grid;
    this.dim = grid.dim;
    this.count = points.length;
    this.points = new Float64Array(points.length * this.dim);
    points.forEach((p, i) => {
      for (let a = 0; a < this.dim; a++) this.points[i * this.dim + a] = p[a];
    });
    this.outlierShare = outlierShare;
    this.outlierDensity = 1 / boundingVolume(points);
    this.y = new Float64Array(this.dim);
  }

  /** L(A, t) and the number of points more likely cell than outlier. */
  score(map: FlatAffine): { score: number; hits: number } {
    const d = this.dim, A = map.a, t = map.t, y = this.y, P = this.points;
    const jac = Math.abs(determinantFlat(A, d));
    const cIn = (1 - this.outlierShare) * jac;
    const cOut = this.outlierShare * this.outlierDensity;
    let total = 0, hits = 0;
    for (let i = 0; i < this.count; i++) {
      const o = i * d;
      for (let a = 0; a < d; a++) {
        let s = t[a];
        for (let b = 0; b < d; b++) s += A[a * d + b] * P[o + b];
        y[a] = s;
      }
      const inlier = cIn * densityAt(this.grid, y);
      if (inlier > cOut) hits++;
      total += Math.log(inlier + cOut);
    }
    return { score: total, hits };
  }
}

/**
 * Volume of the points' bounding box along their principal axes (the
 * eigenvectors of their covariance), each side at least 1e-6 of the largest:
 * the same whatever the sample's orientation.
 */
export function boundingVolume(points: Points): number {
  const d = points[0].length;
  // A single point has no spread: any axes do (the sides are then all 0 and floored below).
  const { vectors } = symmetricEigen(points.length >= 2 ? sampleCovariance(points) : zeros(d, d));
  const sides: number[] = [];
  for (let j = 0; j < d; j++) {
    let lo = Infinity, hi = -Infinity;
    for (const p of points) {
      let s = 0;
      for (let a = 0; a < d; a++) s += p[a] * vectors[a][j];
      lo = Math.min(lo, s);
      hi = Math.max(hi, s);
    }
    sides.push(hi - lo);
  }
  const big = Math.max(...sides, 1e-12);
  return sides.reduce((v, s) => v * Math.max(s, 1e-6 * big), 1);
}

export function determinantFlat(a: ArrayLike<number>, d: number): number {
  if (d === 1) return a[0];
  if (d === 2) return a[0] * a[3] - a[1] * a[2];
  return a[0] * (a[4] * a[8] - a[5] * a[7]) - a[1] * (a[3] * a[8] - a[5] * a[6]) + a[2] * (a[3] * a[7] - a[4] * a[6]);
}
