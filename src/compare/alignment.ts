/**
 * Robust, precision-weighted alignment of one template's frame to another's on
 * the cells they share.
 */
import { FitError, UsageError } from '../errors.js';
import { precisionMatrix } from '../geometry/covariance.js';
import { addMatrices, inverse, multiply, trace, transpose } from '../geometry/linear-algebra.js';
import { fitRigid, type FitOptions, type FitResult } from '../geometry/procrustes.js';
import { applyToPoint } from '../geometry/transform.js';
import type { Matrix, Points, Transform } from '../types.js';
import { chiSquareQuantile } from '../stats/distributions.js';

export interface AlignmentInput {
  /** Cell means to be moved (template B), k x d. */
  readonly source: Points;
  /** Cell means to align to (template A), k x d. */
  readonly target: Points;
  /** Covariance of each source mean, Sigma_B / n_B (B's frame), k of d x d. */
  readonly sourceCovariances: readonly Matrix[];
  /** Covariance of each target mean, Sigma_A / n_A, k of d x d. */
  readonly targetCovariances: readonly Matrix[];
}

export interface RobustAlignmentOptions {
  /** 'similarity' (rotation, uniform scale, translation; default) or 'rigid' (no scale). */
  readonly kind?: 'similarity' | 'rigid';
  /** Maximum reweighting iterations per phase (default 50). */
  readonly maxIterations?: number;
  /** Convergence: largest change of any transformed source point, um (default 1e-9). */
  readonly tolerance?: number;
  /** Tail probability defining the biweight cut-off (default 0.001: c^2 = chi-square_d quantile 0.999). */
  readonly cutoffProbability?: number;
}

export interface RobustAlignmentResult {
  readonly kind: 'similarity' | 'rigid';
  /** Maps source (B) coordinates into the target (A) frame. */
  readonly transform: Transform;
  readonly fit: FitResult;
  /** Precision weight of each cell, d / tr(V_i), V_i = Cov(a_i) + c^2 R Cov(b_i) R^T (um^-2). */
  readonly precisionWeights: number[];
  /** Final robust weight of each cell in [0, 1] (0 = ignored as displaced). */
  readonly robustWeights: number[];
  /** Mahalanobis length of each residual a_i - T(b_i) under V_i (not squared). */
  readonly standardizedResiduals: number[];
  /** Robust scale s of the standardized residuals (>= 1; 1 means residuals are as small as the templates' own uncertainty). */
  readonly residualScale: number;
  readonly cutoff: number;
  readonly iterations: number;
  readonly converged: boolean;
}

/**
 * Iteratively reweighted least-squares similarity (or rigid) fit T(b) = c R b + t
 * of template B's cell means onto template A's, resistant to a minority of
 * displaced cells.
 *
 * Each iteration fits a weighted similarity with the symmetric scale of Horn (1987)
 * (fitSymmetricSimilarity; rigid: Umeyama 1991 with c = 1) with weights
 * w_i = pi_i * omega_i, where
 *   pi_i    = d / tr(V_i), V_i = Cov(a_i) + c^2 R Cov(b_i) R^T, the isotropic precision
 *             of the residual (the fit accepts one scalar weight per point);
 *   m_i     = sqrt(r_i^T V_i^-1 r_i), r_i = a_i - T(b_i), the standardized residual;
 *   s       = max(1, median(m_i) / sqrt(chi2_d^-1(1/2))), a robust scale (MAD-type) that
 *             never treats residuals as smaller than the templates' own uncertainty;
 *   u_i     = m_i / s;
 *   omega_i = first a trimmed start: 1 for the h = max(d + 1, ceil(0.75 k)) cells with the
 *             smallest m_i, 0 for the rest, refitted until that subset stops changing
 *             (the concentration steps of least trimmed squares, Rousseeuw & Van Driessen
 *             2006, FAST-LTS, Data Min. Knowl. Discov. 12:29-45; each step cannot increase
 *             the trimmed sum of squared standardized residuals); then Tukey's biweight
 *             (1 - (u_i / c)^2)^2 for u_i < c, 0 otherwise, c^2 = chi2_d^-1(1 - cutoffProbability),
 *             until convergence (a redescending M-estimator started from the trimmed fit,
 *             as in MM-estimation: cells far outside their uncertainty get weight 0 and do
 *             not drag the fit). Beaton & Tukey (1974); Holland & Welsch (1977) for IRLS;
 *             Maronna, Martin & Yohai (2006), Robust Statistics, sections 2.2, 4.4 and 5.5.
 *             A trimmed start is needed: a convex (Huber) start lets several cells displaced
 *             the same way pull the frame, and the biweight then stays in that local solution.
 *
 * Every step is symmetric in the two templates: aligning A to B gives exactly the
 * inverse transform, the same weights and the same standardized residuals.
 *
 * Shapes: source and target k x d (d = 2 or 3), covariances k of d x d positive definite.
 * @throws FitError when fewer than d + 1 cells are shared or keep positive weight, or the
 *   geometry is degenerate (from the Umeyama fit); UsageError for mismatched shapes.
 */
