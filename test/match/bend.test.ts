import { describe, expect, it } from 'vitest';
import { applyBend, correctBend, type BendAxis } from '../../src/match/bend.js';
import { createRng } from '../../src/random.js';

// An elongated cloud along x (half-length 20 um), the bend measured along x from the origin, across y and z.
const axis: BendAxis = {
  axis: [1, 0, 0],
  centroid: [0, 0, 0],
  halfLength: 20,
  across: [
    [0, 1, 0],
    [0, 0, 1],
  ],
  spacing: 2,
};

function cloud(count: number, seed: number): number[][] {
  const rng = createRng(seed);
  return Array.from({ length: count }, () => [40 * (rng() - 0.5), 8 * (rng() - 0.5), 8 * (rng() - 0.5)]);
}

describe('applyBend', () => {
  it('moves each point across the axis by (s^2 - <s^2>) sum_j q_j v_j (hand computation)', () => {
    // s = -1, 0, 1: s^2 = 1, 0, 1, <s^2> = 2/3; q = (3, -1.5) along y and z.
    const moved = applyBend(
      [
        [-20, 0, 0],
        [0, 0, 0],
        [20, 5, 1],
      ],
      [3, -1.5],
      axis,
    );
    const expected = [
      [-20, 1, -0.5],
      [0, -2, 1],
      [20, 6, 0.5],
    ];
    moved.forEach((p, i) => p.forEach((v, a) => expect(v).toBeCloseTo(expected[i][a], 12)));
  });

  it('keeps the points\' centroid and their positions along the axis', () => {
    const points = cloud(50, 3);
    const moved = applyBend(points, [1.7, -0.4], axis);
    for (let a = 0; a < 3; a++) {
      const before = points.reduce((s, p) => s + p[a], 0), after = moved.reduce((s, p) => s + p[a], 0);
      expect(after).toBeCloseTo(before, 9);
    }
    moved.forEach((p, i) => expect(p[0]).toBe(points[i][0]));
  });
});

describe('correctBend', () => {
  // Objective: minus the squared residual to the unbent points, in nats, so that undoing a bend raises it.
  const template = cloud(120, 2);
  const objectiveFor = (scale: number) => (mapped: readonly (readonly number[])[]) => {
    let sse = 0;
    mapped.forEach((y, i) => y.forEach((v, a) => (sse += (v - template[i][a]) ** 2)));
    return -scale * sse;
  };
  const bent = applyBend(template, [2.5, 0], axis);

  it('undoes a bend when the objective gains more than the BIC penalty ((d - 1) / 2) ln n', () => {
    const r = correctBend(objectiveFor(1), bent, axis);
    expect(r.penalty).toBeCloseTo(Math.log(120), 12);
    expect(r.applied).toBe(true);
    expect(r.curvatures[0]).toBeCloseTo(-2.5, 6);
    expect(r.curvatures[1]).toBeCloseTo(0, 6);
    r.mapped.forEach((y, i) => y.forEach((v, a) => expect(v).toBeCloseTo(template[i][a], 6)));
  });

  it('keeps the points as they were when the gain is below the penalty', () => {
    // The same bend, but the objective barely cares (its whole gain stays below ln 120 = 4.8 nats).
    const r = correctBend(objectiveFor(1e-3), bent, axis);
    expect(r.gain).toBeGreaterThan(0);
    expect(r.gain).toBeLessThan(r.penalty);
    expect(r.applied).toBe(false);
    expect(r.mapped).toEqual(bent);
  });

  it('stops after the given number of objective evaluations and leaves too small samples alone', () => {
    let calls = 0;
    const counting = (y: readonly (readonly number[])[]) => {
      calls++;
      return objectiveFor(1)(y);
    };
    correctBend(counting, bent, axis, 7);
    expect(calls).toBe(8); // the start, then 7 trials
    const few = bent.slice(0, 5);
    const r = correctBend(objectiveFor(1), few, axis);
    expect(r.applied).toBe(false);
    expect(r.mapped).toEqual(few);
  });
});
