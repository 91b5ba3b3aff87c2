/**
 * Cumulative distribution functions, survival functions and quantiles of the
 * chi-square, F, Student t and standard normal distributions, built on the
 * regularized incomplete gamma and beta functions.
 *
 * References: Abramowitz & Stegun (1964), Handbook of Mathematical Functions,
 * 26.4.19 (chi-square via P(a, x)), 26.6.2 (F via I_x(a, b)), 26.7.1 (t);
 * Press et al. (2007), Numerical Recipes 3rd ed., section 6.14.
 */
import { UsageError } from '../errors.js';
import { regularizedIncompleteBeta } from './beta.js';
import { regularizedLowerGamma, regularizedUpperGamma } from './gamma.js';

function checkDegrees(name: string, label: string, df: number): void {
  if (!Number.isFinite(df) || df <= 0) throw new UsageError(`${name}: ${label} must be a finite positive number, got ${df}`);
}

function checkProbability(name: string, p: number): void {
  if (Number.isNaN(p) || p < 0 || p > 1) throw new UsageError(`${name}: p must lie in [0, 1], got ${p}`);
}

/**
 * Chi-square CDF with df degrees of freedom: F(x) = P(df/2, x/2) (A&S 26.4.19).
 * Zero for x <= 0.
 *
 * @throws UsageError when df is not finite positive or x is NaN.
 */
export function chiSquareCdf(x: number, df: number): number {
  checkDegrees('chiSquareCdf', 'df', df);
  if (Number.isNaN(x)) throw new UsageError('chiSquareCdf: x is NaN');
  if (x <= 0) return 0;
  return regularizedLowerGamma(df / 2, x / 2);
}

/**
 * Chi-square survival function 1 - F(x) = Q(df/2, x/2), computed directly so
 * tail probabilities keep their digits. One for x <= 0.
 *
 * @throws UsageError when df is not finite positive or x is NaN.
 */
export function chiSquareSurvival(x: number, df: number): number {
  checkDegrees('chiSquareSurvival', 'df', df);
  if (Number.isNaN(x)) throw new UsageError('chiSquareSurvival: x is NaN');
  if (x <= 0) return 1;
  return regularizedUpperGamma(df / 2, x / 2);
}

/**
 * Solve cdf(x) = p for x on [0, inf) with a monotone increasing cdf: bracket by
 * doubling, then safeguarded Newton-free bisection/secant (Illinois) iteration
 * to relative tolerance 1e-14.
 */
function invertIncreasing(cdf: (x: number) => number, p: number, start: number): number {
  let lo = 0;
  let hi = Math.max(start, 1e-8);
  let fhi = cdf(hi) - p;
  let guard = 0;
  while (fhi < 0) {
    lo = hi;
    hi *= 2;
    fhi = cdf(hi) - p;
    if (++guard > 2000) throw new UsageError('quantile: could not bracket the root');
  }
  let flo = cdf(lo) - p;
  // Illinois variant of regula falsi, falling back to bisection.
  let side = 0;
  for (let i = 0; i < 400; i++) {
    let x = (lo * fhi - hi * flo) / (fhi - flo);
    if (!(x > lo && x < hi)) x = 0.5 * (lo + hi);
    const fx = cdf(x) - p;
    if (fx === 0) return x;
    if (fx < 0) {
      lo = x;
      flo = fx;
      if (side === -1) fhi /= 2;
      side = -1;
    } else {
      hi = x;
      fhi = fx;
      if (side === 1) flo /= 2;
      side = 1;
    }
    if (hi - lo <= 1e-14 * Math.max(1e-300, hi)) break;
  }
  return 0.5 * (lo + hi);
}

/**
 * Chi-square quantile: the x with chiSquareCdf(x, df) = p. Starts from the
 * Wilson-Hilferty approximation (Wilson & Hilferty 1931; A&S 26.4.17) and refines by
 * bracketed root finding on the CDF (relative tolerance 1e-14). quantile(0) = 0,
 * quantile(1) = Infinity.
 *
 * @throws UsageError when p is outside [0, 1] or df is not finite positive.
 */
