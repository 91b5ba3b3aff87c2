import { describe, it, expect } from 'vitest';
import { chiSquareCdf, chiSquareQuantile, fCdf, fQuantile, logGamma, regularizedIncompleteBeta, regularizedLowerGamma } from '../../src/stats/index.js';

// Reference values: scipy 1.10.1 scipy.stats.chi2 (Debian python3-scipy, /usr/bin/python3), printed with repr().
describe('chiSquareQuantile', () => {
  const cases: [number, number, number][] = [
    [0.95, 2, 5.991464547107979],
    [0.95, 3, 7.814727903251179],
    [0.999, 2, 13.815510557964274],
    [0.999, 3, 16.26623619623813],
    [0.5, 5, 4.351460191095526],
    [0.99, 1, 6.6348966010212145],
  ];
  for (const [p, k, expected] of cases) {
    it(`gives scipy's chi2.ppf(${p}, ${k}) = ${expected} to 10 digits`, () => {
      expect(chiSquareQuantile(p, k)).toBeCloseTo(expected, 10);
    });
  }
  it('rejects p outside [0, 1]', () => {
    expect(() => chiSquareQuantile(1.5, 3)).toThrow('p must lie in [0, 1], got 1.5');
  });
});

describe('chiSquareCdf', () => {
  const cases: [number, number, number][] = [
    [1.0, 3, 0.19874804309879915],
    [7.8, 3, 0.9496689021401467],
    [16.0, 5, 0.9931559260775795],
    [0.3, 2, 0.1392920235749422],
  ];
  for (const [x, k, expected] of cases) {
    it(`gives scipy's chi2.cdf(${x}, ${k}) = ${expected} to 12 digits`, () => {
      expect(chiSquareCdf(x, k)).toBeCloseTo(expected, 12);
    });
  }
  it('is 1 - exp(-x/2) for two degrees of freedom (closed form)', () => {
    for (const x of [0.1, 1, 5, 20]) expect(chiSquareCdf(x, 2)).toBeCloseTo(1 - Math.exp(-x / 2), 13);
  });
  it('is 0 at and below zero', () => {
    expect(chiSquareCdf(0, 3)).toBe(0);
    expect(chiSquareCdf(-1, 3)).toBe(0);
  });
});

describe('logGamma and regularizedLowerGamma', () => {
  it('gives ln Gamma(n) = ln (n-1)! for integers and ln Gamma(1/2) = ln sqrt(pi)', () => {
    expect(logGamma(5)).toBeCloseTo(Math.log(24), 12);
    expect(logGamma(10)).toBeCloseTo(Math.log(362880), 11);
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 12);
  });
  it('gives P(1, x) = 1 - exp(-x) (exponential distribution)', () => {
    for (const x of [0.01, 0.5, 3, 30]) expect(regularizedLowerGamma(1, x)).toBeCloseTo(1 - Math.exp(-x), 13);
  });
});

// Reference values: scipy 1.10.1 scipy.stats.f (Debian python3-scipy, /usr/bin/python3), printed with repr().
describe('fQuantile', () => {
  const cases: [number, number, number, number][] = [
    [0.999, 3, 16, 9.005936855560376],
    [0.95, 3, 8, 4.06618055135116],
    [0.99, 2, 10, 7.559432157547899],
    [0.5, 3, 100, 0.7940687381140362],
    [0.999, 2, 7, 21.688998555040314],
  ];
  for (const [p, a, b, expected] of cases) {
    it(`gives scipy's f.ppf(${p}, ${a}, ${b}) = ${expected} to 9 digits`, () => {
      expect(fQuantile(p, a, b)).toBeCloseTo(expected, 9);
    });
  }
  it('rejects p outside [0, 1]', () => {
    expect(() => fQuantile(-0.1, 3, 5)).toThrow('p must lie in [0, 1], got -0.1');
  });
});

describe('fCdf and regularizedIncompleteBeta', () => {
  it("gives scipy's f.cdf values to 12 digits", () => {
    expect(fCdf(2.0, 3, 16)).toBeCloseTo(0.8453720384974365, 12);
    expect(fCdf(9.0, 2, 7)).toBeCloseTo(0.988384093443902, 12);
    expect(fCdf(0.5, 3, 100)).toBeCloseTo(0.3168674711061187, 12);
  });
  it('gives I_x(1, 1) = x and I_x(a, 1) = x^a (closed forms)', () => {
    for (const x of [0.1, 0.5, 0.9]) {
      expect(regularizedIncompleteBeta(x, 1, 1)).toBeCloseTo(x, 13);
      expect(regularizedIncompleteBeta(x, 3, 1)).toBeCloseTo(x ** 3, 13);
    }
  });
});
