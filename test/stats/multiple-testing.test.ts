import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { benjaminiHochberg } from '../../src/stats/multiple-testing.js';
import { UsageError } from '../../src/errors.js';

// R 4.2.2 stats::p.adjust(method = "BH"); fixture test/fixtures/reference/stats-bh.json from scripts/fixtures/compare.R
const fixture = JSON.parse(readFileSync('test/fixtures/reference/stats-bh.json', 'utf8')) as {
  source: string;
  cases: { p: number[]; q: number[] }[];
};

describe('benjaminiHochberg', () => {
  it('matches R p.adjust(method = "BH") to 14 digits on four cases, including ties, 0 and 1', () => {
    expect(fixture.source).toContain('p.adjust');
    for (const c of fixture.cases) {
      const q = benjaminiHochberg(c.p);
      expect(q.length).toBe(c.q.length);
      q.forEach((v, i) => expect(v).toBeCloseTo(c.q[i], 14));
    }
  });
  it('reproduces the worked example of Benjamini & Hochberg (1995, section 4): 4 of 15 rejected at 0.05', () => {
    // The 15 p-values of the paper's example (Benjamini & Hochberg 1995, J. R. Stat. Soc. B 57, p. 297).
    const p = [0.0001, 0.0004, 0.0019, 0.0095, 0.0201, 0.0278, 0.0298, 0.0344, 0.0459, 0.324, 0.4262, 0.5719, 0.6528, 0.759, 1.0];
    expect(benjaminiHochberg(p).filter((q) => q <= 0.05).length).toBe(4);
  });
  it('never lowers a p-value, keeps the order of p-values, and does not mutate its input (property)', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 1, noNaN: true }), { minLength: 1, maxLength: 40 }), (p) => {
        const frozen = Object.freeze(p.slice());
        const q = benjaminiHochberg(frozen);
        for (let i = 0; i < p.length; i++) {
          expect(q[i]).toBeGreaterThanOrEqual(p[i]);
          expect(q[i]).toBeLessThanOrEqual(1);
          for (let j = 0; j < p.length; j++) if (p[i] < p[j]) expect(q[i]).toBeLessThanOrEqual(q[j]);
        }
      }),
      { seed: 5, numRuns: 60 },
    );
  });
  it('returns an empty array for no p-values', () => {
    expect(benjaminiHochberg([])).toEqual([]);
  });
  it('rejects a p-value outside [0, 1], naming its index', () => {
    expect(() => benjaminiHochberg([0.1, 1.5])).toThrow(new UsageError('benjaminiHochberg: p-value 1 must lie in [0, 1], got 1.5'));
  });
});
