/**
 * Coherent point drift (CPD) baseline, rigid / similarity and affine:
 * Myronenko & Song (2010), "Point set registration: coherent point drift",
 * IEEE TPAMI 32(12):2262-2275.
 *
 * Model. The template means y_1..y_M, mapped into the sample frame by
 * T(y) = B y + t, are the centroids of an isotropic Gaussian mixture with a
 * common variance sigma^2; a uniform component of weight w explains outliers.
 * The sample points x_1..x_N are the data (paper, Sec. 2):
 *   p(x) = w / N + (1 - w) sum_m (1/M) (2 pi sigma^2)^(-D/2) exp(-|x - T(y_m)|^2 / (2 sigma^2)).
 * EM with the posterior (E-step, as written in Figs. 2 and 3)
 *   P_mn = exp(-|x_n - T(y_m)|^2 / (2 sigma^2)) / (sum_k exp(-|x_n - T(y_k)|^2 / (2 sigma^2)) + c),
 *   c = (2 pi sigma^2)^(D/2) * (w / (1 - w)) * (M / N),
 * and the closed-form M-steps of Fig. 2 (rigid with scale) and Fig. 3 (affine):
 *   N_P = 1^T P 1, mu_x = X^T P^T 1 / N_P, mu_y = Y^T P 1 / N_P,
 *   X^ = X - 1 mu_x^T, Y^ = Y - 1 mu_y^T, A = X^T P^T Y^ (centred),
 *   rigid:  A = U S V^T, C = diag(1, .., 1, det(U V^T)), R = U C V^T,
 *           s = tr(A^T R) / tr(Y^T d(P 1) Y^), t = mu_x - s R mu_y,
 *           sigma^2 = (tr(X^T d(P^T 1) X^) - s tr(A^T R)) / (N_P D);
 *   affine: B = A (Y^T d(P 1) Y^)^-1, t = mu_x - B mu_y,
 *           sigma^2 = (tr(X^T d(P^T 1) X^) - tr(A B^T)) / (N_P D).
 * (Figure numbers as in the journal paper; its equation numbers are not quoted here.)
 *
 * Direction. CPD moves the mixture centroids onto the data, so it estimates
 * the template -> sample map; the result is INVERTED and returned as the map
 * from sample coordinates into the template frame, like every aligner in cairn.
 * Fitting in that direction also keeps the outlier component on the sample,
 * where the outliers are.
 *
 * Units. The paper's uniform density 1/N presumes normalised coordinates (the
 * authors normalise point sets to zero mean and unit variance; from memory of
 * their experiments section). Here both sets are centred on their own
 * centroids and divided by ONE common length, the template's root-mean-square
 * radius, so a rigid map stays rigid; sigma2 is reported in sample units (um^2).
 */

import { FitError, UsageError } from '../errors.js';
import { determinant, invertTransform, inverse, svd } from '../geometry/index.js';
import type { Rng } from '../random.js';
import type { Points, Transform } from '../types.js';
import { checkCount, checkPointSets, startingPoses } from './icp.js';

export interface CpdOptions {
  /**
   * 'rigid' = rotation + translation (Fig. 2 with s fixed at 1);
   * 'similarity' = the paper's "rigid" with scale s (Fig. 2); 'affine' = Fig. 3.
   */
  readonly kind: 'rigid' | 'similarity' | 'affine';
  /** Uniform outlier weight w in [0, 1) (default 0.2). */
  readonly w?: number;
  /** EM iteration cap per start (default 150). */
  readonly maxIterations?: number;
  /** Stop when the log-likelihood changes by at most tolerance * |log-likelihood| (default 1e-7). */
  readonly tolerance?: number;
  /** Needed for random starting rotations (starts beyond the identity and principal-axis ones). */
  readonly rng?: Rng;
  /** Starting orientations (default 24 with an rng; without one, the deterministic starts: 3 in 2-D, 5 in 3-D). */
  readonly starts?: number;
  /**
   * Screening: every start first runs this many EM iterations (default 25); only the
   * `survivors` starts with the highest log-likelihood then run on to convergence.
   * Set it to maxIterations to run every start to the end.
   */
  readonly screenIterations?: number;
  /** Starts kept after screening (default 4). */
  readonly survivors?: number;
  /** Return the final posterior matrix P (M x N) of the winning start (default false). */
  readonly keepPosterior?: boolean;
}

