/**
 * Pose refinement by expectation-maximisation on the Gaussian-plus-uniform
 * mixture (the model of density-grid.ts), used for the local optimisation of
 * each new best hypothesis (similarity) and for the final affine stage; and an
 * optional smooth non-rigid correction after it.
 *
 * E-step, for the current map T (sample -> template), y_i = T x_i:
 *   w_ik = N(y_i; mu_k, S_k) / K             (cells within 3.5 sd)
 *   r_i  = (1 - pi_0) |det A| sum_k w_ik / ((1 - pi_0) |det A| sum_k w_ik + pi_0 u)
 *   m_i  = sum_k w_ik mu_k / sum_k w_ik       (the point's expected cell position)
 * M-step: weighted least squares of the map template -> sample, m_i -> x_i
 * with weights r_i (fitted in that direction and inverted, because the m_i
 * carry no measurement noise and x_i do; see ransac.ts), then invert.
 * This is the EM of Gaussian-mixture registration (Myronenko & Song 2010,
 * section 4) with the template cells as centroids and their own covariances
 * in the E-step; the M-step weighs coordinates isotropically.
 *
 * Non-rigid correction: after the affine map, a displacement field v on the
 * template frame is estimated from the residuals of the expected positions,
 *   v(y) = sum_i g(y - y_i) r_i (m_i - y_i) / (lambda + sum_i g(y - y_i) r_i),
 *   g(u) = exp(-|u|^2 / (2 beta^2)),
 * a Nadaraya-Watson kernel smoother (Nadaraya 1964; Watson 1964) shrunk toward
 * zero by lambda pseudo-observations, and the points are moved to y_i + v(y_i).
 * Repeating E-step and smoothing a few times bends the sample onto the
 * template smoothly; beta and lambda are given in template units / counts.
 */
import { fitTransform, invertTransform } from '../geometry/index.js';
import { FitError } from '../errors.js';
import type { Points, Transform } from '../types.js';
import { isPlausible, toFlat, type Plausibility } from './affine-flat.js';
import type { CellGrid } from './cell-grid.js';
import { voxelOf } from './cell-grid.js';
import { cellMahalanobisSquared, type CellModel } from './cell-model.js';
import { determinantFlat } from './density-grid.js';

export interface MixtureContext {
  readonly model: CellModel;
  /** Cell lists per voxel, built with radius 3.5. */
  readonly grid: CellGrid;
  readonly outlierShare: number;
  readonly outlierDensity: number;
}

export interface EStep {
  /** Expected cell position per point (template frame); NaN row when no cell is near. */
  readonly expected: number[][];
  /** Inlier posterior r_i. */
  readonly inlier: number[];
  /** Mapped points y_i. */
  readonly mapped: number[][];
  /** Log-likelihood sum_i log(...) in the sample frame (see density-grid.ts). */
  readonly logLikelihood: number;
}

/** The E-step for already mapped points `mapped` with Jacobian `jacobian` = |det A|. */
export function expectation(ctx: MixtureContext, mapped: Points, jacobian: number): EStep {
  const { model, grid } = ctx;
  const d = model.dim;
  const cIn = (1 - ctx.outlierShare) * jacobian;
  const cOut = ctx.outlierShare * ctx.outlierDensity;
  const expected: number[][] = [], inlier: number[] = [];
  let ll = 0;
  const norms = normalisers(model);
  for (const y of mapped) {
    const v = voxelOf(grid, y);
    let f = 0;
    const m = new Array<number>(d).fill(0);
    if (v >= 0) {
      for (let c = grid.offsets[v]; c < grid.offsets[v + 1]; c++) {
        const k = grid.cells[c];
        const e2 = cellMahalanobisSquared(model, k, y);
        if (e2 > 12.25) continue;
        const w = norms[k] * Math.exp(-0.5 * e2);
        f += w;
        for (let a = 0; a < d; a++) m[a] += w * model.means[k * d + a];
      }
    }
    const pin = cIn * f;
    ll += Math.log(pin + cOut);
    if (f > 0) {
      for (let a = 0; a < d; a++) m[a] /= f;
      expected.push(m);
      inlier.push(pin / (pin + cOut));
    } else {
      expected.push(new Array<number>(d).fill(NaN));
      inlier.push(0);
    }
  }
  return { expected, inlier, mapped: mapped.map((p) => p.slice()), logLikelihood: ll };
}

const normCache = new WeakMap<CellModel, Float64Array>();
function normalisers(model: CellModel): Float64Array {
  let n = normCache.get(model);
  if (!n) {
    n = new Float64Array(model.size);
    for (let k = 0; k < model.size; k++) n[k] = Math.exp(-0.5 * (model.dim * Math.log(2 * Math.PI) + model.logDets[k])) / model.size;
    normCache.set(model, n);
  }
  return n;
}

