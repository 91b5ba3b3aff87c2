import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import { UsageError } from '../../src/errors.js';
import { inverse } from '../../src/geometry/linear-algebra.js';
import { chiSquare2Quantile, covarianceEllipse, marginalCovariance } from '../../src/report/ellipse.js';

// scipy 1.10.1 stats.chi2.ppf(p, 2) and numpy 1.24.2 linalg.eigh; fixture test/fixtures/cell-summary.json,
// made by scripts/fixtures/cell-summary.py
const fixture = JSON.parse(readFileSync(new URL('../fixtures/cell-summary.json', import.meta.url), 'utf8')) as {
  ellipses: { covariance: number[][]; p: number; chi2: number; semiAxes: number[]; angle: number }[];
};

describe('chiSquare2Quantile', () => {
  it('gives the chi-square 2-dof quantile 5.991 at p = 0.95 (every chi-square table)', () => {
    expect(chiSquare2Quantile(0.95)).toBeCloseTo(5.991, 3);
  });

  it('agrees with scipy chi2.ppf(p, 2) to 12 digits', () => {
    for (const e of fixture.ellipses) expect(chiSquare2Quantile(e.p)).toBeCloseTo(e.chi2, 12);
  });

  it('rejects probabilities outside (0, 1)', () => {
    expect(() => chiSquare2Quantile(1)).toThrow(UsageError);
    expect(() => chiSquare2Quantile(0)).toThrow(/must be in \(0, 1\), got 0/);
  });
});

describe('covarianceEllipse', () => {
  it('has the semi-axes and major-axis angle that numpy eigh gives (12 digits)', () => {
    expect(fixture.ellipses.length).toBeGreaterThanOrEqual(12);
    for (const e of fixture.ellipses) {
      const got = covarianceEllipse([1, -2], e.covariance, e.p);
      expect(got.centre).toEqual([1, -2]);
      expect(got.semiAxes[0]).toBeCloseTo(e.semiAxes[0], 12);
      expect(got.semiAxes[1]).toBeCloseTo(e.semiAxes[1], 12);
      expect(got.angle).toBeCloseTo(e.angle, 12);
    }
  });

  it('puts every boundary point at squared Mahalanobis distance r^2 = -2 ln(1 - p)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.05, max: 9, noNaN: true }),
        fc.double({ min: 0.05, max: 9, noNaN: true }),
        fc.double({ min: -0.95, max: 0.95, noNaN: true }),
        fc.double({ min: 0.05, max: 0.995, noNaN: true }),
        fc.double({ min: 0, max: 2 * Math.PI, noNaN: true }),
        (va, vb, rho, p, phi) => {
          const c = rho * Math.sqrt(va * vb);
          const sigma = [[va, c], [c, vb]];
          const e = covarianceEllipse([0, 0], sigma, p);
          const [a, b] = e.semiAxes;
          const x = [
            a * Math.cos(phi) * Math.cos(e.angle) - b * Math.sin(phi) * Math.sin(e.angle),
            a * Math.cos(phi) * Math.sin(e.angle) + b * Math.sin(phi) * Math.cos(e.angle),
          ];
          const pr = inverse(sigma);
          const d2 = x[0] * (pr[0][0] * x[0] + pr[0][1] * x[1]) + x[1] * (pr[1][0] * x[0] + pr[1][1] * x[1]);
          expect(d2 / chiSquare2Quantile(p)).toBeCloseTo(1, 8);
          expect(a).toBeGreaterThanOrEqual(b);
        },
      ),
      { seed: 11, numRuns: 60 },
    );
  });

  it('rejects a matrix with a negative eigenvalue and a matrix that is not 2 x 2', () => {
    expect(() => covarianceEllipse([0, 0], [[1, 2], [2, 1]], 0.95)).toThrow(/not positive semi-definite/);
    expect(() => covarianceEllipse([0, 0, 0], [[1, 0, 0], [0, 1, 0], [0, 0, 1]], 0.95)).toThrow(UsageError);
  });
});

describe('marginalCovariance', () => {
  it('picks rows and columns u, v of the full covariance', () => {
    const s = [[1, 2, 3], [2, 5, 6], [3, 6, 9]];
    expect(marginalCovariance(s, 0, 2)).toEqual([[1, 3], [3, 9]]);
    expect(marginalCovariance(s, 1, 2)).toEqual([[5, 6], [6, 9]]);
  });
});
