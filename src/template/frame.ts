/**
 * The template's canonical frame. Generalised Procrustes fixes the consensus
 * only up to a similarity (or, with affine alignment, an affine map); this
 * module chooses one representative so that templates are comparable:
 *
 *   F(x) = s E^T G (x - c)
 *
 * - c: centroid of the cell means (each cell counts once, whatever its count).
 * - G: linear gauge, identity except for affine alignment (see co-register.ts).
 * - E: principal axes of the centred cell means z_k = G (m_k - c), as columns,
 *   ordered by decreasing variance (eigenvectors of (1/K) sum_k z_k z_k^T).
 * - Sign rule: axis j (all but the last) points where the third central moment
 *   of the projections p_kj = e_j . z_k is positive, i.e. toward the long tail of
 *   the cells' distribution along it. When |mean p^3| <= 1e-6 (mean p^2)^(3/2) the
 *   moment is treated as zero and the fallback applies: the cell farthest from
 *   the centroid along the axis (first in label order on a tie) gets a positive
 *   projection. The last axis completes a right-handed frame (e_2 = e_1 rotated by
 *   +90 degrees in 2-D, e_3 = e_1 x e_2 in 3-D), so F never mirrors an animal.
 * - s: the size factor chosen by the caller (template in micrometres of an
 *   average animal; see co-register.ts).
 *
 * Reference for principal axes as a shape-analysis frame: Dryden & Mardia,
 * Statistical Shape Analysis (1998), 5.4; the sign rule is this project's choice.
 */
import type { Matrix, Points, Transform } from '../types.js';
import { identity, multiply, multiplyVector, symmetricEigen, transpose, zeros } from '../geometry/index.js';

/** Centroid size sqrt(sum_i |x_i - mean|^2) (Dryden & Mardia 1998, def. 2.3). */
export function centroidSize(points: Points): number {
  const n = points.length;
  if (n === 0) return 0;
  const d = points[0].length;
  const mean = new Array<number>(d).fill(0);
  for (const p of points) for (let j = 0; j < d; j++) mean[j] += p[j] / n;
  let s = 0;
  for (const p of points) for (let j = 0; j < d; j++) s += (p[j] - mean[j]) ** 2;
  return Math.sqrt(s);
}

/** The principal axes with the sign rule of the module comment, as columns of a proper rotation. */
export function principalAxes(centred: Points): number[][] {
  const d = centred[0].length;
  const k = centred.length;
  const scatter = zeros(d, d);
  for (const z of centred) for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) scatter[a][b] += (z[a] * z[b]) / k;
  const { vectors } = symmetricEigen(scatter);
  const axes: number[][] = [];
  for (let j = 0; j < d; j++) axes.push(vectors.map((row) => row[j]));
  for (let j = 0; j < d - 1; j++) {
    const e = axes[j];
    const p = centred.map((z) => z.reduce((s, v, a) => s + v * e[a], 0));
    const m2 = p.reduce((s, v) => s + v * v, 0) / k;
    const m3 = p.reduce((s, v) => s + v * v * v, 0) / k;
    let sign = 1;
    if (Math.abs(m3) > 1e-6 * Math.pow(m2, 1.5)) sign = m3 > 0 ? 1 : -1;
    else {
      let best = 0;
      for (let i = 1; i < k; i++) if (Math.abs(p[i]) > Math.abs(p[best]) * (1 + 1e-9)) best = i;
      sign = p[best] < 0 ? -1 : 1;
    }
    if (sign < 0) axes[j] = e.map((v) => -v);
  }
  if (d === 2) axes[1] = [-axes[0][1], axes[0][0]];
  else if (d === 3) {
    const [a, b] = axes;
    axes[2] = [a[1] * b[2] - a[2] * b[1], a[2] * b[0] - a[0] * b[2], a[0] * b[1] - a[1] * b[0]];
  }
  // Columns are the axes.
  return transpose(axes);
}

/**
 * The frame map F(x) = s E^T G (x - c) for the consensus `means` (K x d, one row
 * per cell, in label order). `gauge` defaults to the identity.
 */
export function canonicalFrame(means: Points, size: number, gauge?: Matrix): Transform {
  const d = means[0].length;
  const k = means.length;
  const g = gauge ?? identity(d);
  const c = new Array<number>(d).fill(0);
  for (const m of means) for (let j = 0; j < d; j++) c[j] += m[j] / k;
  const centred = means.map((m) => multiplyVector(g, m.map((v, j) => v - c[j])));
  const e = principalAxes(centred);
  const linear = multiply(transpose(e), g).map((row) => row.map((v) => v * size));
  const translation = multiplyVector(linear, c).map((v) => -v);
  return { kind: gauge ? 'affine' : 'similarity', linear, translation };
}
