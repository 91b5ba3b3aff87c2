/**
 * Slips: small rigid moves of a pose by one cell spacing, the steps of the
 * slip search in match-sample.ts (docs/algorithms.md, "Slip search").
 *
 * Refinement by hard EM stops where the matching it converged to is
 * self-consistent. When cells are packed about one spacing apart, a pose
 * displaced by about one spacing is such a fixed point: every point matched
 * to the neighbour of its true cell, the whole labelling slipped by one.
 * Local refinement cannot leave it, because each step moves by less than the
 * spacing. A slip moves the pose by one spacing at once, so that hard EM
 * started from it can settle in the neighbouring basin, and the matching gain
 * tells whether that basin is better.
 *
 * The moves act in the template frame (composed on the left of a sample ->
 * template map): translations by +-s along each principal axis of the
 * template's means, and in 3-D rotations about each principal axis through
 * the centroid by +-s / R, R the root-mean-square distance of the means from
 * that axis, so that a typical cell moves by about s.
 */
import type { Transform } from '../types.js';

/**
 * The 2d (translations) plus, in 3-D, 6 (rotations) slip moves. `axes` holds
 * the template's principal axes as columns, `centroid` the means' centroid,
 * `means` the cell means and `step` the length s of a slip.
 */
export function slipMoves(axes: readonly (readonly number[])[], centroid: readonly number[], means: readonly (readonly number[])[], step: number): Transform[] {
  const d = centroid.length;
  const identity = Array.from({ length: d }, (_, a) => Array.from({ length: d }, (_, b) => (a === b ? 1 : 0)));
  const out: Transform[] = [];
  for (let j = 0; j < d; j++) {
    const u = axes.map((row) => row[j]);
    for (const sign of [-1, 1]) out.push({ kind: 'rigid', linear: identity.map((row) => row.slice()), translation: u.map((v) => sign * step * v) });
  }
  if (d !== 3) return out;
  for (let j = 0; j < 3; j++) {
    const u = axes.map((row) => row[j]);
    let r2 = 0;
    for (const m of means) {
      const q = m.map((v, a) => v - centroid[a]);
      const along = q[0] * u[0] + q[1] * u[1] + q[2] * u[2];
      r2 += q[0] * q[0] + q[1] * q[1] + q[2] * q[2] - along * along;
    }
    const radius = Math.sqrt(r2 / Math.max(1, means.length));
    if (!(radius > 0)) continue;
    for (const sign of [-1, 1]) out.push(rotationAbout(u, centroid, (sign * step) / radius));
  }
  return out;
}

/** Rotation by `angle` about the unit axis u through `centre` (Rodrigues: R = I + sin(a) [u]x + (1 - cos(a)) [u]x^2). */
export function rotationAbout(u: readonly number[], centre: readonly number[], angle: number): Transform {
  const k = [
    [0, -u[2], u[1]],
    [u[2], 0, -u[0]],
    [-u[1], u[0], 0],
  ];
  const k2 = k.map((row, r) => row.map((_, c) => k[r][0] * k[0][c] + k[r][1] * k[1][c] + k[r][2] * k[2][c]));
  const linear = k.map((row, r) => row.map((v, c) => (r === c ? 1 : 0) + Math.sin(angle) * v + (1 - Math.cos(angle)) * k2[r][c]));
  const translation = centre.map((v, r) => v - linear[r].reduce((s, x, c) => s + x * centre[c], 0));
  return { kind: 'rigid', linear, translation };
}
