import { describe, it, expect } from 'vitest';
import { canonicalFrame, centroidSize, principalAxes } from '../../src/template/frame.js';
import { applyTransform, determinant } from '../../src/geometry/index.js';
import { createRng, randomRotation } from '../../src/random.js';
import { moved } from './helpers.js';

describe('centroidSize', () => {
  it('is sqrt of the summed squared distances to the centroid (unit square: sqrt(2))', () => {
    expect(centroidSize([[0, 0], [1, 0], [1, 1], [0, 1]])).toBeCloseTo(Math.SQRT2, 14);
  });
});

describe('principalAxes', () => {
  it('returns a proper rotation (det +1) ordered by decreasing variance', () => {
    const pts = [[-10, 0, 0], [12, 1, 0], [3, -4, 1], [0, 5, -1], [-5, 0, 2], [0, -2, -2], [8, 0, 0.5]];
    const c = pts[0].map((_, a) => pts.reduce((s, p) => s + p[a], 0) / pts.length);
    const e = principalAxes(pts.map((p) => p.map((v, a) => v - c[a])));
    expect(determinant(e)).toBeCloseTo(1, 12);
  });

  it('points the first axis toward the long tail (positive third moment)', () => {
    // Projections on x: -1, -1, -1, 3 (skewed toward +x); flipping the input flips the answer back.
    const pts = [[-1, 0.1], [-1, -0.1], [-1, 0], [3, 0]];
    expect(principalAxes(pts)[0][0]).toBeGreaterThan(0);
    expect(principalAxes(pts.map(([x, y]) => [-x, y]))[0][0]).toBeLessThan(0);
  });

  it('falls back to the farthest cell when the third moment is zero (symmetric layout)', () => {
    // Symmetric along x: the point farthest along the axis, first in order, is (-4, 0.5).
    const pts = [[-4, 0.5], [4, -0.5], [-1, 0], [1, 0]];
    const e = principalAxes(pts);
    const p0 = e[0][0] * -4 + e[1][0] * 0.5;
    expect(p0).toBeGreaterThan(0);
  });
});

describe('canonicalFrame', () => {
  it('maps any rotated, translated copy of a configuration to the same coordinates (to 9 digits)', () => {
    const rng = createRng(3);
    const pts = Array.from({ length: 12 }, () => [rng() * 40, rng() * 10, rng() * 5 + rng()]);
    const a = applyTransform(canonicalFrame(pts, 1), pts);
    const other = moved(pts, randomRotation(rng, 3), 1, [5, -7, 100]);
    const b = applyTransform(canonicalFrame(other, 1), other);
    for (let i = 0; i < a.length; i++) for (let j = 0; j < 3; j++) expect(b[i][j]).toBeCloseTo(a[i][j], 9);
  });

  it('scales by the given size factor about the centroid', () => {
    const pts = [[0, 0], [4, 0], [4, 1], [0, 1], [1, 3]];
    const a = applyTransform(canonicalFrame(pts, 2), pts);
    expect(centroidSize(a)).toBeCloseTo(2 * centroidSize(pts), 12);
    expect(a.reduce((s, p) => s + p[0], 0)).toBeCloseTo(0, 12);
  });
});