export function chiSquareQuantile(p: number, df: number): number {
  checkProbability('chiSquareQuantile', p);
  checkDegrees('chiSquareQuantile', 'df', df);
  if (p === 0) return 0;
  if (p === 1) return Infinity;
  const z = normalQuantile(p);
  const h = 2 / (9 * df);
  const start = Math.max(df * Math.pow(1 - h + z * Math.sqrt(h), 3), 1e-6);
  if (p > 0.5) {
    // Solve the survival equation for upper-tail accuracy.
    return invertIncreasing((x) => -chiSquareSurvival(x, df), -(1 - p), start);
  }
  return invertIncreasing((x) => chiSquareCdf(x, df), p, start);
}

/**
 * CDF of the F distribution with d1 (numerator) and d2 (denominator) degrees of
 * freedom: F(x) = I_{d1 x / (d1 x + d2)}(d1/2, d2/2) (A&S 26.6.2). Zero for x <= 0.
 *
 * @throws UsageError when d1 or d2 is not finite positive, or x is NaN.
 */
export function fCdf(x: number, d1: number, d2: number): number {
  checkDegrees('fCdf', 'd1', d1);
  checkDegrees('fCdf', 'd2', d2);
  if (Number.isNaN(x)) throw new UsageError('fCdf: x is NaN');
  if (x <= 0) return 0;
  if (x === Infinity) return 1;
  return regularizedIncompleteBeta((d1 * x) / (d1 * x + d2), d1 / 2, d2 / 2);
}

/**
 * Survival function of the F distribution, 1 - F(x) = I_{d2 / (d2 + d1 x)}(d2/2, d1/2),
 * computed directly so small p-values keep their digits. One for x <= 0.
 *
 * @throws UsageError when d1 or d2 is not finite positive, or x is NaN.
 */
export function fSurvival(x: number, d1: number, d2: number): number {
  checkDegrees('fSurvival', 'd1', d1);
  checkDegrees('fSurvival', 'd2', d2);
  if (Number.isNaN(x)) throw new UsageError('fSurvival: x is NaN');
  if (x <= 0) return 1;
  if (x === Infinity) return 0;
  return regularizedIncompleteBeta(d2 / (d2 + d1 * x), d2 / 2, d1 / 2);
}

/**
 * Standard normal quantile Phi^-1(p) by Acklam's rational approximation
 * (relative error < 1.2e-9) refined by one Halley step on
 * Phi(x) = erfc(-x / sqrt 2) / 2, giving near machine precision.
 * References: P. J. Acklam (2003), "An algorithm for computing the inverse
 * normal cumulative distribution function" (web note); Halley step as in
 * Press et al. (2007) section 6.14. quantile(0) = -Infinity, quantile(1) = Infinity.
 *
 * @throws UsageError when p is outside [0, 1].
 */
