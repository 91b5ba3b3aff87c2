import { describe, it, expect } from 'vitest';
import { fCdf, fQuantile, regularizedBeta } from '../../src/template/f-distribution.js';

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
  it('rejects p outside (0, 1)', () => {
    expect(() => fQuantile(0, 3, 5)).toThrow('fQuantile: p must be in (0, 1), got 0');
  });
});

describe('fCdf and regularizedBeta', () => {
  it("gives scipy's f.cdf values to 12 digits", () => {
    expect(fCdf(2.0, 3, 16)).toBeCloseTo(0.8453720384974365, 12);
    expect(fCdf(9.0, 2, 7)).toBeCloseTo(0.988384093443902, 12);
    expect(fCdf(0.5, 3, 100)).toBeCloseTo(0.3168674711061187, 12);
  });
  it('gives I_x(1, 1) = x and I_x(a, 1) = x^a (closed forms)', () => {
    for (const x of [0.1, 0.5, 0.9]) {
      expect(regularizedBeta(x, 1, 1)).toBeCloseTo(x, 13);
      expect(regularizedBeta(x, 3, 1)).toBeCloseTo(x ** 3, 13);
    }
  });
});
