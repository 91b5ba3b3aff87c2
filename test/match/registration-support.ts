/**
 * Helpers shared by the ICP and CPD registration tests: known rotations,
 * samples made from a template by a known transform, and the error of an
 * estimated sample -> template map.
 */
import { randomNormal, shuffle, type Rng } from '../../src/random.js';
import { applyToPoint } from '../../src/geometry/index.js';
import type { Transform } from '../../src/types.js';

/** Rotation by `angle` radians about the unit vector `axis` (Rodrigues' formula). */
export function axisRotation(axis: number[], angle: number): number[][] {
  const n = Math.hypot(...axis);
  const [x, y, z] = axis.map((v) => v / n);
  const c = Math.cos(angle), s = Math.sin(angle), C = 1 - c;
  return [
    [c + x * x * C, x * y * C - z * s, x * z * C + y * s],
    [y * x * C + z * s, c + y * y * C, y * z * C - x * s],
    [z * x * C - y * s, z * y * C + x * s, c + z * z * C],
  ];
}

/** The template points moved by `truth` (template -> sample), shuffled, with isotropic Gaussian noise of sd `noise`. */
export function makeSample(template: number[][], truth: Transform, rng: Rng, noise = 0): number[][] {
  return shuffle(template, rng).map((p) => applyToPoint(truth, p).map((v) => v + noise * randomNormal(rng)));
}

/** RMS over template points p of |estimate(truth(p)) - p|: zero when estimate is exactly truth^-1. */
export function transformError(estimate: Transform, truth: Transform, template: number[][]): number {
  let s = 0;
  for (const p of template) {
    const q = applyToPoint(estimate, applyToPoint(truth, p));
    s += q.reduce((acc, v, j) => acc + (v - p[j]) ** 2, 0);
  }
  return Math.sqrt(s / template.length);
}
