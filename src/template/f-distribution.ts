/**
 * Snedecor's F distribution: cumulative distribution and quantile, used for the
 * tail of a Mahalanobis distance whose covariance is itself estimated (the
 * multivariate Student-t predictive of a cell: D^2 / d ~ F(d, nu)).
 */
import { UsageError } from '../errors.js';
import { logGamma } from './chi-square.js';

/**
 * Regularised incomplete beta I_x(a, b) by the Lentz continued fraction (Press et
 * al., Numerical Recipes, 3rd ed., 6.4, eqs. 6.4.5-6.4.6), using the symmetry
 * I_x(a, b) = 1 - I_{1-x}(b, a) where the fraction converges faster.
 */
export function regularizedBeta(x: number, a: number, b: number): number {
  if (!(a > 0 && b > 0)) throw new UsageError(`regularizedBeta: a and b must be positive, got ${a}, ${b}`);
  if (!(x >= 0 && x <= 1)) throw new UsageError(`regularizedBeta: x must be in [0, 1], got ${x}`);
  if (x === 0 || x === 1) return x;
  const lnFront = logGamma(a + b) - logGamma(a) - logGamma(b) + a * Math.log(x) + b * Math.log(1 - x);
  if (x > (a + 1) / (a + b + 2)) return 1 - regularizedBeta(1 - x, b, a);
  const tiny = 1e-300;
  let c = 1, d = 1 - ((a + b) * x) / (a + 1);
  if (Math.abs(d) < tiny) d = tiny;
  d = 1 / d;
  let h = d;
  for (let m = 1; m < 1000; m++) {
    const m2 = 2 * m;
    let aa = (m * (b - m) * x) / ((a - 1 + m2) * (a + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    h *= d * c;
    aa = (-(a + m) * (a + b + m) * x) / ((a + m2) * (a + 1 + m2));
    d = 1 + aa * d;
    if (Math.abs(d) < tiny) d = tiny;
    c = 1 + aa / c;
    if (Math.abs(c) < tiny) c = tiny;
    d = 1 / d;
    const del = d * c;
    h *= del;
    if (Math.abs(del - 1) < 1e-16) break;
  }
  return (Math.exp(lnFront) * h) / a;
}

/** P(F <= x) for F ~ F(d1, d2): I_{d1 x / (d1 x + d2)}(d1 / 2, d2 / 2). */
export function fCdf(x: number, d1: number, d2: number): number {
  if (!(d1 > 0 && d2 > 0)) throw new UsageError(`fCdf: degrees of freedom must be positive, got ${d1}, ${d2}`);
  if (x <= 0) return 0;
  return regularizedBeta((d1 * x) / (d1 * x + d2), d1 / 2, d2 / 2);
}

/** The p-quantile of F(d1, d2), by bisection on the CDF to 1e-12 relative width. Throws UsageError unless 0 < p < 1. */
export function fQuantile(p: number, d1: number, d2: number): number {
  if (!(p > 0 && p < 1)) throw new UsageError(`fQuantile: p must be in (0, 1), got ${p}`);
  let lo = 0, hi = 1;
  while (fCdf(hi, d1, d2) < p) hi *= 2;
  for (let i = 0; i < 300 && hi - lo > 1e-12 * hi; i++) {
    const mid = 0.5 * (lo + hi);
    if (fCdf(mid, d1, d2) < p) lo = mid;
    else hi = mid;
  }
  return 0.5 * (lo + hi);
}
