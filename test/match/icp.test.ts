import { describe, it, expect } from 'vitest';
import { alignIcp, startingPoses } from '../../src/match/icp.js';
import { FitError, UsageError } from '../../src/errors.js';
import { createRng, randomRotation } from '../../src/random.js';
import { determinant, multiply, transpose } from '../../src/geometry/index.js';
import type { Transform } from '../../src/types.js';
import { generateLayout } from '../support/animals.js';
import { axisRotation, makeSample, transformError } from './registration-support.js';

function similarity(rotation: number[][], scale: number, translation: number[]): Transform {
  return { kind: 'similarity', linear: rotation.map((r) => r.map((v) => v * scale)), translation };
}

const layout = generateLayout(createRng(401), { cells: 190 });
const template = layout.positions;
// Moderate rotation: 30 degrees about a tilted axis; scale 1.08; a translation of tens of um.
const moderate = similarity(axisRotation([0.3, 1, 0.4], (30 * Math.PI) / 180), 1.08, [12, -7, 30]);

describe('alignIcp', () => {
  it('recovers a known similarity exactly from noise-free points (moderate rotation), as the map sample -> template', () => {
    const sample = makeSample(template, moderate, createRng(1));
    const result = alignIcp(template, sample, { rng: createRng(2), starts: 5, trimFraction: 0 });
    expect(transformError(result.transform, moderate, template)).toBeLessThan(1e-6);
    // The linear part is the inverse: (1.08 R)^-1 = R^T / 1.08.
    const expected = transpose(moderate.linear).map((r) => r.map((v) => v / 1.08 ** 2));
    result.transform.linear.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(expected[i][j], 6)));
    expect(result.rmsResidual).toBeLessThan(1e-6);
    expect(result.starts).toBe(5);
  });

  it('recovers a known similarity to within 0.3 um RMS under 0.3 um point noise (trimmed, moderate rotation)', () => {
    const sample = makeSample(template, moderate, createRng(3), 0.3);
    const result = alignIcp(template, sample, { rng: createRng(4), starts: 5 });
    expect(transformError(result.transform, moderate, template)).toBeLessThan(0.3);
  });

  it('recovers a rigid transform with kind "rigid": the linear part is a proper rotation', () => {
    const truth: Transform = { kind: 'rigid', linear: axisRotation([1, -0.5, 0.2], -0.4), translation: [-3, 4, 5] };
    const sample = makeSample(template, truth, createRng(5), 0.2);
    const result = alignIcp(template, sample, { rng: createRng(6), kind: 'rigid', starts: 5 });
    expect(result.transform.kind).toBe('rigid');
    const rtr = multiply(transpose(result.transform.linear), result.transform.linear);
    rtr.forEach((row, i) => row.forEach((v, j) => expect(v).toBeCloseTo(i === j ? 1 : 0, 9)));
    expect(determinant(result.transform.linear)).toBeCloseTo(1, 9);
    expect(transformError(result.transform, truth, template)).toBeLessThan(0.3);
  });

  it('recovers an affine map with kind "affine" from noise-free points', () => {
    const truth: Transform = {
      kind: 'affine',
      linear: multiply(axisRotation([0, 0, 1], 0.3), [
        [1.05, 0.04, 0],
        [0, 0.97, 0.03],
        [0.02, 0, 1.01],
      ]),
      translation: [1, 2, 3],
    };
    const sample = makeSample(template, truth, createRng(7));
    const result = alignIcp(template, sample, { rng: createRng(8), kind: 'affine', starts: 5, trimFraction: 0 });
    expect(transformError(result.transform, truth, template)).toBeLessThan(1e-6);
  });

  it('finds any rotation of a noise-free sample from its 24 starting orientations', () => {
    const truth = similarity(randomRotation(createRng(9), 3), 0.93, [50, 60, -70]);
    const sample = makeSample(template, truth, createRng(10));
    const result = alignIcp(template, sample, { rng: createRng(11), trimFraction: 0 });
    expect(result.starts).toBe(24);
    expect(transformError(result.transform, truth, template)).toBeLessThan(1e-6);
  });

  it('works in 2-D', () => {
    const flat = generateLayout(createRng(12), { cells: 80, dim: 2 }).positions;
    const a = 0.5;
    const truth = similarity(
      [
        [Math.cos(a), -Math.sin(a)],
        [Math.sin(a), Math.cos(a)],
      ],
      1.1,
      [4, -9],
    );
    const sample = makeSample(flat, truth, createRng(13));
    const result = alignIcp(flat, sample, { rng: createRng(14), starts: 3, trimFraction: 0 });
    expect(transformError(result.transform, truth, flat)).toBeLessThan(1e-6);
  });

  it('gives identical results for the same seed', () => {
    const sample = makeSample(template, moderate, createRng(15), 0.5);
    const a = alignIcp(template, sample, { rng: createRng(16), starts: 8, maxIterations: 30 });
    const b = alignIcp(template, sample, { rng: createRng(16), starts: 8, maxIterations: 30 });
    expect(b).toEqual(a);
  });

  it('rejects bad options and too few points with messages naming the problem', () => {
    const rng = createRng(17);
    expect(() => alignIcp(template, [[0, 0]], { rng })).toThrow(
      new UsageError('alignIcp: sample row 0 has 2 coordinates, expected 3'),
    );
    expect(() => alignIcp(template, template, { rng, trimFraction: 1 })).toThrow(
      new UsageError('alignIcp: trimFraction must be in [0, 1), got 1'),
    );
    expect(() => alignIcp(template, template, { rng, starts: 0 })).toThrow(UsageError);
    expect(() => alignIcp(template, [], { rng })).toThrow(new FitError('alignIcp: the sample has no points'));
    expect(() =>
      alignIcp(
        template,
        [
          [0, 0, 0],
          [1, 0, 0],
          [0, 1, 0],
        ],
        { rng },
      ),
    ).toThrow(new FitError('alignIcp needs at least 4 kept sample points, got 3 (3 points, trimFraction 0.2)'));
  });
});

describe('startingPoses', () => {
  it('lists the identity, the 4 proper principal-axis rotations, then random rotations, all proper', () => {
    const sample = makeSample(template, moderate, createRng(18));
    const poses = startingPoses(template, sample, 'rigid', 7, createRng(19));
    expect(poses).toHaveLength(7);
    poses[0].linear.forEach((row, i) => row.forEach((v, j) => expect(v).toBe(i === j ? 1 : 0)));
    for (const pose of poses) expect(determinant(pose.linear)).toBeCloseTo(1, 9);
    // Noise-free and complete: one principal-axis similarity pose is already the exact answer.
    const similar = startingPoses(template, sample, 'similarity', 5, undefined);
    const errors = similar.slice(1, 5).map((p) => transformError(p, moderate, template));
    expect(Math.min(...errors)).toBeLessThan(1e-6);
  });

  it('needs an rng only when random rotations are asked for', () => {
    expect(startingPoses(template, template, 'similarity', 5, undefined)).toHaveLength(5);
    expect(() => startingPoses(template, template, 'similarity', 6, undefined)).toThrow(UsageError);
  });
});