function mapPoints(t: Transform, points: Points): number[][] {
  const d = t.translation.length;
  return points.map((p) => {
    const y = new Array<number>(d);
    for (let a = 0; a < d; a++) {
      let s = t.translation[a];
      for (let b = 0; b < d; b++) s += t.linear[a][b] * p[b];
      y[a] = s;
    }
    return y;
  });
}

export interface EmResult {
  readonly transform: Transform;
  readonly logLikelihood: number;
  readonly iterations: number;
}

/**
 * EM refinement of a map of family `kind` from `start` (sample -> template).
 * Stops when the log-likelihood gains less than `tolerance` or after
 * `iterations`; never returns a map worse than the start or an implausible one.
 */
export function emRefine(
  ctx: MixtureContext,
  points: Points,
  start: Transform,
  kind: Transform['kind'],
  limits: Plausibility,
  iterations = 10,
  tolerance = 1e-3,
): EmResult {
  const d = ctx.model.dim;
  let current = start;
  let e = expectation(ctx, mapPoints(current, points), Math.abs(determinantFlat(toFlat(current).a, d)));
  let it = 0;
  for (; it < iterations; it++) {
    const src: number[][] = [], tgt: number[][] = [], w: number[] = [];
    e.expected.forEach((m, i) => {
      if (e.inlier[i] > 1e-6 && Number.isFinite(m[0])) {
        src.push(m);
        tgt.push(points[i] as number[]);
        w.push(e.inlier[i]);
      }
    });
    if (src.length < d + 2) break;
    let next: Transform;
    try {
      next = invertTransform(fitTransform(kind, src, tgt, { weights: w }).transform);
    } catch (err) {
      if (err instanceof FitError) break;
      throw err;
    }
    if (!isPlausible(next, limits)) break;
    const en = expectation(ctx, mapPoints(next, points), Math.abs(determinantFlat(toFlat(next).a, d)));
    if (en.logLikelihood < e.logLikelihood - 1e-9) break;
    const gain = en.logLikelihood - e.logLikelihood;
    current = next;
    e = en;
    if (gain < tolerance) {
      it++;
      break;
    }
  }
  return { transform: current, logLikelihood: e.logLikelihood, iterations: it };
}

export interface NonRigidResult {
  /** Points in the template frame after the affine map and the displacement field. */
  readonly mapped: number[][];
  readonly objective: number;
  readonly iterations: number;
}

/** An E-step for mapped points: expected template position and weight per point, and an objective (higher is better). */
export type ExpectationStep = (mapped: Points) => { expected: (number[] | null)[]; weight: number[]; objective: number };

/**
 * Smooth non-rigid correction of already affinely mapped points (template
 * frame): y_i <- y_i + v(y_i) with the kernel smoother of the module comment,
 * repeated while the objective improves. `beta`: kernel width (template
 * units); `lambda`: shrinkage in pseudo-observations.
 */
export function nonRigidCorrect(
  estep: ExpectationStep,
  mapped: Points,
  beta: number,
  lambda: number,
  iterations = 5,
): NonRigidResult {
  const d = mapped[0]?.length ?? 0;
  let current = mapped.map((p) => p.slice());
  let e = estep(current);
  let it = 0;
  const inv2b2 = 1 / (2 * beta * beta);
  for (; it < iterations; it++) {
    const res = current.map((p, i) => {
      const m = e.expected[i];
      return m ? m.map((v, a) => v - p[a]) : null;
    });
    const moved: number[][] = [];
    for (let i = 0; i < current.length; i++) {
      const num = new Array<number>(d).fill(0);
      let den = lambda;
      for (let j = 0; j < current.length; j++) {
        const r = res[j];
        if (!r || e.weight[j] <= 0) continue;
        let s = 0;
        for (let a = 0; a < d; a++) s += (current[i][a] - current[j][a]) ** 2;
        const g = Math.exp(-s * inv2b2) * e.weight[j];
        if (g < 1e-12) continue;
        den += g;
        for (let a = 0; a < d; a++) num[a] += g * r[a];
      }
      moved.push(current[i].map((v, a) => v + num[a] / den));
    }
    const en = estep(moved);
    if (en.objective < e.objective - 1e-9) break;
    const gain = en.objective - e.objective;
    current = moved;
    e = en;
    if (gain < 1e-3) {
      it++;
      break;
    }
  }
  return { mapped: current, objective: e.objective, iterations: it };
}

export { mapPoints };

