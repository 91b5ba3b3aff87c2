/**
 * Confidence interval for the length of a displacement from the confidence
 * ellipsoid of the displacement vector.
 */
import { UsageError } from '../errors.js';
import { symmetricEigen } from '../geometry/linear-algebra.js';
import type { Matrix } from '../types.js';

/**
 * The range of |delta| over the ellipsoid E = { delta : (delta - d)^T W^-1 (delta - d) <= c }:
 *
 *   [ min_{delta in E} |delta|,  max_{delta in E} |delta| ].
 *
 * With c the critical T^2 of Hotelling's test at level 1 - alpha, E is the
 * (1 - alpha) confidence ellipsoid of the true displacement, so this interval
 * covers the true length with probability >= 1 - alpha (projection of a
 * confidence region, Scheffe 1953; conservative, simultaneous over all
 * directions). Its lower end is 0 exactly when the test does not reject
 * (d^T W^-1 d <= c), so the interval and the test always agree.
 *
 * Method: Lagrange conditions delta = lambda W^-1 (delta - d), i.e. in W's eigenbasis
 * (eigenvalues s_k, coordinates e_k of d) delta_k = lambda e_k / (lambda - s_k), with
 * lambda solving sum_k e_k^2 s_k / (lambda - s_k)^2 = c: lambda > max s_k for the
 * maximum, lambda < 0 for the minimum (the trust-region secular equation; Nocedal
 * & Wright 2006, Numerical Optimization, section 4.3). Solved by bisection; the
 * "hard case" (d orthogonal to the top eigenvector) is handled in closed form.
 *
 * Shapes: d length p, W p x p symmetric positive definite, c > 0.
 * @throws UsageError for non-positive c, mismatched shapes or a W that is not positive definite.
 */
export function lengthConfidenceInterval(d: readonly number[], w: Matrix, c: number): [number, number] {
  const p = d.length;
  if (!(c > 0) || !Number.isFinite(c)) throw new UsageError(`lengthConfidenceInterval: c must be a finite positive number, got ${c}`);
  if (w.length !== p || w.some((row) => row.length !== p)) throw new UsageError(`lengthConfidenceInterval: W is not ${p}x${p}`);
  const { values: s, vectors } = symmetricEigen(w);
  if (!(Math.min(...s) > 0)) throw new UsageError('lengthConfidenceInterval: W is not positive definite');
  // e_k = u_k . d, where eigenvectors are the columns of `vectors`.
  const e = s.map((_, k) => d.reduce((acc, v, i) => acc + v * vectors[i][k], 0));
  const sMax = Math.max(...s);
  const g = (lambda: number): number => e.reduce((acc, ek, k) => acc + (ek * ek * s[k]) / (lambda - s[k]) ** 2, 0) - c;
  const normAt = (lambda: number): number => Math.sqrt(e.reduce((acc, ek, k) => acc + ((lambda * ek) / (lambda - s[k])) ** 2, 0));
  const spread = Math.sqrt(e.reduce((acc, ek, k) => acc + ek * ek * s[k], 0) / c);

  // Maximum.
  let upper: number;
  const top = s.map((sk, k) => (sMax - sk <= 1e-12 * sMax ? k : -1)).filter((k) => k >= 0);
  const start = sMax * (1 + 1e-12) + 1e-300;
  if (g(start) <= 0) {
    // Hard case: e_k ~ 0 on the top eigenspace; lambda = sMax and the remaining budget goes along the top direction.
    let used = 0;
    let rest = 0;
    for (let k = 0; k < p; k++) {
      if (top.includes(k)) continue;
      const dk = (sMax * e[k]) / (sMax - s[k]);
      used += (dk - e[k]) ** 2 / s[k];
      rest += dk * dk;
    }
    const eTop = Math.sqrt(top.reduce((acc, k) => acc + e[k] * e[k], 0));
    const along = eTop + Math.sqrt(Math.max(0, c - used) * sMax);
    upper = Math.sqrt(rest + along * along);
  } else {
    let lo = start;
    let hi = sMax + spread + 1e-300;
    while (g(hi) > 0) hi = sMax + 2 * (hi - sMax);
    for (let i = 0; i < 200 && hi - lo > 1e-15 * hi; i++) {
      const mid = 0.5 * (lo + hi);
      if (g(mid) > 0) lo = mid;
      else hi = mid;
    }
    upper = normAt(0.5 * (lo + hi));
  }

  // Minimum: zero when the origin lies inside the ellipsoid.
  const originStatistic = e.reduce((acc, ek, k) => acc + (ek * ek) / s[k], 0);
  if (originStatistic <= c) return [0, upper];
  let lo = -spread;
  let hi = 0;
  while (g(lo) > 0) lo *= 2;
  for (let i = 0; i < 200 && hi - lo > 1e-15 * Math.abs(lo); i++) {
    const mid = 0.5 * (lo + hi);
    if (g(mid) > 0) hi = mid;
    else lo = mid;
  }
  return [normAt(0.5 * (lo + hi)), upper];
}
