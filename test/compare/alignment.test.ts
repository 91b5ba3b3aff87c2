import { describe, expect, it } from 'vitest';
import { fitRobustAlignment, fitSymmetricSimilarity, leaveOneOutAlignment } from '../../src/compare/alignment.js';
import { fitSimilarity } from '../../src/geometry/procrustes.js';
import { applyToPoint, invertTransform } from '../../src/geometry/transform.js';
import { createRng, randomNormal, randomRotation } from '../../src/random.js';
import { FitError } from '../../src/errors.js';

const iso = (v: number): number[][] => [[v, 0, 0], [0, v, 0], [0, 0, v]];

/** 30 cells; B = T^-1(A + noise), with `displaced` cells moved by `shift` um in B. */
function scenario(seed: number, displaced: number, shift: number) {
  const rng = createRng(seed);
  const target = Array.from({ length: 30 }, () => [(rng() - 0.5) * 200, (rng() - 0.5) * 80, (rng() - 0.5) * 60]);
  const r = randomRotation(rng, 3);
  const c = 1.15;
  const t = [40, -12, 7];
  // truth: a = c R b + t, so b = R^T (a - t) / c
  const source = target.map((a, i) => {
    const noisy = a.map((v) => v + 0.3 * randomNormal(rng));
    if (i < displaced) noisy[0] += shift;
    const centred = noisy.map((v, j) => v - t[j]);
    return [0, 1, 2].map((k) => (r[0][k] * centred[0] + r[1][k] * centred[1] + r[2][k] * centred[2]) / c);
  });
  const truth = { linear: r.map((row) => row.map((v) => v * c)), translation: t };
  const cov = Array.from({ length: 30 }, () => iso(0.045));
  return { input: { source, target, sourceCovariances: cov, targetCovariances: cov }, truth };
}

function worstError(transform: { linear: number[][] | readonly (readonly number[])[]; translation: readonly number[] }, truth: { linear: number[][]; translation: number[] }, points: number[][]): number {
  return Math.max(
    ...points.map((p) => {
      const a = applyToPoint({ kind: 'similarity', ...transform }, p);
      const b = applyToPoint({ kind: 'similarity', ...truth }, p);
      return Math.hypot(a[0] - b[0], a[1] - b[1], a[2] - b[2]);
    }),
  );
}

describe('fitRobustAlignment', () => {
  it('recovers the frame within 0.3 um although 5 of 30 cells are displaced by 15 um, and gives those cells weight 0', () => {
    const { input, truth } = scenario(1, 5, 15);
    const robust = fitRobustAlignment(input);
    expect(worstError(robust.transform, truth, input.source)).toBeLessThan(0.3);
    expect(robust.robustWeights.slice(0, 5)).toEqual([0, 0, 0, 0, 0]);
    expect(robust.robustWeights.slice(5).every((w) => w > 0)).toBe(true);
    expect(robust.converged).toBe(true);
  });
  it('does better than the plain weighted least-squares fit, which the displaced cells drag by more than 1 um', () => {
    const { input, truth } = scenario(1, 5, 15);
    const plain = fitSimilarity(input.source, input.target);
    expect(worstError(plain.transform, truth, input.source)).toBeGreaterThan(1);
  });
  it('fits no scale under kind = rigid (scale of the linear part is exactly 1)', () => {
    const { input } = scenario(2, 0, 0);
    const rigid = fitRobustAlignment(input, { kind: 'rigid' });
    expect(rigid.fit.scale).toBe(1);
    expect(rigid.kind).toBe('rigid');
  });
  it('reports a residual scale near 1 when residuals match the stated covariances', () => {
    const { input } = scenario(3, 0, 0);
    // noise 0.3 um per axis on one side: residual variance 0.09 = 2 x 0.045 per axis
    const r = fitRobustAlignment(input);
    expect(r.residualScale).toBeLessThan(1.3);
  });
  it('refuses fewer than 4 shared cells in 3-D', () => {
    const p = [[0, 0, 0], [1, 0, 0], [0, 1, 0]];
    const cov = [iso(1), iso(1), iso(1)];
    expect(() => fitRobustAlignment({ source: p, target: p, sourceCovariances: cov, targetCovariances: cov })).toThrow(
      new FitError('robust alignment needs at least 4 shared cells, got 3'),
    );
  });
});

