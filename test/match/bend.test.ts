import { describe, expect, it } from 'vitest';
import { applyBend, correctBend, fitBend, type BendAxis } from '../../src/match/bend.js';
import { createRng } from '../../src/random.js';

// An elongated cloud along x (half-length 20 um), the bend measured along x from the origin.
const axis: BendAxis = { axis: [1, 0, 0], centroid: [0, 0, 0], halfLength: 20 };

function cloud(count: number, seed: number): number[][] {
  const rng = createRng(seed);
  return Array.from({ length: count }, () => [40 * (rng() - 0.5), 8 * (rng() - 0.5), 8 * (rng() - 0.5)]);
}

describe('fitBend and applyBend', () => {
  it('recover a displacement a + b s + q s^2 exactly from exact residuals', () => {
    const points = cloud(60, 1);
    // By hand: with s = x / 20, a point at x = 20 (s = 1) moves by a + b + q = (0.1, 0.5 + 0.2 + 3, -0.3 + 0 - 1.5).
    const truth = [
      [0.1, 0, 0],
      [0.5, 0.2, 3],
      [-0.3, 0, -1.5],
    ];
    const moved = applyBend(points, truth, axis);
    expect(applyBend([[20, 0, 0]], truth, axis)[0]).toEqual([20.1, 3.7, -1.8]);
    const fitted = fitBend(points, moved, points.map(() => 1), axis);
    expect(fitted).not.toBeNull();
    fitted!.forEach((row, a) => row.forEach((v, p) => expect(v).toBeCloseTo(truth[a][p], 10)));
  });

  it('leaves out points without an expected position or weight, and is null when fewer than three axial positions carry weight', () => {
    const points = [
      [-10, 0, 0],
      [0, 0, 0],
      [10, 0, 0],
      [5, 1, 1],
    ];
    const expected = points.map((p) => [p[0], p[1] + 1, p[2]]);
    // Only two distinct axial positions weigh in: the quadratic is not determined.
    expect(fitBend(points, [expected[0], expected[1], null, expected[3]], [1, 1, 1, 0], axis)).toBeNull();
    const fitted = fitBend(points, expected, [1, 1, 1, 0], axis)!;
    // A pure shift of +1 in y: a = (0, 1, 0), no slope, no curvature.
    expect(fitted[1][0]).toBeCloseTo(1, 12);
    expect(fitted[1][1]).toBeCloseTo(0, 12);
    expect(fitted[1][2]).toBeCloseTo(0, 12);
  });
});

describe('correctBend', () => {
  // An E-step whose expected positions are the unbent points (the template), objective = minus the
  // weighted squared residual in nats, so that undoing a bend raises it.
  const template = cloud(120, 2);
  const estepFor = (scale: number) => (mapped: readonly (readonly number[])[]) => {
    let sse = 0;
    mapped.forEach((y, i) => y.forEach((v, a) => (sse += (v - template[i][a]) ** 2)));
    return { expected: template.map((p) => p.slice()), weight: template.map(() => 1), objective: -scale * sse };
  };
  const bent = applyBend(template, [[0, 0, 0], [0, 0, 2.5], [0, 0, 0]], axis);

  it('undoes a bend when the objective gains more than the BIC penalty (3d / 2) ln n', () => {
    const r = correctBend(estepFor(1), bent, axis);
    expect(r.penalty).toBeCloseTo(4.5 * Math.log(120), 12);
    expect(r.applied).toBe(true);
    r.mapped.forEach((y, i) => y.forEach((v, a) => expect(v).toBeCloseTo(template[i][a], 8)));
  });

  it('keeps the points as they were when the gain is below the penalty', () => {
    // The same bend, but the objective barely cares (its gain ends below 21.5 nats).
    const r = correctBend(estepFor(1e-3), bent, axis);
    expect(r.gain).toBeGreaterThan(0);
    expect(r.gain).toBeLessThan(r.penalty);
    expect(r.applied).toBe(false);
    expect(r.mapped).toEqual(bent);
  });
});
