/**
 * Bend correction along the template's long axis, after the pose (similarity or affine).
 *
 * An elongated head bends: points are displaced across the long axis by an
 * amount that grows with the distance along it. The pose cannot follow that;
 * a displacement quadratic in the long-axis coordinate can. With u the
 * template's long axis (unit), c its centroid, L its half-length and v_j the
 * directions across it (in 3-D the template's other two principal axes), each
 * point y (template frame) gets
 *
 *   s = u . (y - c) / L,     y <- y + (s^2 - <s^2>) sum_j q_j v_j,
 *
 * <s^2> the mean of s^2 over the sample's points, so that the correction
 * moves the points' centroid by nothing (the pose keeps the translation).
 * The curvatures q_j (um) maximise the objective the matcher passes, the
 * points' likelihood L of softassign.ts (a sum over labellings), by compass
 * search (Kolda, Lewis & Torczon 2003, SIAM Review 45(3)): steps of half a
 * cell spacing, halved when no move along +-q_j gains, until a sixteenth of a
 * spacing or BEND_EVALUATIONS evaluations.
 *
 * The correction is kept only when its gain in the objective exceeds the
 * Bayesian information criterion's penalty, (k / 2) ln n for its k = d - 1
 * parameters and n points (Schwarz 1978, Annals of Statistics 6(2)): 5.2
 * nats for 190 points in 3-D.
 *
 * Until December 2026 the displacement had 3d coefficients (a + b s + q s^2
 * in every direction) fitted by least squares on the points' posterior-
 * expected cell positions. Where per-cell jitter is as large as the cell
 * spacing those expectations average over many cells and shrink the residuals
 * towards zero, so the fit recovered little of a bend: at the pose fitted on
 * the true pairs it left the suite's ganglia case at 0.958 of the oracle;
 * the curvature maximising L reaches 0.980 there (docs/algorithms.md, "Bend
 * correction").
 */
import type { Points } from '../types.js';

/** Objective evaluations of the compass search over the curvatures. */
export const BEND_EVALUATIONS = 20;

/** The long axis the bend is measured along, the directions it may take, and the search's length scale. */
export interface BendAxis {
  /** Unit vector u along the long axis. */
  readonly axis: readonly number[];
  readonly centroid: readonly number[];
  /** Half-length L (> 0). */
  readonly halfLength: number;
  /** Unit directions v_j across the long axis the bend may take. */
  readonly across: readonly (readonly number[])[];
  /** Length scale of the search steps (the template's cell spacing, > 0). */
  readonly spacing: number;
}

/** s = u . (y - c) / L. */
function axialCoordinate(y: ArrayLike<number>, axis: BendAxis): number {
  let s = 0;
  for (let a = 0; a < axis.axis.length; a++) s += (y[a] - axis.centroid[a]) * axis.axis[a];
  return s / axis.halfLength;
}

/** Each point moved by (s^2 - <s^2>) sum_j q_j v_j, <s^2> over these points (new arrays). */
export function applyBend(points: Points, curvatures: readonly number[], axis: BendAxis): number[][] {
  const s2 = points.map((y) => axialCoordinate(y, axis) ** 2);
  const mean = s2.reduce((a, b) => a + b, 0) / Math.max(1, s2.length);
  const direction = axis.axis.map((_, a) => axis.across.reduce((acc, v, j) => acc + curvatures[j] * v[a], 0));
  return points.map((y, i) => Array.from(y, (v, a) => v + (s2[i] - mean) * direction[a]));
}

export interface BendResult {
  /** The corrected points when the correction was kept, else the input points. */
  readonly mapped: number[][];
  /** Whether the correction was kept (its gain exceeded the penalty). */
  readonly applied: boolean;
  /** The curvatures q_j found (kept or not). */
  readonly curvatures: number[];
  /** Objective gained over the uncorrected points (0 when no step improved it). */
  readonly gain: number;
  /** The penalty the gain had to exceed, nats. */
  readonly penalty: number;
}

/**
 * Compass search over the curvatures on `objective` (see the module
 * comment); keeps the result when the gain exceeds the BIC penalty
 * ((d - 1) / 2) ln n. The points are those already mapped by the pose
 * (template frame).
 */
export function correctBend(objective: (mapped: Points) => number, mapped: Points, axis: BendAxis, evaluations = BEND_EVALUATIONS): BendResult {
  const k = axis.across.length;
  const n = mapped.length;
  const penalty = 0.5 * k * Math.log(Math.max(2, n));
  const start = mapped.map((p) => Array.from(p));
  const none = new Array<number>(k).fill(0);
  if (!(axis.halfLength > 0) || !(axis.spacing > 0) || k === 0 || n < 2 * (k + 1)) return { mapped: start, applied: false, curvatures: none, gain: 0, penalty };
  const initial = objective(start);
  let best = initial;
  let q = none.slice();
  let step = axis.spacing / 2;
  let used = 0;
  while (step >= axis.spacing / 16 && used < evaluations) {
    let moved = false;
    for (let j = 0; j < k && !moved && used < evaluations; j++)
      for (const sign of [1, -1]) {
        if (used >= evaluations) break;
        const trial = q.slice();
        trial[j] += sign * step;
        const value = objective(applyBend(start, trial, axis));
        used++;
        if (value > best) {
          best = value;
          q = trial;
          moved = true;
          break;
        }
      }
    if (!moved) step /= 2;
  }
  const gain = best - initial;
  return gain > penalty ? { mapped: applyBend(start, q, axis), applied: true, curvatures: q, gain, penalty } : { mapped: start, applied: false, curvatures: q, gain, penalty };
}
