import { describe, it, expect } from 'vitest';
import { alignCpd } from '../../src/match/cpd.js';
import { FitError, UsageError } from '../../src/errors.js';
import { createRng, randomRotation, shuffle, type Rng } from '../../src/random.js';
import { determinant, multiply, transpose } from '../../src/geometry/index.js';
import type { Transform } from '../../src/types.js';
import { generateLayout } from '../support/animals.js';
import { axisRotation, makeSample, transformError } from './registration-support.js';

/** Uniform points in the bounding box of `points`, enlarged by `margin` um on every side. */
function uniformOutliers(points: number[][], count: number, rng: Rng, margin: number): number[][] {
  const d = points[0].length;
  const lo = Array.from({ length: d }, (_, j) => Math.min(...points.map((p) => p[j])) - margin);
  const hi = Array.from({ length: d }, (_, j) => Math.max(...points.map((p) => p[j])) + margin);
  return Array.from({ length: count }, () => lo.map((l, j) => l + (hi[j] - l) * rng()));
}

const layout = generateLayout(createRng(501), { cells: 190 });
const template = layout.positions;
const moderateRotation = axisRotation([0.3, 1, 0.4], (30 * Math.PI) / 180);
const moderate: Transform = {
  kind: 'similarity',
  linear: moderateRotation.map((r) => r.map((v) => v * 1.08)),
  translation: [12, -7, 30],
};

