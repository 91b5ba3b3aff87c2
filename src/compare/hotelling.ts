/**
 * Two-sample Hotelling's T-squared test from group summaries (mean, covariance,
 * count), in two forms:
 *
 * - `unequal` (default): the unequal-covariance (multivariate Behrens-Fisher)
 *   form with the approximate degrees of freedom of Krishnamoorthy & Yu (2004),
 *   "Modified Nel and Van der Merwe test for the multivariate Behrens-Fisher
 *   problem", Statistics & Probability Letters 66:161-169:
 *
 *     V_i = S_i / n_i,  V = V_1 + V_2,  T^2 = d^T V^-1 d,  d = mean_1 - mean_2
 *     nu  = (p + p^2) / sum_i (1/n_i) [ tr((V_i V^-1)^2) + (tr(V_i V^-1))^2 ]
 *     F   = (nu - p + 1) / (nu p) T^2  ~  F(p, nu - p + 1) under H0.
 *
 *   For p = 1 this is Welch's test with n_i in place of n_i - 1 in the
 *   Satterthwaite degrees of freedom. The formula is written from memory of the paper and checked against the same formula evaluated in R
 *   (test/fixtures/reference/stats-hotelling.json).
 *
 * - `pooled`: Hotelling (1931), Annals of Mathematical Statistics 2:360-378;
 *   Mardia, Kent & Bibby (1979), Multivariate Analysis, section 3.6.1:
 *
 *     S_p = ((n_1 - 1) S_1 + (n_2 - 1) S_2) / (n_1 + n_2 - 2)
 *     T^2 = n_1 n_2 / (n_1 + n_2) d^T S_p^-1 d
 *     F   = (n_1 + n_2 - p - 1) / ((n_1 + n_2 - 2) p) T^2  ~  F(p, n_1 + n_2 - p - 1).
 *
 * Shapes: means length p, covariances p x p symmetric positive definite
 * (sample covariances with divisor n - 1), counts >= 2.
 *
 * An optional `known` covariance K (p x p, positive semi-definite) is added to the
 * covariance of the difference, W -> W + K, for uncertainty from elsewhere that is
 * estimated with many degrees of freedom (here: the alignment of the two frames). It
 * enters T^2 and the matrices V_i W^-1 of nu, but adds no term of its own to nu's
 * denominator (treated as known, as in Satterthwaite 1946 for a term with infinite df).
 */
import { FitError, UsageError } from '../errors.js';
import { multiply, scaleMatrix, addMatrices, trace } from '../geometry/linear-algebra.js';
import { precisionMatrix } from '../geometry/covariance.js';
import type { Matrix } from '../types.js';
import { fQuantile, fSurvival } from '../stats/distributions.js';

/** A group's summary: mean vector, covariance (divisor n - 1) and number of observations. */
export interface GroupSummary {
  readonly mean: readonly number[];
  readonly covariance: Matrix;
  readonly count: number;
}

export type HotellingForm = 'unequal' | 'pooled';

export interface HotellingResult {
  readonly form: HotellingForm;
  /** d = mean_1 - mean_2. */
  readonly difference: number[];
  /** Estimated covariance W of d: V_1 + V_2 (unequal) or S_p (1/n_1 + 1/n_2) (pooled), plus `known`. T^2 = d^T W^-1 d. */
  readonly differenceCovariance: number[][];
  readonly tSquared: number;
  /** F = factor * T^2. */
  readonly f: number;
  readonly df1: number;
  /** Denominator degrees of freedom (not an integer in the unequal form). */
  readonly df2: number;
  /** Krishnamoorthy-Yu nu (unequal form); n_1 + n_2 - 2 (pooled form). */
  readonly nu: number;
  /** P(F(df1, df2) >= f). */
  readonly pValue: number;
  /** T^2 value at the given confidence level: the (1 - alpha) confidence ellipsoid of the true difference is (delta - d)^T W^-1 (delta - d) <= criticalTSquared. */
  readonly criticalTSquared: number;
}

