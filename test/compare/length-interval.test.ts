import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { lengthConfidenceInterval } from '../../src/compare/length-interval.js';
import { createRng, randomNormal, randomRotation } from '../../src/random.js';
import { UsageError } from '../../src/errors.js';

const norm = (v: readonly number[]): number => Math.hypot(...v);

describe('lengthConfidenceInterval', () => {
  it('is [|d| - r, |d| + r] for an isotropic W = s^2 I with r = s sqrt(c) (hand derivation: a ball)', () => {
    const d = [3, 4, 0];
    const [lo, hi] = lengthConfidenceInterval(d, [[0.25, 0, 0], [0, 0.25, 0], [0, 0, 0.25]], 4);
    expect(lo).toBeCloseTo(5 - 1, 10);
    expect(hi).toBeCloseTo(5 + 1, 10);
  });
  it('starts at 0 exactly when the origin lies inside the ellipsoid (the test does not reject)', () => {
    const w = [[1, 0], [0, 4]];
    expect(lengthConfidenceInterval([1.9, 0], w, 4)[0]).toBe(0); // d^T W^-1 d = 3.61 <= 4
    expect(lengthConfidenceInterval([2.1, 0], w, 4)[0]).toBeGreaterThan(0); // 4.41 > 4
  });
  it('along a principal axis gives |d| -/+ sqrt(c s_k) when d lies on the longest axis', () => {
    // d along the axis of variance 4; the farthest point is d + 2 sqrt(c) along it, the nearest d - 2 sqrt(c).
    const [lo, hi] = lengthConfidenceInterval([10, 0], [[4, 0], [0, 1]], 1);
    expect(lo).toBeCloseTo(8, 10);
    expect(hi).toBeCloseTo(12, 10);
  });
  it('handles the hard case: d orthogonal to the longest axis', () => {
    // W = diag(1, 9), c = 1, d = (0.5, 0): the farthest point uses the long axis: max over the boundary
    // of x^2 + y^2 with (x - 0.5)^2 + y^2 / 9 = 1; at lambda = 9: x = 9 * 0.5 / 8 = 0.5625, y^2 = 9 (1 - 0.0625^2).
    const [, hi] = lengthConfidenceInterval([0.5, 0], [[1, 0], [0, 9]], 1);
    expect(hi).toBeCloseTo(Math.sqrt(0.5625 ** 2 + 9 * (1 - 0.0625 ** 2)), 9);
  });
  it('brackets |delta| for every point delta of the ellipsoid, and both ends are attained on its boundary (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 100000 }), (seed) => {
        const rng = createRng(seed);
        const r = randomRotation(rng, 3);
        const s = [0.2 + 3 * rng(), 0.2 + 3 * rng(), 0.2 + 3 * rng()];
        const w = r.map((ri) => r.map((rj) => ri.reduce((acc, v, k) => acc + v * s[k] * rj[k], 0)));
        const d = [randomNormal(rng) * 4, randomNormal(rng) * 4, randomNormal(rng) * 4];
        const c = 1 + 10 * rng();
        const [lo, hi] = lengthConfidenceInterval(d, w, c);
        // boundary points delta = d + sqrt(c) R diag(sqrt s) u, |u| = 1
        let minSeen = Infinity;
        let maxSeen = 0;
        for (let i = 0; i < 2000; i++) {
          const u = [randomNormal(rng), randomNormal(rng), randomNormal(rng)];
          const nu = norm(u);
          const z = u.map((v, k) => (v / nu) * Math.sqrt(s[k] * c));
          const delta = d.map((v, a) => v + r[a].reduce((acc, rv, k) => acc + rv * z[k], 0));
          const len = norm(delta);
          minSeen = Math.min(minSeen, len);
          maxSeen = Math.max(maxSeen, len);
        }
        expect(maxSeen).toBeLessThanOrEqual(hi + 1e-9);
        expect(minSeen).toBeGreaterThanOrEqual(lo - 1e-9);
        expect(maxSeen).toBeGreaterThan(hi - 0.05 * hi);
        if (lo > 0) expect(minSeen).toBeLessThan(lo + 0.05 * hi);
      }),
      { seed: 42, numRuns: 25 },
    );
  });
  it('rejects a non-positive c', () => {
    expect(() => lengthConfidenceInterval([1, 1], [[1, 0], [0, 1]], 0)).toThrow(new UsageError('lengthConfidenceInterval: c must be a finite positive number, got 0'));
  });
});
