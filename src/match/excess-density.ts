/**
 * Where outliers crowd: the excess of a sample's local point count over what
 * the template predicts there, turned into a local outlier intensity
 * (docs/algorithms.md, "Clustered outliers").
 *
 * The matching model (softassign.ts) spreads outliers uniformly over the
 * sample's bounding box. A dense clump of bright spots beside the head breaks
 * that: under a uniform intensity each clump point is so improbable as an
 * outlier that labelling it as a nearby cell pays, and a pose that reaches
 * for the clump scores higher than the true one. Crowding (crowding.ts)
 * cannot see such a clump when the head's own ganglia are as dense as it; the
 * template can, once a pose is known: the clump lies where no cell is.
 *
 * At a pose T (y_i = T x_i, Jacobian J), with r = 2 cell spacings and V_r the
 * volume of the ball of radius r (template frame):
 *
 *   n_i = #{ j != i : |y_j - y_i| < r }                       (observed)
 *   e_i = rho V_r sum_k N(y_i; mu_k, S_k + r^2 / (d + 2) I)
 *         + Lambda u V_r / J                                    (expected)
 *
 * e_i approximates the expected number of points within r of y_i: each cell's
 * probability of landing in the ball is its Gaussian averaged over the ball,
 * here replaced by the Gaussian widened by the ball's own second moment per
 * axis, r^2 / (d + 2) (our moment-matching approximation, not a published
 * formula), plus the uniform outliers. The excess over a Poisson allowance,
 *
 *   x_i = n_i - e_i - Z sqrt(e_i + 1),
 *
 * when positive, is read as outliers crowding at y_i with intensity
 * x_i J / V_r per unit of sample volume on top of the uniform Lambda u; the
 * point's outlier intensity then rises by the factor
 *
 *   exp(delta_i) = 1 + x_i J / (V_r Lambda u),
 *
 * and delta_i >= 0 is what pairGains subtracts from the point's pair gains.
 * Points not in excess get delta_i = 0, so the model is unchanged wherever the
 * sample looks like the template.
 */
import { logDeterminant, precisionMatrix } from '../geometry/index.js';
import type { Points } from '../types.js';
import type { CellModel } from './cell-model.js';
import type { MatchModelParameters } from './softassign.js';

/** Radius of the local counts in cell spacings. */
export const EXCESS_RADIUS_SPACINGS = 2;
/** Poisson allowance: counts within Z sqrt(e + 1) of their expectation are not an excess. */
export const EXCESS_ALLOWANCE_Z = 3;

/** Per cell, the precision of S_k + r^2 / (d + 2) I and the log of its normalising constant: the template's part of e_i. */
export interface WidenedCells {
  readonly radius: number;
  readonly precisions: Float64Array;
  readonly logNorm: Float64Array;
}

/** The widened cells of a template whose typical nearest-neighbour distance is `spacing` (computed once per template). */
export function widenedCells(model: CellModel, spacing: number): WidenedCells {
  const d = model.dim;
  const K = model.size;
  const radius = EXCESS_RADIUS_SPACINGS * spacing;
  const widen = (radius * radius) / (d + 2);
  const precisions = new Float64Array(K * d * d);
  const logNorm = new Float64Array(K);
  for (let k = 0; k < K; k++) {
    const wide = model.covariances[k].map((row, a) => row.map((v, b) => v + (a === b ? widen : 0)));
    const p = precisionMatrix(wide);
    for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) precisions[k * d * d + a * d + b] = p[a][b];
    logNorm[k] = -0.5 * d * Math.log(2 * Math.PI) - 0.5 * logDeterminant(wide);
  }
  return { radius, precisions, logNorm };
}

/**
 * delta_i for every mapped point (see the module comment). `spacing` is the
 * template's typical nearest-neighbour distance; `jacobian` |det| of the
 * sample -> template map; `params` gives rho, Lambda and u; `cells` the
 * template's widened cells, when the caller keeps them (widenedCells).
 */
export function outlierExcess(
  model: CellModel,
  spacing: number,
  mapped: Points,
  jacobian: number,
  params: MatchModelParameters,
  cells: WidenedCells = widenedCells(model, spacing),
): Float64Array {
  const d = model.dim;
  const n = mapped.length;
  const K = model.size;
  const { radius: r, precisions, logNorm } = cells;
  const r2 = r * r;
  const ballVolume = d === 3 ? (4 / 3) * Math.PI * r * r2 : d === 2 ? Math.PI * r2 : 2 * r;
  const uniform = params.outliers * params.outlierDensity;
  const out = new Float64Array(n);
  const diff = new Float64Array(d);
  for (let i = 0; i < n; i++) {
    const y = mapped[i];
    let count = 0;
    for (let j = 0; j < n; j++) {
      if (j === i) continue;
      let s = 0;
      for (let a = 0; a < d; a++) s += (mapped[j][a] - y[a]) ** 2;
      if (s < r2) count++;
    }
    let density = 0;
    for (let k = 0; k < K; k++) {
      for (let a = 0; a < d; a++) diff[a] = y[a] - model.means[k * d + a];
      let q = 0;
      const o = k * d * d;
      for (let a = 0; a < d; a++) {
        let row = 0;
        for (let b = 0; b < d; b++) row += precisions[o + a * d + b] * diff[b];
        q += diff[a] * row;
      }
      // Beyond 9 standard deviations a cell adds less than e^-40 of its peak: nothing.
      if (q < 80) density += Math.exp(logNorm[k] - 0.5 * q);
    }
    const expected = params.detection * ballVolume * density + (uniform * ballVolume) / jacobian;
    const excess = count - expected - EXCESS_ALLOWANCE_Z * Math.sqrt(expected + 1);
    if (excess > 0) out[i] = Math.log1p((excess * jacobian) / (ballVolume * uniform));
  }
  return out;
}
