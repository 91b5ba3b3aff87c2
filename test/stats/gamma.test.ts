import { describe, expect, it } from 'vitest';
import { logGamma, regularizedLowerGamma, regularizedUpperGamma } from '../../src/stats/gamma.js';
import { UsageError } from '../../src/errors.js';

describe('logGamma', () => {
  it('gives ln((n-1)!) at integers and ln(sqrt(pi)) at 1/2 to 13 digits (exact values)', () => {
    expect(logGamma(1)).toBeCloseTo(0, 13);
    expect(logGamma(5)).toBeCloseTo(Math.log(24), 13);
    expect(logGamma(11)).toBeCloseTo(Math.log(3628800), 12);
    expect(logGamma(0.5)).toBeCloseTo(0.5 * Math.log(Math.PI), 13);
  });
  it('rejects zero and negative arguments', () => {
    expect(() => logGamma(0)).toThrow(new UsageError('logGamma: x must be a finite positive number, got 0'));
  });
});

describe('regularizedLowerGamma P(a, x) and regularizedUpperGamma Q(a, x)', () => {
  it('equal 1 - e^-x and e^-x for a = 1 (exact closed form)', () => {
    for (const x of [0.01, 0.7, 2, 9, 40]) {
      expect(regularizedLowerGamma(1, x)).toBeCloseTo(-Math.expm1(-x), 14);
      expect(regularizedUpperGamma(1, x) / Math.exp(-x)).toBeCloseTo(1, 12);
    }
  });
  it('sum to one on both sides of the series / continued-fraction switch at x = a + 1', () => {
    for (const [a, x] of [[2.5, 3.4], [2.5, 3.6], [10, 4], [10, 30]]) {
      expect(regularizedLowerGamma(a, x) + regularizedUpperGamma(a, x)).toBeCloseTo(1, 14);
    }
  });
  it('rejects a negative x, naming the function', () => {
    expect(() => regularizedLowerGamma(2, -1)).toThrow(new UsageError('regularizedLowerGamma: x must be a non-negative number, got -1'));
  });
});
