/**
 * Covariance-weighted hit scoring of a pose hypothesis, each template cell
 * counted at most once (truncated quadratic loss of MSAC; Torr & Zisserman
 * 2000, eq. 7, with the squared Mahalanobis distance as the residual).
 *
 * For a map T (sample -> template) and points x_i, the residual of cell k is
 *
 *   e_k^2 = min_i (T x_i - mu_k)^T S_k^-1 (T x_i - mu_k)
 *
 * (the nearest point under the cell's own predictive covariance S_k). The
 * score rewards each cell by the truncated quadratic
 *
 *   score(T) = sum_k max(0, 1 - e_k^2 / nu^2)
 *
 * which is MSAC's cost sum_k min(e_k^2, nu^2) turned into a reward and divided
 * by nu^2 (so that score <= K). Cell k is a hit when e_k < nu. Counting each
 * cell once matters: with a per-point score, a pose slightly too small lands
 * outliers on the cells left empty by missing data and scores higher than the
 * true pose.
 */
import type { CellGrid } from './cell-grid.js';
import { voxelOf } from './cell-grid.js';
import type { CellModel } from './cell-model.js';

/** An affine map y = A x + t with A flattened row-major (d*d) and t (d). */
export interface FlatAffine {
  readonly a: Float64Array;
  readonly t: Float64Array;
}

export interface ScoreSummary {
  readonly score: number;
  readonly hits: number;
}

/** Holds the sample points and scratch buffers; `score` is allocation-free. */
export class HitScorer {
  readonly model: CellModel;
  readonly grid: CellGrid;
  readonly radius: number;
  readonly points: Float64Array;
  readonly count: number;
  /** Per cell: best squared distance and the point achieving it, from the last `score` call. */
  readonly best: Float64Array;
  readonly bestPoint: Int32Array;
  private readonly y: Float64Array;
  private readonly touched: Int32Array;
  private touchedCount = 0;

  constructor(model: CellModel, grid: CellGrid, points: readonly (readonly number[])[], radius: number) {
    this.model = model;
    this.grid = grid;
    this.radius = radius;
    const d = model.dim;
    this.count = points.length;
    this.points = new Float64Array(points.length * d);
    points.forEach((p, i) => {
      for (let a = 0; a < d; a++) this.points[i * d + a] = p[a];
    });
    this.best = new Float64Array(model.size).fill(Infinity);
    this.bestPoint = new Int32Array(model.size).fill(-1);
    this.y = new Float64Array(d);
    this.touched = new Int32Array(model.size);
  }

  /** Score the map T (sample -> template); fills `best` / `bestPoint`. */
  score(map: FlatAffine): ScoreSummary {
    const { model, grid, points, best, bestPoint, y } = this;
    const d = model.dim;
    const r2 = this.radius * this.radius;
    for (let j = 0; j < this.touchedCount; j++) {
      const k = this.touched[j];
      best[k] = Infinity;
      bestPoint[k] = -1;
    }
    this.touchedCount = 0;
    const A = map.a, t = map.t;
    const means = model.means, prec = model.precisions;
    const offsets = grid.offsets, cells = grid.cells;
    for (let i = 0; i < this.count; i++) {
      const o = i * d;
      for (let a = 0; a < d; a++) {
        let s = t[a];
        for (let b = 0; b < d; b++) s += A[a * d + b] * points[o + b];
        y[a] = s;
      }
      const v = voxelOf(grid, y);
      if (v < 0) continue;
      for (let c = offsets[v]; c < offsets[v + 1]; c++) {
        const k = cells[c];
        let e2: number;
        if (d === 3) {
          const mo = k * 3, po = k * 9;
          const p0 = y[0] - means[mo], p1 = y[1] - means[mo + 1], p2 = y[2] - means[mo + 2];
          e2 =
            p0 * (prec[po] * p0 + prec[po + 1] * p1 + prec[po + 2] * p2) +
            p1 * (prec[po + 3] * p0 + prec[po + 4] * p1 + prec[po + 5] * p2) +
            p2 * (prec[po + 6] * p0 + prec[po + 7] * p1 + prec[po + 8] * p2);
        } else {
          e2 = 0;
          const mo = k * d, po = k * d * d;
          for (let a = 0; a < d; a++) {
            let r = 0;
            for (let b = 0; b < d; b++) r += prec[po + a * d + b] * (y[b] - means[mo + b]);
            e2 += (y[a] - means[mo + a]) * r;
          }
        }
        if (e2 < r2 && e2 < best[k]) {
          if (bestPoint[k] < 0) this.touched[this.touchedCount++] = k;
          best[k] = e2;
          bestPoint[k] = i;
        }
      }
    }
    let score = 0;
    for (let j = 0; j < this.touchedCount; j++) score += 1 - best[this.touched[j]] / r2;
    return { score, hits: this.touchedCount };
  }

  /** The hit pairs (cell, point) of the last `score` call, by cell index. */
  hitPairs(): { cell: number; point: number; distanceSquared: number }[] {
    const out: { cell: number; point: number; distanceSquared: number }[] = [];
    for (let j = 0; j < this.touchedCount; j++) {
      const k = this.touched[j];
      out.push({ cell: k, point: this.bestPoint[k], distanceSquared: this.best[k] });
    }
    out.sort((a, b) => a.cell - b.cell);
    return out;
  }
}