/**
 * Derivative-free local maximisation of `objective` over maps
 * T' = D(theta) o T, where D is a similarity (or, for `kind` 'affine', an
 * affine map) about the point `centre` of the template frame, parametrised by
 * rotation angles, log-scale (per axis for affine), shear terms and
 * translation. Compass (coordinate pattern) search: try +-step on each
 * coordinate, keep any improvement, halve the steps when none helps, stop when
 * the steps fall below `minFraction` of their start (Kolda, Lewis & Torczon
 * 2003, "Optimization by direct search", SIAM Review 45(3), section 3).
 */
export function compassSearch(
  objective: (t: Transform) => number,
  start: Transform,
  centre: readonly number[],
  steps: { rotation: number; scale: number; translation: number; shear?: number },
  kind: 'similarity' | 'affine',
  maxEvaluations = 400,
  minFraction = 1 / 16,
): { transform: Transform; value: number; evaluations: number } {
  const d = centre.length;
  // Parameter vector: rotations (d = 2: 1, d = 3: 3), log-scales (1 or d), shears (affine: d(d-1)/2), translations (d).
  const nRot = d === 3 ? 3 : d === 2 ? 1 : 0;
  const nScale = kind === 'affine' ? d : 1;
  const nShear = kind === 'affine' ? (d * (d - 1)) / 2 : 0;
  const size = nRot + nScale + nShear + d;
  const step = new Array<number>(size);
  for (let i = 0; i < size; i++) {
    if (i < nRot) step[i] = steps.rotation;
    else if (i < nRot + nScale) step[i] = steps.scale;
    else if (i < nRot + nScale + nShear) step[i] = steps.shear ?? steps.scale;
    else step[i] = steps.translation;
  }
  const initial = step.slice();
  const build = (theta: number[]): Transform => {
    // D = R(angles) * (diag(exp(s)) + shear upper part) about the centre.
    let r: number[][];
    if (d === 3) r = rotationFromAngles(theta[0], theta[1], theta[2]);
    else if (d === 2) r = [[Math.cos(theta[0]), -Math.sin(theta[0])], [Math.sin(theta[0]), Math.cos(theta[0])]];
    else r = [[1]];
    const m: number[][] = Array.from({ length: d }, (_, a) => Array.from({ length: d }, (_, b) => (a === b ? Math.exp(theta[nRot + (nScale === 1 ? 0 : a)]) : 0)));
    let sh = nRot + nScale;
    for (let a = 0; a < d; a++) for (let b = a + 1; b < d; b++) if (nShear > 0) m[a][b] = theta[sh++];
    const lin: number[][] = Array.from({ length: d }, (_, a) => Array.from({ length: d }, (_, b) => {
      let s = 0;
      for (let c = 0; c < d; c++) s += r[a][c] * m[c][b];
      return s;
    }));
    const tr = centre.map((c, a) => c + theta[size - d + a] - lin[a].reduce((s, v, b) => s + v * centre[b], 0));
    // Compose D o T.
    const linear = lin.map((row) => start.linear[0].map((_, b) => row.reduce((s, v, c) => s + v * start.linear[c][b], 0)));
    const translation = lin.map((row, a) => row.reduce((s, v, c) => s + v * start.translation[c], 0) + tr[a]);
    return { kind: kind === 'affine' || start.kind === 'affine' ? 'affine' : 'similarity', linear, translation };
  };
  let theta = new Array<number>(size).fill(0);
  let best = objective(start);
  let evaluations = 1;
  while (evaluations < maxEvaluations) {
    let improved = false;
    for (let i = 0; i < size && evaluations < maxEvaluations; i++) {
      for (const sign of [1, -1]) {
        const trial = theta.slice();
        trial[i] += sign * step[i];
        const v = objective(build(trial));
        evaluations++;
        if (v > best + 1e-9) {
          best = v;
          theta = trial;
          improved = true;
          break;
        }
      }
    }
    if (!improved) {
      let small = true;
      for (let i = 0; i < size; i++) {
        step[i] /= 2;
        if (step[i] >= minFraction * initial[i]) small = false;
      }
      if (small) break;
    }
  }
  return { transform: build(theta), value: best, evaluations };
}

/** Rotation R = Rz(c) Ry(b) Rx(a). */
function rotationFromAngles(a: number, b: number, c: number): number[][] {
  const ca = Math.cos(a), sa = Math.sin(a), cb = Math.cos(b), sb = Math.sin(b), cc = Math.cos(c), sc = Math.sin(c);
  return [
    [cc * cb, cc * sb * sa - sc * ca, cc * sb * ca + sc * sa],
    [sc * cb, sc * sb * sa + cc * ca, sc * sb * ca - cc * sa],
    [-sb, cb * sa, cb * ca],
  ];
}
