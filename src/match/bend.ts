/**
 * Bend correction along the template's long axis, after the pose (similarity or affine).
 *
 * An elongated head bends: points are displaced across the long axis by an
 * amount that grows with the distance along it. The affine pose cannot follow
 * that; a displacement quadratic in the long-axis coordinate can. With u the
 * template's long axis (unit), c its centroid and L its half-length, each
 * point y (template frame) gets
 *
 *   s = u . (y - c) / L,     y <- y + a + b s + q s^2      (a, b, q in R^d),
 *
 * 3d coefficients fitted by weighted least squares on the residuals
 * m_i - y_i between each point's posterior-expected cell position m_i and y_i
 * (the E-step of refine.ts), weights w_i the point's posterior mass of being
 * a cell (Myronenko & Song 2010, section 4, with this small displacement
 * basis in place of a kernel). a and b re-fit the translation and shear
 * along the axis jointly with the curvature q. E-step and fit alternate
 * while the E-step's objective grows; the matcher passes the points'
 * likelihood L of softassign.ts (a sum over labellings, not the best
 * labelling's gain, which rises with any extra freedom).
 *
 * The correction is kept only when its total gain in the objective exceeds
 * the Bayesian information criterion's penalty, (k / 2) ln n for k = 3d
 * extra parameters and n points (Schwarz 1978, Annals of Statistics 6(2)):
 * 23.6 nats for 190 points in 3-D.
 */
import { inverse } from '../geometry/index.js';
import { FitError } from '../errors.js';
import type { Points } from '../types.js';
import type { ExpectationStep } from './refine.js';

/** The long axis the bend is measured along: a unit axis, the centroid and the half-length (> 0). */
export interface BendAxis {
  readonly axis: readonly number[];
  readonly centroid: readonly number[];
  readonly halfLength: number;
}

/** Per coordinate a, the coefficients [a, b, q] of 1, s, s^2 (d rows of 3). */
export type BendCoefficients = number[][];

/** s = u . (y - c) / L. */
function axialCoordinate(y: ArrayLike<number>, axis: BendAxis): number {
  let s = 0;
  for (let a = 0; a < axis.axis.length; a++) s += (y[a] - axis.centroid[a]) * axis.axis[a];
  return s / axis.halfLength;
}

/**
 * Weighted least-squares fit of the displacement a + b s + q s^2 to the
 * residuals expected[i] - mapped[i] (points with a null expected position or
 * weight <= 0 are left out). Null when the normal equations are singular
 * (fewer than three distinct axial positions carry weight).
 */
export function fitBend(mapped: Points, expected: readonly (readonly number[] | null)[], weight: readonly number[], axis: BendAxis): BendCoefficients | null {
  const d = axis.axis.length;
  const normal = [
    [0, 0, 0],
    [0, 0, 0],
    [0, 0, 0],
  ];
  const rhs = Array.from({ length: d }, () => [0, 0, 0]);
  for (let i = 0; i < mapped.length; i++) {
    const m = expected[i];
    const w = weight[i];
    if (!m || !(w > 0)) continue;
    const s = axialCoordinate(mapped[i], axis);
    const basis = [1, s, s * s];
    for (let p = 0; p < 3; p++) for (let q = 0; q < 3; q++) normal[p][q] += w * basis[p] * basis[q];
    for (let a = 0; a < d; a++) for (let p = 0; p < 3; p++) rhs[a][p] += w * (m[a] - mapped[i][a]) * basis[p];
  }
  let inv: number[][];
  try {
    inv = inverse(normal);
  } catch (e) {
    if (e instanceof FitError) return null;
    throw e;
  }
  const coefficients = rhs.map((r) => inv.map((row) => row[0] * r[0] + row[1] * r[1] + row[2] * r[2]));
  return coefficients.every((row) => row.every(Number.isFinite)) ? coefficients : null;
}

/** Each point moved by a + b s + q s^2 (new arrays). */
export function applyBend(points: Points, coefficients: BendCoefficients, axis: BendAxis): number[][] {
  return points.map((y) => {
    const s = axialCoordinate(y, axis);
    return Array.from(y, (v, a) => v + coefficients[a][0] + coefficients[a][1] * s + coefficients[a][2] * s * s);
  });
}

export interface BendResult {
  /** The corrected points when the correction was kept, else the input points. */
  readonly mapped: number[][];
  /** Whether the correction was kept (its gain exceeded the penalty). */
  readonly applied: boolean;
  /** Objective gained over the uncorrected points (0 when no step improved it). */
  readonly gain: number;
  /** The penalty the gain had to exceed, nats. */
  readonly penalty: number;
}

/**
 * Alternates E-step and bend fit (at most `iterations` fits) while the
 * objective grows; keeps the result when the total gain exceeds the BIC
 * penalty (3d / 2) ln n. The points are those already mapped by the
 * pose (template frame).
 */
export function correctBend(estep: ExpectationStep, mapped: Points, axis: BendAxis, iterations = 4): BendResult {
  const d = axis.axis.length;
  const n = mapped.length;
  const penalty = 0.5 * 3 * d * Math.log(Math.max(2, n));
  const start = mapped.map((p) => Array.from(p));
  if (!(axis.halfLength > 0) || n < 3 * d + 1) return { mapped: start, applied: false, gain: 0, penalty };
  let current = start;
  let e = estep(current);
  const initial = e.objective;
  for (let it = 0; it < iterations; it++) {
    const coefficients = fitBend(current, e.expected, e.weight, axis);
    if (!coefficients) break;
    const next = applyBend(current, coefficients, axis);
    const en = estep(next);
    if (!(en.objective > e.objective)) break;
    current = next;
    e = en;
  }
  const gain = e.objective - initial;
  return gain > penalty ? { mapped: current, applied: true, gain, penalty } : { mapped: start, applied: false, gain, penalty };
}