export function fitRobustAlignment(input: AlignmentInput, options: RobustAlignmentOptions = {}): RobustAlignmentResult {
  const kind = options.kind ?? 'similarity';
  const maxIterations = options.maxIterations ?? 50;
  const tolerance = options.tolerance ?? 1e-9;
  const cutoffProbability = options.cutoffProbability ?? 0.001;
  const { source, target, sourceCovariances, targetCovariances } = input;
  const k = source.length;
  if (target.length !== k || sourceCovariances.length !== k || targetCovariances.length !== k) {
    throw new UsageError(
      `fitRobustAlignment: inputs differ in length (source ${k}, target ${target.length}, covariances ${sourceCovariances.length} and ${targetCovariances.length})`,
    );
  }
  if (!(cutoffProbability > 0 && cutoffProbability < 1)) {
    throw new UsageError(`fitRobustAlignment: cutoffProbability must lie in (0, 1), got ${cutoffProbability}`);
  }
  const d = k > 0 ? source[0].length : 0;
  if (k < d + 1 || k < 3) throw new FitError(`robust alignment needs at least ${Math.max(3, d + 1)} shared cells, got ${k}`);
  const fitFn = kind === 'rigid' ? fitRigid : fitSymmetricSimilarity;
  const keep = Math.min(k, Math.max(d + 1, Math.ceil(0.75 * k)));
  const cutoff = Math.sqrt(chiSquareQuantile(1 - cutoffProbability, d));
  const medianChi = Math.sqrt(chiSquareQuantile(0.5, d));

  const residualCovariances = (fit: FitResult | null): number[][][] =>
    source.map((_, i) => {
      if (!fit) return addMatrices(targetCovariances[i], sourceCovariances[i]);
      const a = fit.transform.linear;
      return addMatrices(targetCovariances[i], multiply(multiply(a, sourceCovariances[i]), transpose(a)));
    });
  const precisionWeightsOf = (v: number[][][]): number[] => v.map((m) => d / trace(m));

  let v = residualCovariances(null);
  let pi = precisionWeightsOf(v);
  let fit = fitFn(source, target, { weights: pi });
  let omega = new Array<number>(k).fill(1);
  let m = new Array<number>(k).fill(0);
  let s = 1;
  let iterations = 0;
  let converged = false;

  const update = (phase: 'trim' | 'biweight'): void => {
    v = residualCovariances(fit);
    pi = precisionWeightsOf(v);
    m = source.map((b, i) => {
      const moved = applyToPoint(fit.transform, b);
      const r = target[i].map((ai, j) => ai - moved[j]);
      const p = precisionMatrix(v[i]);
      let q = 0;
      for (let x = 0; x < d; x++) for (let y = 0; y < d; y++) q += r[x] * p[x][y] * r[y];
      return Math.sqrt(Math.max(0, q));
    });
    s = Math.max(1, median(m) / medianChi);
    if (phase === 'trim') {
      const order = m.map((_, i) => i).sort((x, y) => m[x] - m[y] || x - y);
      omega = new Array<number>(k).fill(0);
      for (const i of order.slice(0, keep)) omega[i] = 1;
    } else {
      omega = m.map((mi) => {
        const u = mi / s;
        return u < cutoff ? (1 - (u / cutoff) ** 2) ** 2 : 0;
      });
    }
  };

  for (const phase of ['trim', 'biweight'] as const) {
    converged = false;
    let previousSubset = '';
    for (let it = 0; it < maxIterations; it++) {
      iterations++;
      update(phase);
      if (phase === 'trim') {
        const subset = omega.join(',');
        if (subset === previousSubset) {
          converged = true;
          break;
        }
        previousSubset = subset;
      }
      const weights = pi.map((p, i) => p * omega[i]);
      const kept = weights.filter((w) => w > 0).length;
      if (kept < d + 1) {
        throw new FitError(`robust alignment kept only ${kept} of ${k} shared cells (need ${d + 1}); the templates differ too much to align`);
      }
      const next = fitFn(source, target, { weights });
      const change = Math.max(
        ...source.map((b) => {
          const p1 = applyToPoint(fit.transform, b);
          const p2 = applyToPoint(next.transform, b);
          return Math.sqrt(p1.reduce((acc, val, j) => acc + (val - p2[j]) ** 2, 0));
        }),
      );
      fit = next;
      if (change <= tolerance) {
        converged = true;
        break;
      }
    }
  }
  update('biweight');
  return {
    kind,
    transform: fit.transform,
    fit,
    precisionWeights: pi,
    robustWeights: omega,
    standardizedResiduals: m,
    residualScale: s,
    cutoff,
    iterations,
    converged,
  };
}