export function normalQuantile(p: number): number {
  checkProbability('normalQuantile', p);
  if (p === 0) return -Infinity;
  if (p === 1) return Infinity;
  const a = [-3.969683028665376e1, 2.209460984245205e2, -2.759285104469687e2, 1.38357751867269e2, -3.066479806614716e1, 2.506628277459239];
  const b = [-5.447609879822406e1, 1.615858368580409e2, -1.556989798598866e2, 6.680131188771972e1, -1.328068155288572e1];
  const c = [-7.784894002430293e-3, -3.223964580411365e-1, -2.400758277161838, -2.549732539343734, 4.374664141464968, 2.938163982698783];
  const d = [7.784695709041462e-3, 3.224671290700398e-1, 2.445134137142996, 3.754408661907416];
  const pLow = 0.02425;
  let x: number;
  if (p < pLow) {
    const q = Math.sqrt(-2 * Math.log(p));
    x = (((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  } else if (p <= 1 - pLow) {
    const q = p - 0.5;
    const r = q * q;
    x = ((((((a[0] * r + a[1]) * r + a[2]) * r + a[3]) * r + a[4]) * r + a[5]) * q) / (((((b[0] * r + b[1]) * r + b[2]) * r + b[3]) * r + b[4]) * r + 1);
  } else {
    const q = Math.sqrt(-2 * Math.log(1 - p));
    x = -(((((c[0] * q + c[1]) * q + c[2]) * q + c[3]) * q + c[4]) * q + c[5]) / ((((d[0] * q + d[1]) * q + d[2]) * q + d[3]) * q + 1);
  }
  // One Halley refinement step.
  const e = normalCdf(x) - p;
  const u = e * Math.sqrt(2 * Math.PI) * Math.exp((x * x) / 2);
  return x - u / (1 + (x * u) / 2);
}

/**
 * Standard normal CDF Phi(x) = erfc(-x / sqrt 2) / 2, with erfc from the
 * regularized gamma function: erfc(z) = Q(1/2, z^2) for z >= 0 (A&S 7.1.2, 6.5.17).
 */
export function normalCdf(x: number): number {
  if (Number.isNaN(x)) throw new UsageError('normalCdf: x is NaN');
  if (x === Infinity) return 1;
  if (x === -Infinity) return 0;
  const z = (x * x) / 2;
  if (x < 0) return 0.5 * regularizedUpperGamma(0.5, z);
  return 0.5 + 0.5 * regularizedLowerGamma(0.5, z);
}

/**
 * Student t CDF with df degrees of freedom (A&S 26.7.1):
 * F(t) = 1 - I_{df/(df+t^2)}(df/2, 1/2) / 2 for t >= 0, symmetric for t < 0.
 *
 * @throws UsageError when df is not finite positive or t is NaN.
 */
export function studentTCdf(t: number, df: number): number {
  checkDegrees('studentTCdf', 'df', df);
  if (Number.isNaN(t)) throw new UsageError('studentTCdf: t is NaN');
  if (t === Infinity) return 1;
  if (t === -Infinity) return 0;
  const tail = 0.5 * regularizedIncompleteBeta(df / (df + t * t), df / 2, 0.5);
  return t >= 0 ? 1 - tail : tail;
}

/**
 * Student t quantile: the t with studentTCdf(t, df) = p, by bracketed root
 * finding on the CDF (relative tolerance 1e-14).
 *
 * @throws UsageError when p is outside [0, 1] or df is not finite positive.
 */
export function studentTQuantile(p: number, df: number): number {
  checkProbability('studentTQuantile', p);
  checkDegrees('studentTQuantile', 'df', df);
  if (p === 0) return -Infinity;
  if (p === 1) return Infinity;
  if (p === 0.5) return 0;
  if (p < 0.5) return -studentTQuantile(1 - p, df);
  // Upper half: solve on the tail for accuracy.
  const tail = 1 - p;
  return invertIncreasing((t) => -0.5 * regularizedIncompleteBeta(df / (df + t * t), df / 2, 0.5), -tail, Math.max(normalQuantile(p), 1e-3));
}

/**
 * F quantile: the x with fCdf(x, d1, d2) = p, by bracketed root finding.
 *
 * @throws UsageError when p is outside [0, 1] or d1, d2 are not finite positive.
 */
export function fQuantile(p: number, d1: number, d2: number): number {
  checkProbability('fQuantile', p);
  checkDegrees('fQuantile', 'd1', d1);
  checkDegrees('fQuantile', 'd2', d2);
  if (p === 0) return 0;
  if (p === 1) return Infinity;
  if (p > 0.5) return invertIncreasing((x) => -fSurvival(x, d1, d2), -(1 - p), 1);
  return invertIncreasing((x) => fCdf(x, d1, d2), p, 1);
}
