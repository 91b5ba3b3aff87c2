/**
 * Conversions between the shared `Transform` (nested arrays) and the flat
 * typed-array form used in the matcher's hot loops, plus plausibility checks
 * of a fitted map.
 */
import { svd } from '../geometry/index.js';
import type { Transform } from '../types.js';

/** An affine map y = A x + t with A flattened row-major (d*d) and t (d). */
export interface FlatAffine {
  readonly a: Float64Array;
  readonly t: Float64Array;
}

export function toFlat(transform: Transform): FlatAffine {
  const d = transform.translation.length;
  const a = new Float64Array(d * d);
  for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) a[i * d + j] = transform.linear[i][j];
  return { a, t: Float64Array.from(transform.translation) };
}

export function fromFlat(flat: FlatAffine, kind: Transform['kind']): Transform {
  const d = flat.t.length;
  const linear: number[][] = [];
  for (let i = 0; i < d; i++) linear.push(Array.from(flat.a.subarray(i * d, i * d + d)));
  return { kind, linear, translation: Array.from(flat.t) };
}

export interface Plausibility {
  /** Allowed range of the uniform scale |det A|^(1/d) of the sample -> template map. */
  readonly scaleRange: readonly [number, number];
  /** Largest allowed ratio of the singular values of A (1 = no shear or stretch). */
  readonly maxAnisotropy: number;
}

/**
 * True when the linear part A of a map is a plausible change of pose: det A > 0
 * (no reflection), scale within the range and singular-value ratio at most
 * maxAnisotropy.
 */
export function isPlausible(transform: Transform, limits: Plausibility): boolean {
  const { s } = svd(transform.linear);
  const d = s.length;
  let prod = 1;
  for (const v of s) prod *= v;
  // Reflection: sign of det from the product of singular values and det of the matrix.
  const det = determinantSmall(transform.linear);
  if (!(det > 0)) return false;
  const scale = Math.pow(prod, 1 / d);
  if (scale < limits.scaleRange[0] || scale > limits.scaleRange[1]) return false;
  const min = Math.min(...s), max = Math.max(...s);
  return min > 0 && max / min <= limits.maxAnisotropy;
}

function determinantSmall(a: readonly (readonly number[])[]): number {
  const d = a.length;
  if (d === 1) return a[0][0];
  if (d === 2) return a[0][0] * a[1][1] - a[0][1] * a[1][0];
  return (
    a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1]) -
    a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0]) +
    a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0])
  );
}