function median(values: readonly number[]): number {
  const sorted = values.slice().sort((a, b) => a - b);
  const n = sorted.length;
  return n % 2 === 1 ? sorted[(n - 1) / 2] : 0.5 * (sorted[n / 2 - 1] + sorted[n / 2]);
}

/** Covariance of a point under the linear part A of a transform: A Sigma A^T. */
export function transformCovariance(linear: Matrix, sigma: Matrix): number[][] {
  return multiply(multiply(linear, sigma), transpose(linear));
}

/**
 * Weighted similarity fit y ~ c R x + t with the symmetric scale of Horn (1987),
 * J. Opt. Soc. Am. A 4(4):629-642, section 2.E:
 *
 *   R = the weighted least-squares rotation (Umeyama 1991 with c = 1),
 *   c = sqrt( sum_i w_i |y_i - ybar|^2 / sum_i w_i |x_i - xbar|^2 ),  t = ybar - c R xbar
 *
 * (weighted means xbar, ybar). Unlike the least-squares scale (Umeyama eq. 42) this
 * estimate is symmetric: fitting x onto y gives exactly the inverse transform, so
 * comparing B with A mirrors comparing A with B.
 *
 * @throws FitError as fitRigid (degenerate geometry, too few weighted points), or when the
 *   source spread is zero.
 */
export function fitSymmetricSimilarity(source: Points, target: Points, options: FitOptions = {}): FitResult {
  const rigid = fitRigid(source, target, options);
  const w = options.weights ?? source.map(() => 1);
  const total = w.reduce((acc, v) => acc + v, 0);
  const d = source[0].length;
  const mean = (pts: Points): number[] => Array.from({ length: d }, (_, j) => pts.reduce((acc, p, i) => acc + w[i] * p[j], 0) / total);
  const mx = mean(source);
  const my = mean(target);
  const spread = (pts: Points, m: number[]): number => pts.reduce((acc, p, i) => acc + w[i] * p.reduce((a2, v, j) => a2 + (v - m[j]) ** 2, 0), 0);
  const sx = spread(source, mx);
  if (!(sx > 0)) throw new FitError('fitSymmetricSimilarity: the source points coincide');
  const scale = Math.sqrt(spread(target, my) / sx);
  const linear = rigid.rotation.map((row) => row.map((v) => v * scale));
  const translation = my.map((v, i) => v - linear[i].reduce((acc, a, j) => acc + a * mx[j], 0));
  const transform: Transform = { kind: 'similarity', linear, translation };
  const msr =
    source.reduce((acc, p, i) => {
      const q = applyToPoint(transform, p);
      return acc + w[i] * q.reduce((a2, v, j) => a2 + (target[i][j] - v) ** 2, 0);
    }, 0) / total;
  return { transform, rotation: rigid.rotation, scale, translation, meanSquaredResidual: msr, reflected: rigid.reflected };
}

export interface LeaveOneOutAlignment {
  /** The alignment refitted with cell `index` given weight 0 (the robust weights of the others kept). */
  readonly transform: Transform;
  /** Covariance (d x d, target frame) of the refitted transform's prediction T(b_index), from the other cells' noise. */
  readonly predictionCovariance: number[][];
}