export interface CpdResult {
  /** Maps sample coordinates into the template frame (inverse of the fitted template -> sample map). */
  readonly transform: Transform;
  /** EM iterations (M-steps) of the winning start. */
  readonly iterations: number;
  /** Final mixture variance sigma^2 in sample units (um^2). */
  readonly sigma2: number;
  /** Final log-likelihood sum_n log p(x_n) in normalised units (comparable across starts only). */
  readonly logLikelihood: number;
  /** Starting orientations tried. */
  readonly starts: number;
  /** Index of the winning start (identity, then principal axes, then random). */
  readonly bestStart: number;
  /** Starts abandoned because an M-step was degenerate. */
  readonly failedStarts: number;
  /** P_mn: posterior that sample point n belongs to template mean m (rows m, columns n); with keepPosterior only. */
  readonly posterior?: number[][];
}

/**
 * Align `samplePoints` to `templateMeans` by multi-start CPD (rigid, similarity or affine).
 *
 * Shapes: templateMeans M x D, samplePoints N x D, D = 2 or 3, M >= D + 1,
 * N >= D + 1. Each start runs EM from a starting pose (identity, principal
 * axes, then random rotations: see startingPoses in icp.ts) for
 * `screenIterations`; the `survivors` starts with the highest log-likelihood
 * then continue until its relative change is at most `tolerance` or
 * `maxIterations` in all; of those, the highest final log-likelihood wins
 * (ties: the earlier start). Screening is cairn's shortcut to save time, not
 * part of the paper.
 *
 * @throws UsageError for bad options, mismatched dimensions, non-finite coordinates.
 * @throws FitError for too few points or when every start degenerates.
 */