describe('alignCpd', () => {
  it('recovers a known similarity from noise-free points (moderate rotation), returning the map sample -> template', () => {
    const sample = makeSample(template, moderate, createRng(1));
    const result = alignCpd(template, sample, { kind: 'similarity', starts: 1 });
    expect(transformError(result.transform, moderate, template)).toBeLessThan(1e-3);
    const expected = transpose(moderateRotation).map((r) => r.map((v) => v / 1.08));
    result.transform.linear.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(expected[i][j], 4)));
    expect(result.transform.kind).toBe('similarity');
  });

  it('recovers a rigid transform with kind "rigid" under 0.3 um noise; the linear part is a proper rotation', () => {
    const truth: Transform = { kind: 'rigid', linear: axisRotation([1, -0.5, 0.2], -0.4), translation: [-3, 4, 5] };
    const sample = makeSample(template, truth, createRng(2), 0.3);
    const result = alignCpd(template, sample, { kind: 'rigid', starts: 1 });
    expect(result.transform.kind).toBe('rigid');
    const rtr = multiply(transpose(result.transform.linear), result.transform.linear);
    rtr.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(i === j ? 1 : 0, 9)));
    expect(determinant(result.transform.linear)).toBeCloseTo(1, 9);
    expect(transformError(result.transform, truth, template)).toBeLessThan(0.2);
    // sigma^2 estimates the per-coordinate noise variance 0.3^2 = 0.09 um^2 (plus what the mixture absorbs).
    expect(result.sigma2).toBeGreaterThan(0.03);
    expect(result.sigma2).toBeLessThan(0.3);
  });

  it('recovers a known affine map with kind "affine" from noise-free points', () => {
    const truth: Transform = {
      kind: 'affine',
      linear: multiply(axisRotation([0, 0, 1], 0.3), [
        [1.05, 0.04, 0],
        [0, 0.97, 0.03],
        [0.02, 0, 1.01],
      ]),
      translation: [1, 2, 3],
    };
    const sample = makeSample(template, truth, createRng(3));
    const result = alignCpd(template, sample, { kind: 'affine', starts: 1 });
    expect(result.transform.kind).toBe('affine');
    expect(transformError(result.transform, truth, template)).toBeLessThan(1e-3);
  });

  it('tolerates 20% uniform outliers (w = 0.2): within 0.3 um RMS of the truth under 0.3 um noise', () => {
    const rng = createRng(4);
    const inliers = makeSample(template, moderate, rng, 0.3);
    // 20% of all points: 48 outliers beside 190 inliers, uniform over the head's box enlarged by 10 um.
    const sample = shuffle([...inliers, ...uniformOutliers(inliers, 48, rng, 10)], rng);
    const result = alignCpd(template, sample, { kind: 'similarity', w: 0.2, starts: 1 });
    expect(transformError(result.transform, moderate, template)).toBeLessThan(0.3);
  });

  it('finds any rotation of a noise-free sample from its starting orientations', () => {
    const truth: Transform = { kind: 'rigid', linear: randomRotation(createRng(5), 3), translation: [50, 60, -70] };
    const sample = makeSample(template, truth, createRng(6));
    const result = alignCpd(template, sample, { kind: 'rigid', rng: createRng(7), starts: 6, maxIterations: 60 });
    expect(result.starts).toBe(6);
    expect(transformError(result.transform, truth, template)).toBeLessThan(1e-2);
  });

  it('works in 2-D', () => {
    const flat = generateLayout(createRng(8), { cells: 80, dim: 2 }).positions;
    const a = 0.5;
    const truth: Transform = {
      kind: 'similarity',
      linear: [
        [1.1 * Math.cos(a), -1.1 * Math.sin(a)],
        [1.1 * Math.sin(a), 1.1 * Math.cos(a)],
      ],
      translation: [4, -9],
    };
    const sample = makeSample(flat, truth, createRng(9));
    const result = alignCpd(flat, sample, { kind: 'similarity', starts: 1 });
    expect(transformError(result.transform, truth, flat)).toBeLessThan(1e-3);
  });

  it('returns the posterior P (M x N) on request, each column summing to at most 1', () => {
    const sample = makeSample(template, moderate, createRng(10), 0.3).slice(0, 150);
    const result = alignCpd(template, sample, { kind: 'similarity', starts: 1, keepPosterior: true, maxIterations: 40 });
    expect(result.posterior).toHaveLength(template.length);
    expect(result.posterior![0]).toHaveLength(150);
    for (let n = 0; n < 150; n++) {
      const column = result.posterior!.reduce((s, row) => s + row[n], 0);
      expect(column).toBeGreaterThan(0);
      expect(column).toBeLessThanOrEqual(1 + 1e-12);
    }
  });

  it('resumes screened starts exactly: screening then continuing equals one uninterrupted run', () => {
    const flat = generateLayout(createRng(13), { cells: 60, dim: 2 }).positions;
    const truth: Transform = { kind: 'similarity', linear: [[0.9, -0.3], [0.3, 0.9]], translation: [2, 3] };
    const sample = makeSample(flat, truth, createRng(14), 0.4);
    const base = { kind: 'similarity' as const, starts: 1, maxIterations: 30, tolerance: 0 };
    const resumed = alignCpd(flat, sample, { ...base, screenIterations: 7 });
    const straight = alignCpd(flat, sample, { ...base, screenIterations: 30 });
    expect(resumed.iterations).toBe(30);
    expect(resumed).toEqual(straight);
  });

  it('gives identical results for the same seed', () => {
    const sample = makeSample(template, moderate, createRng(11), 0.5);
    const options = { kind: 'similarity' as const, rng: createRng(12), starts: 7, maxIterations: 20 };
    const a = alignCpd(template, sample, options);
    const b = alignCpd(template, sample, { ...options, rng: createRng(12) });
    expect(b).toEqual(a);
  });

  it('rejects bad options and too few points with messages naming the problem', () => {
    expect(() => alignCpd(template, template, { kind: 'similarity', w: 1 })).toThrow(
      new UsageError('alignCpd: w must be in [0, 1), got 1'),
    );
    expect(() => alignCpd(template, template, { kind: 'similarity', starts: 6 })).toThrow(UsageError);
    expect(() => alignCpd(template, template, { kind: 'shear' as 'affine' })).toThrow(UsageError);
    expect(() => alignCpd(template, [[0, 0, 0]], { kind: 'rigid' })).toThrow(
      new FitError('alignCpd needs at least 4 sample points in 3-D, got 1'),
    );
  });
});