/**
 * Leave-one-out alignment for one cell, and the uncertainty it carries.
 *
 * The final weights w_j = pi_j omega_j of `result` are kept, except w_index = 0, and the
 * fit is redone once (no reweighting), so the cell's own noise does not enter the
 * transform that its displacement is measured with (no absorption of the cell's own
 * displacement). The prediction's covariance is the sandwich covariance of the weighted
 * least-squares fit, linearized at the fitted transform (Gauss-Newton; Seber & Wild 1989,
 * Nonlinear Regression, section 2.1; White 1980 for the sandwich form):
 *
 *   y_j = (a_j + T(b_j)) / 2 (midpoints: they correspond under T in both frames, so swapping
 *         A and B gives the same test),  ybar = weighted mean of y_j,
 *   J_j = [ -[y_j - ybar]_x , (y_j - ybar), I ]   (3-D: rotation omega, log-scale, translation;
 *          2-D: [ R90 (y_j - ybar), (y_j - ybar), I ]; the scale column is dropped for rigid fits),
 *   M = sum_j w_j J_j^T J_j,  B = sum_j w_j^2 J_j^T V_j J_j,  Cov(theta) = M^-1 B M^-1,
 *   Cov(T(b_i)) = J_i Cov(theta) J_i^T,
 *
 * with V_j = Cov(a_j) + A Cov(b_j) A^T the residual covariance of cell j.
 *
 * @throws FitError when fewer than d + 1 other cells keep positive weight.
 */
export function leaveOneOutAlignment(input: AlignmentInput, result: RobustAlignmentResult, index: number): LeaveOneOutAlignment {
  const { source, target, sourceCovariances, targetCovariances } = input;
  const k = source.length;
  const d = source[0].length;
  if (!Number.isInteger(index) || index < 0 || index >= k) throw new UsageError(`leaveOneOutAlignment: index ${index} is outside 0..${k - 1}`);
  const w = result.precisionWeights.map((p, j) => (j === index ? 0 : p * result.robustWeights[j]));
  const kept = w.filter((x) => x > 0).length;
  if (kept < d + 1) throw new FitError(`leave-one-out alignment keeps only ${kept} cells with positive weight (need ${d + 1})`);
  const fit =
    result.robustWeights[index] === 0 ? result.fit : (result.kind === 'rigid' ? fitRigid : fitSymmetricSimilarity)(source, target, { weights: w });
  const t = fit.transform;
  // Linearize at the midpoints m_j = (a_j + T(b_j)) / 2: they correspond exactly under T in
  // both frames, which keeps the result symmetric when A and B are swapped.
  const y = source.map((b, j) => applyToPoint(t, b).map((v, c) => 0.5 * (v + target[j][c])));
  const total = w.reduce((acc, x) => acc + x, 0);
  const ybar = Array.from({ length: d }, (_, c) => y.reduce((acc, p, j) => acc + w[j] * p[c], 0) / total);
  const withScale = result.kind !== 'rigid';
  const jacobian = (p: readonly number[]): number[][] => {
    const q = p.map((v, c) => v - ybar[c]);
    const rows: number[][] = [];
    for (let r = 0; r < d; r++) {
      const row: number[] = [];
      if (d === 3) {
        // -[q]_x: the derivative of omega x q with respect to omega
        const cross = [
          [0, q[2], -q[1]],
          [-q[2], 0, q[0]],
          [q[1], -q[0], 0],
        ];
        row.push(...cross[r]);
      } else {
        row.push(r === 0 ? -q[1] : q[0]);
      }
      if (withScale) row.push(q[r]);
      for (let c = 0; c < d; c++) row.push(r === c ? 1 : 0);
      rows.push(row);
    }
    return rows;
  };
  const nParams = (d === 3 ? 3 : 1) + (withScale ? 1 : 0) + d;
  let m = Array.from({ length: nParams }, () => new Array<number>(nParams).fill(0));
  let bread = Array.from({ length: nParams }, () => new Array<number>(nParams).fill(0));
  for (let j = 0; j < k; j++) {
    if (w[j] === 0) continue;
    const jj = jacobian(y[j]);
    const jt = transpose(jj);
    const vj = addMatrices(targetCovariances[j], multiply(multiply(t.linear, sourceCovariances[j]), transpose(t.linear)));
    m = addMatrices(m, multiply(jt, jj).map((row) => row.map((x) => w[j] * x)));
    bread = addMatrices(bread, multiply(multiply(jt, vj), jj).map((row) => row.map((x) => w[j] * w[j] * x)));
  }
  let mInv: number[][];
  try {
    mInv = inverse(m);
  } catch {
    throw new FitError('leave-one-out alignment: the remaining cells do not determine the transform');
  }
  const cov = multiply(multiply(mInv, bread), mInv);
  const ji = jacobian(y[index]);
  const predictionCovariance = multiply(multiply(ji, cov), transpose(ji));
  // symmetrize against rounding
  const sym = predictionCovariance.map((row, r) => row.map((x, c) => 0.5 * (x + predictionCovariance[c][r])));
  return { transform: t, predictionCovariance: sym };
}
