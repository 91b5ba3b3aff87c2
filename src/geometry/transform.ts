/**
 * Affine transforms y = A x + t on plain arrays: apply, compose, invert,
 * and the decomposition of a similarity into scale and rotation.
 */
import { FitError } from '../errors.js';
import type { Points, Transform } from '../types.js';
import { determinant, identity, inverse, multiply, multiplyVector } from './linear-algebra.js';

/** The identity map of dimension `dim`, recorded as kind 'similarity' (c = 1, R = I, t = 0). */
export function identityTransform(dim: number): Transform {
  return { kind: 'similarity', linear: identity(dim), translation: new Array<number>(dim).fill(0) };
}

/** y = A x + t for one point. */
export function applyToPoint(transform: Transform, x: readonly number[]): number[] {
  const y = multiplyVector(transform.linear, x);
  for (let i = 0; i < y.length; i++) y[i] += transform.translation[i];
  return y;
}

/** Apply the transform to every row of an n x d array; returns a new array. */
export function applyTransform(transform: Transform, points: Points): number[][] {
  return points.map((p) => applyToPoint(transform, p));
}

/**
 * compose(outer, inner) is the map x -> outer(inner(x)):
 * A = A_o A_i, t = A_o t_i + t_o. The kind is the more general of the two.
 */
export function composeTransforms(outer: Transform, inner: Transform): Transform {
  const kind: Transform['kind'] =
    outer.kind === 'affine' || inner.kind === 'affine'
      ? 'affine'
      : outer.kind === 'rigid' && inner.kind === 'rigid'
        ? 'rigid'
        : 'similarity';
  const linear = multiply(outer.linear, inner.linear);
  const translation = multiplyVector(outer.linear, inner.translation).map((v, i) => v + outer.translation[i]);
  return { kind, linear, translation };
}

/**
 * The inverse map x = A^-1 (y - t), i.e. linear part A^-1 and translation -A^-1 t;
 * the kind is kept. Throws FitError when det A is 0 (below 1e-300 in magnitude) or not finite.
 */
export function invertTransform(transform: Transform): Transform {
  const det = determinant(transform.linear);
  if (!(Math.abs(det) > 1e-300) || !Number.isFinite(det)) {
    throw new FitError(`invertTransform: linear part is singular (determinant ${det})`);
  }
  const linear = inverse(transform.linear);
  const translation = multiplyVector(linear, transform.translation).map((v) => -v);
  return { kind: transform.kind, linear, translation };
}

/**
 * Uniform scale of a transform: |det A|^(1/d). For a similarity A = c R this is c.
 */
export function transformScale(transform: Transform): number {
  const d = transform.linear.length;
  return Math.pow(Math.abs(determinant(transform.linear)), 1 / d);
}

/**
 * Anisotropy of the linear part: ratio of its largest to smallest singular
 * value (1 for a similarity). Used to reject implausible shear.
 */
export function transformAnisotropy(singularValues: readonly number[]): number {
  const max = Math.max(...singularValues), min = Math.min(...singularValues);
  return min > 0 ? max / min : Infinity;
}