export function alignCpd(templateMeans: Points, samplePoints: Points, options: CpdOptions): CpdResult {
  const d = checkPointSets('alignCpd', templateMeans, samplePoints);
  const kind = options.kind;
  if (kind !== 'rigid' && kind !== 'similarity' && kind !== 'affine') throw new UsageError(`alignCpd: unknown kind "${String(kind)}"`);
  const w = options.w ?? 0.2;
  if (!(w >= 0 && w < 1)) throw new UsageError(`alignCpd: w must be in [0, 1), got ${w}`);
  const maxIterations = options.maxIterations ?? 150;
  checkCount('alignCpd', 'maxIterations', maxIterations, 1);
  const tolerance = options.tolerance ?? 1e-7;
  if (!(tolerance >= 0) || !Number.isFinite(tolerance)) throw new UsageError(`alignCpd: tolerance must be finite and >= 0, got ${tolerance}`);
  const starts = options.starts ?? (options.rng ? 24 : 1 + (1 << (d - 1)));
  checkCount('alignCpd', 'starts', starts, 1);
  const screenIterations = options.screenIterations ?? 25;
  checkCount('alignCpd', 'screenIterations', screenIterations, 1);
  const survivors = options.survivors ?? 4;
  checkCount('alignCpd', 'survivors', survivors, 1);
  if (samplePoints.length < d + 1) throw new FitError(`alignCpd needs at least ${d + 1} sample points in ${d}-D, got ${samplePoints.length}`);

  // Normalise: centre each set on its centroid, divide both by the template's RMS radius.
  const my = mean(templateMeans);
  const mx = mean(samplePoints);
  let radius2 = 0;
  for (const p of templateMeans) for (let j = 0; j < d; j++) radius2 += (p[j] - my[j]) ** 2;
  const L = Math.sqrt(radius2 / templateMeans.length);
  if (!(L > 0)) throw new FitError('alignCpd: all template means coincide');
  const M = templateMeans.length;
  const N = samplePoints.length;
  const Y = new Float64Array(M * d);
  const X = new Float64Array(N * d);
  for (let m = 0; m < M; m++) for (let j = 0; j < d; j++) Y[m * d + j] = (templateMeans[m][j] - my[j]) / L;
  for (let n = 0; n < N; n++) for (let j = 0; j < d; j++) X[n * d + j] = (samplePoints[n][j] - mx[j]) / L;

  const poseKind = kind === 'affine' ? 'similarity' : kind;
  const poses = startingPoses(templateMeans, samplePoints, poseKind, starts, options.rng);
  const screened: (EmRun & { start: number })[] = [];
  let failed = 0;
  for (let s = 0; s < poses.length; s++) {
    // Start pose sample -> template (x -> A0 x + t0) becomes template -> sample in normalised units:
    // y~ -> B y~ + t~ with B = A0^-1, t~ = (B my + tb - mx) / L where tb = -A0^-1 t0.
    const inv = invertTransform(poses[s]);
    const B0 = inv.linear.map((row) => row.slice());
    const t0 = new Array<number>(d);
    for (let i = 0; i < d; i++) {
      let v = inv.translation[i] - mx[i];
      for (let j = 0; j < d; j++) v += B0[i][j] * my[j];
      t0[i] = v / L;
    }
    const initial: EmRun = { B: B0, t: t0, sigma2: NaN, logLikelihood: -Infinity, previous: -Infinity, iterations: 0, converged: false, P: new Float64Array(0) };
    try {
      screened.push({ ...runEm(X, Y, N, M, d, kind, w, initial, Math.min(screenIterations, maxIterations), tolerance), start: s });
    } catch (e) {
      if (e instanceof FitError) {
        failed++;
        continue;
      }
      throw e;
    }
  }
  if (screened.length === 0) throw new FitError(`alignCpd: every one of the ${poses.length} starts degenerated`);
  // Keep the best `survivors` after screening (ties: earlier start) and run them on to convergence.
  screened.sort((a, b) => b.logLikelihood - a.logLikelihood || a.start - b.start);
  let best: (EmRun & { start: number }) | null = null;
  for (const run of screened.slice(0, survivors)) {
    let finished: EmRun = run;
    if (!run.converged && run.iterations < maxIterations) {
      try {
        finished = runEm(X, Y, N, M, d, kind, w, run, maxIterations, tolerance);
      } catch (e) {
        if (e instanceof FitError) {
          failed++;
          continue;
        }
        throw e;
      }
    }
    if (best === null || finished.logLikelihood > best.logLikelihood || (finished.logLikelihood === best.logLikelihood && run.start < best.start)) {
      best = { ...finished, start: run.start };
    }
  }
  if (best === null) throw new FitError(`alignCpd: every one of the ${poses.length} starts degenerated`);

  // Back to original units: x = L (B (y - my)/L + t~) + mx = B y + (L t~ + mx - B my).
  const translation = new Array<number>(d);
  for (let i = 0; i < d; i++) {
    let v = L * best.t[i] + mx[i];
    for (let j = 0; j < d; j++) v -= best.B[i][j] * my[j];
    translation[i] = v;
  }
  const templateToSample: Transform = { kind, linear: best.B, translation };
  const result: CpdResult = {
    transform: invertTransform(templateToSample),
    iterations: best.iterations,
    sigma2: best.sigma2 * L * L,
    logLikelihood: best.logLikelihood,
    starts: poses.length,
    bestStart: best.start,
    failedStarts: failed,
  };
  if (options.keepPosterior) {
    const posterior: number[][] = [];
    for (let m = 0; m < M; m++) posterior.push(Array.from(best.P.subarray(m * N, (m + 1) * N)));
    return { ...result, posterior };
  }
  return result;
}

/** EM state; a run can be resumed from where it stopped (sigma2 NaN = not yet initialised). */
interface EmRun {
  B: number[][];
  t: number[];
  sigma2: number;
  logLikelihood: number;
  /** Log-likelihood at the previous E-step (for the stopping rule). */
  previous: number;
  iterations: number;
  converged: boolean;
  P: Float64Array;
}

