/**
 * Chi-square distribution: cumulative distribution and quantile, used to turn a
 * tail probability into a squared Mahalanobis radius (a Gaussian residual's
 * squared Mahalanobis distance in d dimensions is chi-square with d degrees of
 * freedom; Mahalanobis 1936).
 */
import { UsageError } from '../errors.js';

/**
 * ln Gamma(x) for x > 0 by the Lanczos approximation (g = 7, 9 coefficients;
 * Lanczos 1964; coefficients as in Press et al., Numerical Recipes, 3rd ed., 6.1),
 * relative error below 1e-14 for the arguments used here.
 */
export function logGamma(x: number): number {
  const c = [
    0.99999999999980993, 676.5203681218851, -1259.1392167224028, 771.32342877765313, -176.61502916214059,
    12.507343278686905, -0.13857109526572012, 9.9843695780195716e-6, 1.5056327351493116e-7,
  ];
  if (x < 0.5) return Math.log(Math.PI / Math.abs(Math.sin(Math.PI * x))) - logGamma(1 - x);
  const z = x - 1;
  let a = c[0];
  const t = z + 7.5;
  for (let i = 1; i < 9; i++) a += c[i] / (z + i);
  return 0.5 * Math.log(2 * Math.PI) + (z + 0.5) * Math.log(t) - t + Math.log(a);
}

/**
 * Regularised lower incomplete gamma P(a, x) = gamma(a, x) / Gamma(a), by its
 * series for x < a + 1 and by the Lentz continued fraction for Q = 1 - P
 * otherwise (Press et al., Numerical Recipes, 3rd ed., eqs. 6.2.5 and 6.2.7).
 */
export function regularizedGammaP(a: number, x: number): number {
  if (!(a > 0)) throw new UsageError(`regularizedGammaP: a must be positive, got ${a}`);
  if (!(x >= 0)) throw new UsageError(`regularizedGammaP: x must be non-negative, got ${x}`);
  if (x === 0) return 0;
  if (x === Infinity) return 1;
  const lnPrefix = a * Math.log(x) - x - logGamma(a);
  if (x < a + 1) {
    let term = 1 / a, sum = term, ap = a;
    for (let n = 0; n < 1000; n++) {
      ap += 1;
      term *= x / ap;
      sum += term;
      if (Math.abs(term) < Math.abs(sum) * 1e-16) break;
    }
    return Math.min(1, sum * Math.exp(lnPrefix));
  }
  const tiny = 1e-300;
  let b = x + 1 - a, c = 1 / tiny, d = 1 / b, h = d;
  for (let i = 1; i < 1000; i++) {
    const an = -i * (i - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < tiny) d = tiny;
    c = b + an / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return Math.max(0, 1 - Math.exp(lnPrefix) * h);
}

/** P(X <= x) for X ~ chi-square with k degrees of freedom: P(k / 2, x / 2). */
export function chiSquareCdf(x: number, k: number): number {
  if (!(k > 0)) throw new UsageError(`chiSquareCdf: degrees of freedom must be positive, got ${k}`);
  if (x <= 0) return 0;
  return regularizedGammaP(k / 2, x / 2);
}

/**
 * The p-quantile of chi-square with k degrees of freedom: the x with
 * chiSquareCdf(x, k) = p, by bisection on the CDF to 1e-12 relative width.
 * Throws UsageError unless 0 < p < 1.
 */
export function chiSquareQuantile(p: number, k: number): number {
  if (!(p > 0 && p < 1)) throw new UsageError(`chiSquareQuantile: p must be in (0, 1), got ${p}`);
  let lo = 0, hi = Math.max(1, k);
  while (chiSquareCdf(hi, k) < p) hi *= 2;
  for (let i = 0; i < 200 && hi - lo > 1e-12 * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (chiSquareCdf(mid, k) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}
