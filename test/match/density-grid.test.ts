import { describe, expect, it } from 'vitest';
import { boundingVolume } from '../../src/match/density-grid.js';
import { createRng, randomRotation } from '../../src/random.js';

/** A regular grid filling the box [0, a] x [0, b] x [0, c] (5 points per side): its covariance is diagonal. */
function box(a: number, b: number, c: number): number[][] {
  const pts: number[][] = [];
  for (let i = 0; i <= 4; i++) for (let j = 0; j <= 4; j++) for (let k = 0; k <= 4; k++) pts.push([(a * i) / 4, (b * j) / 4, (c * k) / 4]);
  return pts;
}

describe('boundingVolume', () => {
  it('is the box volume when the points fill a box aligned with the axes', () => {
    // Sides 80, 30, 20 um: distinct spreads, so the principal axes are the coordinate axes.
    expect(boundingVolume(box(80, 30, 20))).toBeCloseTo(80 * 30 * 20, 6);
  });

  it('does not depend on the sample orientation (an axis-aligned box of a turned head would)', () => {
    const pts = box(80, 30, 20);
    const rng = createRng(9);
    for (let t = 0; t < 5; t++) {
      const r = randomRotation(rng, 3);
      const turned = pts.map((p) => r.map((row) => row[0] * p[0] + row[1] * p[1] + row[2] * p[2] + 50));
      expect(boundingVolume(turned) / boundingVolume(pts)).toBeCloseTo(1, 9);
    }
  });

  it('keeps a flat sample (zero spread along one axis) positive', () => {
    const flat = box(10, 6, 0);
    const v = boundingVolume(flat);
    expect(v).toBeGreaterThan(0);
    expect(v).toBeCloseTo(10 * 6 * 1e-6 * 10, 12);
  });
});