function runEm(
  X: Float64Array,
  Y: Float64Array,
  N: number,
  M: number,
  D: number,
  kind: 'rigid' | 'similarity' | 'affine',
  w: number,
  state: EmRun,
  maxIterations: number,
  tolerance: number,
): EmRun {
  let B = state.B;
  let t = state.t;
  const TY = new Float64Array(M * D);
  transformCentroids(Y, M, D, B, t, TY);
  let sigma2 = state.sigma2;
  if (Number.isNaN(sigma2)) {
    // Initial sigma^2 = (1 / (D N M)) sum_n sum_m |x_n - T(y_m)|^2 (Figs. 2 and 3, initialisation).
    sigma2 = 0;
    for (let n = 0; n < N; n++) {
      for (let m = 0; m < M; m++) {
        let s = 0;
        for (let j = 0; j < D; j++) s += (X[n * D + j] - TY[m * D + j]) ** 2;
        sigma2 += s;
      }
    }
    sigma2 /= D * N * M;
  }

  const P = new Float64Array(M * N);
  const P1 = new Float64Array(M);
  const Pt1 = new Float64Array(N);
  const d2 = new Float64Array(M);
  let previous = state.previous;
  let logLikelihood = -Infinity;
  let iterations = state.iterations;
  let converged = false;
  for (;;) {
    // E-step (log-sum-exp stabilised).
    const c = Math.pow(2 * Math.PI * sigma2, D / 2) * (w / (1 - w)) * (M / N);
    const logPrefactor = Math.log((1 - w) / M) - (D / 2) * Math.log(2 * Math.PI * sigma2);
    logLikelihood = 0;
    P1.fill(0);
    for (let n = 0; n < N; n++) {
      let minExp = Infinity;
      for (let m = 0; m < M; m++) {
        let s = 0;
        for (let j = 0; j < D; j++) {
          const a = X[n * D + j] - TY[m * D + j];
          s += a * a;
        }
        const e = s / (2 * sigma2);
        d2[m] = e;
        if (e < minExp) minExp = e;
      }
      let sum = 0;
      for (let m = 0; m < M; m++) {
        // Terms below e^-40 (4e-18) of the largest are set to zero: they are lost when added to the sum (>= 1) anyway.
        const z = minExp - d2[m];
        const e = z < -40 ? 0 : Math.exp(z);
        d2[m] = e;
        sum += e;
      }
      const cScaled = c === 0 ? 0 : c * Math.exp(minExp); // c in the same shifted units
      let column = 0;
      if (cScaled === Infinity) {
        for (let m = 0; m < M; m++) P[m * N + n] = 0;
        logLikelihood += Math.log(w / N);
      } else {
        const den = sum + cScaled;
        for (let m = 0; m < M; m++) {
          const p = d2[m] / den;
          P[m * N + n] = p;
          P1[m] += p;
          column += p;
        }
        logLikelihood += Math.log(den) - minExp + logPrefactor;
      }
      Pt1[n] = column;
    }
    if (!Number.isFinite(logLikelihood)) throw new FitError('alignCpd: the log-likelihood is not finite');
    converged = Number.isFinite(previous) && Math.abs(logLikelihood - previous) <= tolerance * Math.abs(logLikelihood);
    if (converged || iterations >= maxIterations) break;
    previous = logLikelihood;

    // M-step.
    let Np = 0;
    for (let m = 0; m < M; m++) Np += P1[m];
    if (!(Np > 1e-12)) throw new FitError('alignCpd: every sample point was explained as an outlier');
    const mux = new Array<number>(D).fill(0);
    const muy = new Array<number>(D).fill(0);
    for (let n = 0; n < N; n++) for (let j = 0; j < D; j++) mux[j] += Pt1[n] * X[n * D + j];
    for (let m = 0; m < M; m++) for (let j = 0; j < D; j++) muy[j] += P1[m] * Y[m * D + j];
    for (let j = 0; j < D; j++) {
      mux[j] /= Np;
      muy[j] /= Np;
    }
    // A = sum_mn P_mn (x_n - mu_x)(y_m - mu_y)^T = sum_mn P_mn x_n y_m^T - Np mu_x mu_y^T.
    const A = Array.from({ length: D }, () => new Array<number>(D).fill(0));
    const px = new Array<number>(D);
    for (let m = 0; m < M; m++) {
      px.fill(0);
      const row = m * N;
      for (let n = 0; n < N; n++) {
        const p = P[row + n];
        if (p === 0) continue;
        for (let j = 0; j < D; j++) px[j] += p * X[n * D + j];
      }
      for (let i = 0; i < D; i++) for (let j = 0; j < D; j++) A[i][j] += px[i] * Y[m * D + j];
    }
    for (let i = 0; i < D; i++) for (let j = 0; j < D; j++) A[i][j] -= Np * mux[i] * muy[j];
    // tr(X^T d(P^T 1) X^) and Y^T d(P 1) Y^.
    let xx = 0;
    for (let n = 0; n < N; n++) for (let j = 0; j < D; j++) xx += Pt1[n] * (X[n * D + j] - mux[j]) ** 2;
    const YY = Array.from({ length: D }, () => new Array<number>(D).fill(0));
    for (let m = 0; m < M; m++) {
      for (let i = 0; i < D; i++) {
        const a = Y[m * D + i] - muy[i];
        for (let j = 0; j < D; j++) YY[i][j] += P1[m] * a * (Y[m * D + j] - muy[j]);
      }
    }
    let nextSigma2: number;
    if (kind === 'affine') {
      let YYinv: number[][];
      try {
        YYinv = inverse(YY);
      } catch {
        throw new FitError('alignCpd: the weighted template spread is singular (affine M-step)');
      }
      B = A.map((row) => YYinv[0].map((_, j) => row.reduce((s, a, k) => s + a * YYinv[k][j], 0)));
      let trABt = 0;
      for (let i = 0; i < D; i++) for (let j = 0; j < D; j++) trABt += A[i][j] * B[i][j];
      nextSigma2 = (xx - trABt) / (Np * D);
    } else {
      const { u, v } = svd(A);
      const sign = determinant(u) * determinant(v) < 0 ? -1 : 1;
      // R = U C V^T with C = diag(1, .., 1, det(U V^T)).
      const R = Array.from({ length: D }, (_, i) =>
        Array.from({ length: D }, (_, j) => {
          let s = 0;
          for (let k = 0; k < D; k++) s += u[i][k] * (k === D - 1 ? sign : 1) * v[j][k];
          return s;
        }),
      );
      let trAR = 0;
      for (let i = 0; i < D; i++) for (let j = 0; j < D; j++) trAR += A[i][j] * R[i][j];
      let trYY = 0;
      for (let i = 0; i < D; i++) trYY += YY[i][i];
      if (!(trYY > 0)) throw new FitError('alignCpd: the weighted template spread is zero');
      const s = kind === 'similarity' ? trAR / trYY : 1;
      B = R.map((row) => row.map((x) => s * x));
      // sigma^2 = (1/(Np D)) sum_mn P_mn |x^_n - s R y^_m|^2 = (xx - 2 s trAR + s^2 trYY) / (Np D);
      // with s = trAR / trYY this is Fig. 2's (xx - s trAR) / (Np D).
      nextSigma2 = (xx - 2 * s * trAR + s * s * trYY) / (Np * D);
    }
    t = mux.map((v, i) => v - B[i].reduce((acc, b, j) => acc + b * muy[j], 0));
    if (!(nextSigma2 > 0) || !Number.isFinite(nextSigma2)) {
      // Exact fit (sigma^2 -> 0): keep a tiny positive variance so the E-step stays defined.
      nextSigma2 = 1e-12;
    }
    sigma2 = nextSigma2;
    transformCentroids(Y, M, D, B, t, TY);
    iterations++;
  }
  return { B, t, sigma2, logLikelihood, previous, iterations, converged, P };
}

/** TY[m] = B Y[m] + t for every row of the flattened M x D array Y. */
function transformCentroids(Y: Float64Array, M: number, D: number, B: number[][], t: number[], TY: Float64Array): void {
  for (let m = 0; m < M; m++) {
    for (let i = 0; i < D; i++) {
      let v = t[i];
      for (let j = 0; j < D; j++) v += B[i][j] * Y[m * D + j];
      TY[m * D + i] = v;
    }
  }
}

function mean(points: Points): number[] {
  const d = points[0].length;
  const out = new Array<number>(d).fill(0);
  for (const p of points) for (let j = 0; j < d; j++) out[j] += p[j];
  return out.map((v) => v / points.length);
}
