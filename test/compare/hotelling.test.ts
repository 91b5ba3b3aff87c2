import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { hotellingTwoSample } from '../../src/compare/hotelling.js';
import { sampleCovariance } from '../../src/geometry/covariance.js';
import { FitError } from '../../src/errors.js';
import { fSurvival } from '../../src/stats/distributions.js';

// R 4.2.2: the two forms written from their formulas with base R colMeans, cov, solve, pf;
// fixture test/fixtures/reference/stats-hotelling.json from scripts/fixtures/compare.R
interface Form {
  t2: number;
  f: number;
  df1: number;
  df2: number;
  p: number;
  nu?: number;
}
const fixture = JSON.parse(readFileSync('test/fixtures/reference/stats-hotelling.json', 'utf8')) as {
  source: string;
  cases: { a: number[][]; b: number[][]; pooled: Form; unequal: Form }[];
};

function summary(x: number[][]): { mean: number[]; covariance: number[][]; count: number } {
  const n = x.length;
  const mean = x[0].map((_, j) => x.reduce((acc, row) => acc + row[j], 0) / n);
  return { mean, covariance: sampleCovariance(x), count: n };
}

describe('hotellingTwoSample against base R (4 small data sets, p = 2 and 3)', () => {
  it('names R as the source', () => {
    expect(fixture.source).toMatch(/^R version 4\.2\.2/);
  });
  it('pooled form (Hotelling 1931): T^2, F, degrees of freedom and p-value match R to 10 significant digits', () => {
    for (const c of fixture.cases) {
      const r = hotellingTwoSample(summary(c.a), summary(c.b), 'pooled');
      expect(r.tSquared / c.pooled.t2).toBeCloseTo(1, 10);
      expect(r.f / c.pooled.f).toBeCloseTo(1, 10);
      expect(r.df1).toBe(c.pooled.df1);
      expect(r.df2).toBe(c.pooled.df2);
      expect(r.pValue / c.pooled.p).toBeCloseTo(1, 9);
    }
  });
  it('unequal-covariance form (Krishnamoorthy & Yu 2004): T^2, nu, F and p-value match R to 10 significant digits', () => {
    for (const c of fixture.cases) {
      const r = hotellingTwoSample(summary(c.a), summary(c.b), 'unequal');
      expect(r.tSquared / c.unequal.t2).toBeCloseTo(1, 10);
      expect(r.nu / c.unequal.nu!).toBeCloseTo(1, 10);
      expect(r.df2 / c.unequal.df2).toBeCloseTo(1, 10);
      expect(r.f / c.unequal.f).toBeCloseTo(1, 10);
      expect(r.pValue / c.unequal.p).toBeCloseTo(1, 9);
    }
  });
});

describe('hotellingTwoSample', () => {
  const g1 = { mean: [1, 2, 3], covariance: [[2, 0.3, 0], [0.3, 1, 0.1], [0, 0.1, 1.5]], count: 12 };
  const g2 = { mean: [1.5, 1.2, 3.4], covariance: [[1, 0, 0.2], [0, 2, 0], [0.2, 0, 1]], count: 9 };
  it('is symmetric: swapping the groups negates the difference and keeps T^2 and p', () => {
    for (const form of ['unequal', 'pooled'] as const) {
      const ab = hotellingTwoSample(g1, g2, form);
      const ba = hotellingTwoSample(g2, g1, form);
      expect(ba.tSquared).toBeCloseTo(ab.tSquared, 12);
      expect(ba.pValue).toBeCloseTo(ab.pValue, 12);
      ab.difference.forEach((v, i) => expect(ba.difference[i]).toBeCloseTo(-v, 14));
    }
  });
  it('gives T^2 = 0 and p = 1 for equal means', () => {
    const r = hotellingTwoSample(g1, { ...g2, mean: g1.mean });
    expect(r.tSquared).toBe(0);
    expect(r.pValue).toBe(1);
  });
  it('reduces to Welch\'s t-test squared in one dimension (nu = Welch-Satterthwaite df)', () => {
    // p = 1: T^2 = d^2 / (s1^2/n1 + s2^2/n2), nu = (v1 + v2)^2 / (v1^2/n1 + v2^2/n2) with v_i = s_i^2/n_i:
    // KY's 2 / sum (1/n_i)(2 r_i^2) = (v1 + v2)^2 / (v1^2/n1 + v2^2/n2), Welch (1947) with n_i in place of n_i - 1.
    const a = { mean: [3], covariance: [[4]], count: 10 };
    const b = { mean: [1], covariance: [[1]], count: 5 };
    const r = hotellingTwoSample(a, b);
    const v1 = 4 / 10;
    const v2 = 1 / 5;
    expect(r.tSquared).toBeCloseTo(4 / (v1 + v2), 12);
    expect(r.nu).toBeCloseTo((v1 + v2) ** 2 / (v1 * v1 / 10 + v2 * v2 / 5), 12);
  });
  it('gives a critical T^2 at which the F survival equals 1 - level, in both forms', () => {
    for (const form of ['unequal', 'pooled'] as const) {
      const r = hotellingTwoSample(g1, g2, form, 0.9);
      const factor = r.f / r.tSquared;
      expect(fSurvival(factor * r.criticalTSquared, r.df1, r.df2)).toBeCloseTo(0.1, 10);
    }
  });
  it('adds a known covariance K to W: T^2 = d^T (V1 + V2 + K)^-1 d, and K = 0 changes nothing', () => {
    const plain = hotellingTwoSample(g1, g2);
    const zero = hotellingTwoSample(g1, g2, 'unequal', 0.95, [[0, 0, 0], [0, 0, 0], [0, 0, 0]]);
    expect(zero.tSquared).toBe(plain.tSquared);
    expect(zero.pValue).toBe(plain.pValue);
    // K = W itself halves T^2 (W -> 2 W)
    const doubled = hotellingTwoSample(g1, g2, 'unequal', 0.95, plain.differenceCovariance);
    expect(doubled.tSquared).toBeCloseTo(plain.tSquared / 2, 12);
    expect(doubled.pValue).toBeGreaterThan(plain.pValue);
  });
  it('rejects a group with fewer than 2 observations', () => {
    expect(() => hotellingTwoSample(g1, { ...g2, count: 1 })).toThrow(new FitError('hotellingTwoSample: second group needs at least 2 observations, got 1'));
  });
  it('rejects the pooled form when n1 + n2 - p - 1 is not positive', () => {
    expect(() => hotellingTwoSample({ ...g1, count: 2 }, { ...g2, count: 2 }, 'pooled')).toThrow(FitError);
  });
});
