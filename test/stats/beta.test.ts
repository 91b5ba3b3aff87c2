import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { regularizedIncompleteBeta } from '../../src/stats/beta.js';
import { UsageError } from '../../src/errors.js';

describe('regularizedIncompleteBeta I_x(a, b)', () => {
  it('equals x^a for b = 1 and 1 - (1-x)^b for a = 1 (exact closed forms)', () => {
    for (const x of [0.05, 0.3, 0.77, 0.99]) {
      expect(regularizedIncompleteBeta(x, 3.5, 1)).toBeCloseTo(Math.pow(x, 3.5), 14);
      expect(regularizedIncompleteBeta(x, 1, 2.25)).toBeCloseTo(1 - Math.pow(1 - x, 2.25), 14);
    }
  });
  it('equals 3x^2 - 2x^3 for a = b = 2 (exact)', () => {
    for (const x of [0.1, 0.5, 0.9]) expect(regularizedIncompleteBeta(x, 2, 2)).toBeCloseTo(3 * x * x - 2 * x * x * x, 14);
  });
  it('obeys the symmetry I_x(a, b) = 1 - I_{1-x}(b, a) (property, 12 digits)', () => {
    fc.assert(
      fc.property(
        fc.double({ min: 0.001, max: 0.999, noNaN: true }),
        fc.double({ min: 0.2, max: 80, noNaN: true }),
        fc.double({ min: 0.2, max: 80, noNaN: true }),
        (x, a, b) => {
          expect(regularizedIncompleteBeta(x, a, b) + regularizedIncompleteBeta(1 - x, b, a)).toBeCloseTo(1, 12);
        },
      ),
      { seed: 17, numRuns: 80 },
    );
  });
  it('rejects x outside [0, 1]', () => {
    expect(() => regularizedIncompleteBeta(1.2, 1, 1)).toThrow(new UsageError('regularizedIncompleteBeta: x must lie in [0, 1], got 1.2'));
  });
});