function checkGroup(name: string, g: GroupSummary, p: number): void {
  if (g.mean.length !== p) throw new UsageError(`hotellingTwoSample: ${name} mean has length ${g.mean.length}, expected ${p}`);
  if (g.covariance.length !== p || g.covariance.some((row) => row.length !== p)) {
    throw new UsageError(`hotellingTwoSample: ${name} covariance is not ${p}x${p}`);
  }
  if (!Number.isInteger(g.count) || g.count < 2) {
    throw new FitError(`hotellingTwoSample: ${name} needs at least 2 observations, got ${g.count}`);
  }
  for (const v of g.mean) if (!Number.isFinite(v)) throw new UsageError(`hotellingTwoSample: ${name} mean has a non-finite value`);
}

/**
 * Two-sample Hotelling's T-squared test (see the module comment for formulas).
 *
 * @param a, b  group summaries (same dimension p)
 * @param form  'unequal' (Krishnamoorthy & Yu 2004) or 'pooled' (Hotelling 1931)
 * @param level confidence level for `criticalTSquared`, in (0, 1); default 0.95
 * @param known optional known covariance added to the covariance of the difference
 * @throws FitError when a count is below 2, a covariance is not positive
 *   definite, or the denominator degrees of freedom are not positive;
 *   UsageError for mismatched shapes or a bad level.
 */
export function hotellingTwoSample(
  a: GroupSummary,
  b: GroupSummary,
  form: HotellingForm = 'unequal',
  level = 0.95,
  known?: Matrix,
): HotellingResult {
  const p = a.mean.length;
  if (p < 1) throw new UsageError('hotellingTwoSample: empty mean vector');
  if (!(level > 0 && level < 1)) throw new UsageError(`hotellingTwoSample: level must lie in (0, 1), got ${level}`);
  checkGroup('first group', a, p);
  checkGroup('second group', b, p);
  const n1 = a.count;
  const n2 = b.count;
  const d = a.mean.map((v, i) => v - b.mean[i]);
  if (known && (known.length !== p || known.some((row) => row.length !== p))) {
    throw new UsageError(`hotellingTwoSample: known covariance is not ${p}x${p}`);
  }
  const addKnown = (m: number[][]): number[][] => (known ? addMatrices(m, known) : m);
  let w: number[][];
  let factor: number;
  let df2: number;
  let nu: number;
  if (form === 'pooled') {
    df2 = n1 + n2 - p - 1;
    if (df2 <= 0) throw new FitError(`hotellingTwoSample (pooled): n1 + n2 - p - 1 = ${df2}, needs to be positive`);
    const sp = scaleMatrix(addMatrices(scaleMatrix(a.covariance, n1 - 1), scaleMatrix(b.covariance, n2 - 1)), 1 / (n1 + n2 - 2));
    w = addKnown(scaleMatrix(sp, 1 / n1 + 1 / n2));
    nu = n1 + n2 - 2;
    factor = df2 / (nu * p);
  } else if (form === 'unequal') {
    const v1 = scaleMatrix(a.covariance, 1 / n1);
    const v2 = scaleMatrix(b.covariance, 1 / n2);
    w = addKnown(addMatrices(v1, v2));
    const wInv = precisionOrThrow(w);
    const a1 = multiply(v1, wInv);
    const a2 = multiply(v2, wInv);
    const term = (m: number[][], n: number): number => (trace(multiply(m, m)) + trace(m) ** 2) / n;
    nu = (p + p * p) / (term(a1, n1) + term(a2, n2));
    df2 = nu - p + 1;
    if (!(df2 > 0)) throw new FitError(`hotellingTwoSample (unequal): approximate degrees of freedom nu - p + 1 = ${df2}, needs to be positive`);
    factor = df2 / (nu * p);
  } else {
    throw new UsageError(`hotellingTwoSample: form must be 'unequal' or 'pooled', got '${String(form)}'`);
  }
  const wInv = precisionOrThrow(w);
  let t2 = 0;
  for (let i = 0; i < p; i++) for (let j = 0; j < p; j++) t2 += d[i] * wInv[i][j] * d[j];
  t2 = Math.max(0, t2);
  const f = factor * t2;
  return {
    form,
    difference: d,
    differenceCovariance: w,
    tSquared: t2,
    f,
    df1: p,
    df2,
    nu,
    pValue: fSurvival(f, p, df2),
    criticalTSquared: fQuantile(level, p, df2) / factor,
  };
}

function precisionOrThrow(w: number[][]): number[][] {
  try {
    return precisionMatrix(w);
  } catch (e) {
    throw new FitError(`hotellingTwoSample: the covariance of the mean difference is not positive definite (${(e as Error).message})`);
  }
}
