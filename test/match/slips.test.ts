import { describe, expect, it } from 'vitest';
import { applyToPoint, determinant } from '../../src/geometry/index.js';
import { rotationAbout, slipMoves } from '../../src/match/slips.js';

// A flat elongated cloud of means: long axis x, then y, then z (principal axes = the coordinate axes).
const means: number[][] = [];
for (let i = -4; i <= 4; i++) for (let j = -2; j <= 2; j++) for (let k = -1; k <= 1; k++) means.push([3 * i, 2 * j, 1.5 * k]);
const axes = [
  [1, 0, 0],
  [0, 1, 0],
  [0, 0, 1],
];
const centroid = [0, 0, 0];

describe('slipMoves', () => {
  it('gives 6 translations by the step along the principal axes and 6 rotations in 3-D, 4 translations in 2-D', () => {
    const moves = slipMoves(axes, centroid, means, 2);
    expect(moves).toHaveLength(12);
    const shifts = moves.slice(0, 6).map((m) => m.translation);
    expect(shifts).toEqual([
      [-2, -0, -0],
      [2, 0, 0],
      [-0, -2, -0],
      [0, 2, 0],
      [-0, -0, -2],
      [0, 0, 2],
    ]);
    const flat = slipMoves([[1, 0], [0, 1]], [0, 0], means.map((m) => m.slice(0, 2)), 2);
    expect(flat).toHaveLength(4);
  });

  it('rotates rigidly about the centroid and moves the means by about one step (root mean square)', () => {
    const moves = slipMoves(axes, [1, 2, 3], means.map((m) => [m[0] + 1, m[1] + 2, m[2] + 3]), 2).slice(6);
    for (const m of moves) {
      expect(determinant(m.linear)).toBeCloseTo(1, 12);
      const c = applyToPoint(m, [1, 2, 3]);
      c.forEach((v, a) => expect(v).toBeCloseTo([1, 2, 3][a], 12));
      let s = 0;
      for (const p of means) {
        const q = [p[0] + 1, p[1] + 2, p[2] + 3];
        const r = applyToPoint(m, q);
        s += r.reduce((acc, v, a) => acc + (v - q[a]) ** 2, 0);
      }
      // RMS chord 2 R sin(theta / 2) with theta = step / R (R the RMS radius): slightly below the step,
      // by 1.7% for the smallest radius here (R = 3.1 um about the long axis).
      const rms = Math.sqrt(s / means.length);
      expect(rms).toBeGreaterThan(0.97 * 2);
      expect(rms).toBeLessThanOrEqual(2 + 1e-12);
    }
  });
});

describe('rotationAbout', () => {
  it('turns x into y by a quarter turn about z (right-hand rule) and keeps points on the axis', () => {
    const r = rotationAbout([0, 0, 1], [0, 0, 0], Math.PI / 2);
    const x = applyToPoint(r, [1, 0, 0]);
    [0, 1, 0].forEach((v, a) => expect(x[a]).toBeCloseTo(v, 12));
    const shifted = rotationAbout([0, 0, 1], [5, 0, 0], Math.PI);
    const p = applyToPoint(shifted, [6, 0, 7]);
    [4, 0, 7].forEach((v, a) => expect(p[a]).toBeCloseTo(v, 12));
  });
});
