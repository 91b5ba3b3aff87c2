import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { procrustesDistances } from '../../src/compare/procrustes-distance.js';
import { createRng, randomNormal, randomRotation } from '../../src/random.js';
import { FitError } from '../../src/errors.js';

// R 4.2.2 shapes 1.2.7 procdist (full, partial, Riemannian); fixture
// test/fixtures/reference/stats-procrustes.json from scripts/fixtures/compare.R
const fixture = JSON.parse(readFileSync('test/fixtures/reference/stats-procrustes.json', 'utf8')) as {
  source: string;
  a: number[][];
  b: number[][];
  full: number;
  partial: number;
  riemannian: number;
};

describe('procrustesDistances', () => {
  it('matches R shapes::procdist (full, partial, Riemannian) to 10 digits', () => {
    expect(fixture.source).toContain('shapes 1.2.7');
    const r = procrustesDistances(fixture.a, fixture.b);
    expect(r.full).toBeCloseTo(fixture.full, 10);
    expect(r.partial).toBeCloseTo(fixture.partial, 10);
    expect(r.riemannian).toBeCloseTo(fixture.riemannian, 10);
  });
  it('is zero for a rotated, scaled, translated copy and symmetric in its arguments (property, 8 digits)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), (seed) => {
        const rng = createRng(seed);
        const x = Array.from({ length: 7 }, () => [randomNormal(rng), randomNormal(rng), randomNormal(rng)].map((v) => v * 10));
        const r = randomRotation(rng, 3);
        const c = 0.5 + rng();
        const y = x.map((p) => r.map((row) => c * row.reduce((acc, v, k) => acc + v * p[k], 0) + 5));
        expect(procrustesDistances(x, y).full).toBeCloseTo(0, 7);
        const z = x.map((p) => p.map((v) => v + randomNormal(rng)));
        expect(procrustesDistances(x, z).full).toBeCloseTo(procrustesDistances(z, x).full, 10);
      }),
      { seed: 8, numRuns: 30 },
    );
  });
  it('does not treat a mirror image as the same shape', () => {
    const x = [[0, 0, 0], [1, 0, 0], [0, 2, 0], [0, 0, 3], [1, 1, 1]];
    const mirrored = x.map(([a, b, c]) => [-a, b, c]);
    expect(procrustesDistances(x, mirrored).full).toBeGreaterThan(0.1);
  });
  it('rejects configurations of different sizes', () => {
    expect(() => procrustesDistances([[0, 0], [1, 0], [0, 1]], [[0, 0], [1, 0]])).toThrow(new FitError('procrustesDistances: configurations have 3 and 2 points'));
  });
});