describe('fitSymmetricSimilarity (Horn 1987, section 2.E)', () => {
  it('gives exactly the inverse transform when source and target are swapped', () => {
    const { input } = scenario(4, 0, 0);
    const w = input.source.map((_, i) => 1 + (i % 3));
    const forward = fitSymmetricSimilarity(input.source, input.target, { weights: w });
    const backward = fitSymmetricSimilarity(input.target, input.source, { weights: w });
    const inv = invertTransform(forward.transform);
    backward.transform.linear.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(inv.linear[i][j], 10)));
    backward.transform.translation.forEach((v, i) => expect(v).toBeCloseTo(inv.translation[i], 8));
  });
  it('recovers an exact similarity (scale 1.15) to 10 digits', () => {
    const { input } = scenario(5, 0, 0);
    const exactTarget = input.source.map((p) => applyToPoint({ kind: 'similarity', linear: [[0, -1.15, 0], [1.15, 0, 0], [0, 0, 1.15]], translation: [1, 2, 3] }, p));
    const fit = fitSymmetricSimilarity(input.source, exactTarget);
    expect(fit.scale).toBeCloseTo(1.15, 10);
    expect(fit.meanSquaredResidual).toBeCloseTo(0, 10);
  });
});

describe('fitRobustAlignment with several cells displaced the same way', () => {
  it('leaves out 6 of 30 cells shifted by 2 um (about 7 standard errors) along x, and fits the frame as well as a fit told which cells moved (5 seeds)', () => {
    for (const seed of [21, 22, 23, 24, 25]) {
      const { input, truth } = scenario(seed, 6, 2);
      const robust = fitRobustAlignment(input);
      expect(robust.robustWeights.slice(0, 6)).toEqual([0, 0, 0, 0, 0, 0]);
      // oracle: the same kind of fit on the 24 undisplaced cells only
      const oracle = fitSymmetricSimilarity(input.source.slice(6), input.target.slice(6));
      const oracleError = worstError(oracle.transform, truth, input.source);
      const robustError = worstError(robust.transform, truth, input.source);
      expect(robustError).toBeLessThan(oracleError + 0.1);
      // while the plain fit on all 30 cells is dragged further
      expect(worstError(fitSymmetricSimilarity(input.source, input.target).transform, truth, input.source)).toBeGreaterThan(robustError);
    }
  });
});

describe('leaveOneOutAlignment', () => {
  it('gives a prediction covariance that matches the spread of refits over simulated noise (3-D similarity, within 25%)', () => {
    // Monte Carlo check of the sandwich formula: 300 noisy copies fitted with the same weights
    // (all 1, the cell left out); the spread of the cell's predicted position against the formula.
    const rng = createRng(99);
    const base = Array.from({ length: 20 }, () => [(rng() - 0.5) * 200, (rng() - 0.5) * 80, (rng() - 0.5) * 60]);
    const cov = base.map(() => iso(0.25));
    const zero = base.map(() => iso(0));
    const index = 3;
    const weights = base.map((_, j) => (j === index ? 0 : 1));
    const predictions: number[][] = [];
    for (let rep = 0; rep < 300; rep++) {
      const target = base.map((p) => p.map((v) => v + 0.5 * randomNormal(rng)));
      predictions.push(applyToPoint(fitSymmetricSimilarity(base, target, { weights }).transform, base[index]));
    }
    const exact = fitSymmetricSimilarity(base, base);
    const result = {
      kind: 'similarity' as const,
      transform: exact.transform,
      fit: exact,
      precisionWeights: base.map(() => 1),
      robustWeights: base.map(() => 1),
      standardizedResiduals: base.map(() => 0),
      residualScale: 1,
      cutoff: 4,
      iterations: 0,
      converged: true,
    };
    const predicted = leaveOneOutAlignment({ source: base, target: base, sourceCovariances: zero, targetCovariances: cov }, result, index).predictionCovariance;
    const mean = [0, 1, 2].map((j) => predictions.reduce((acc, p) => acc + p[j], 0) / predictions.length);
    const trace = [0, 1, 2].reduce((acc, j) => acc + predictions.reduce((a2, p) => a2 + (p[j] - mean[j]) ** 2, 0) / (predictions.length - 1), 0);
    const predictedTrace = predicted[0][0] + predicted[1][1] + predicted[2][2];
    expect(predictedTrace / trace).toBeGreaterThan(0.75);
    expect(predictedTrace / trace).toBeLessThan(1.25);
  });
  it('leaves the cell out: its own displacement does not move the transform', () => {
    const { input } = scenario(30, 0, 0);
    const moved = { ...input, target: input.target.map((p, i) => (i === 2 ? [p[0] + 1, p[1], p[2]] : p)) };
    const a = leaveOneOutAlignment(input, fitRobustAlignment(input), 2);
    const b = leaveOneOutAlignment(moved, fitRobustAlignment(moved), 2);
    a.transform.translation.forEach((v, j) => expect(b.transform.translation[j]).toBeCloseTo(v, 2));
  });
});
