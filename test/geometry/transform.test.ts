import { describe, expect, it } from 'vitest';
import { FitError } from '../../src/errors.js';
import {
  applyToPoint,
  applyTransform,
  composeTransforms,
  identityTransform,
  invertTransform,
  transformAnisotropy,
  transformScale,
} from '../../src/geometry/index.js';
import type { Transform } from '../../src/types.js';
import { expectArrayClose, expectClose } from './expect-close.js';

// Hand-built transforms: a 90-degree turn scaled by 2 and moved by (1, -1); a shear.
const turn: Transform = Object.freeze({
  kind: 'similarity',
  linear: Object.freeze([Object.freeze([0, -2]), Object.freeze([2, 0])]),
  translation: Object.freeze([1, -1]),
});
const shear: Transform = { kind: 'affine', linear: [[1, 3], [0, 1]], translation: [0, 5] };

describe('applyToPoint and applyTransform', () => {
  it('compute y = A x + t: the scaled turn sends (1, 0) to (1, 1) and (0, 1) to (-1, -1)', () => {
    expect(applyToPoint(turn, [1, 0])).toEqual([1, 1]);
    expect(applyTransform(turn, [[1, 0], [0, 1], [0, 0]])).toEqual([[1, 1], [-1, -1], [1, -1]]);
  });

  it('the identity transform leaves points unchanged', () => {
    expect(applyTransform(identityTransform(3), [[1, 2, 3]])).toEqual([[1, 2, 3]]);
    expect(identityTransform(2)).toEqual({ kind: 'similarity', linear: [[1, 0], [0, 1]], translation: [0, 0] });
  });

  it('does not modify its inputs (frozen arrays)', () => {
    const pts = Object.freeze([Object.freeze([3, 4])]);
    expect(applyTransform(turn, pts)).toEqual([[-7, 5]]);
  });
});

describe('composeTransforms(outer, inner) is x -> outer(inner(x))', () => {
  it('matches applying inner then outer, point by point', () => {
    const c = composeTransforms(shear, turn);
    for (const p of [[0, 0], [1, 2], [-3, 0.5]]) {
      expectArrayClose(applyToPoint(c, p), applyToPoint(shear, applyToPoint(turn, p)), 14);
    }
    // Hand computation: A = S T = [[6, -2], [2, 0]], t = S t_turn + t_shear = (1 - 3, -1) + (0, 5) = (-2, 4).
    expect(c).toEqual({ kind: 'affine', linear: [[6, -2], [2, 0]], translation: [-2, 4] });
  });

  it('keeps the most general kind: rigid with rigid is rigid, rigid with similarity is similarity', () => {
    const r: Transform = { kind: 'rigid', linear: [[1, 0], [0, 1]], translation: [1, 1] };
    expect(composeTransforms(r, r).kind).toBe('rigid');
    expect(composeTransforms(r, turn).kind).toBe('similarity');
    expect(composeTransforms(turn, shear).kind).toBe('affine');
  });
});

describe('invertTransform', () => {
  it('returns x = A^-1 (y - t): the inverse of the scaled turn maps (1, 1) back to (1, 0)', () => {
    const inv = invertTransform(turn);
    expectArrayClose(inv.linear, [[0, 0.5], [-0.5, 0]], 15);
    expectArrayClose(inv.translation, [0.5, 0.5], 15);
    expectArrayClose(applyToPoint(inv, [1, 1]), [1, 0], 15);
    expect(inv.kind).toBe('similarity');
  });

  it('composes with the original to the identity on both sides', () => {
    for (const t of [turn, shear]) {
      const id = identityTransform(2);
      for (const c of [composeTransforms(t, invertTransform(t)), composeTransforms(invertTransform(t), t)]) {
        expectArrayClose(c.linear, id.linear, 14);
        expectArrayClose(c.translation, id.translation, 14);
      }
    }
  });

  it('throws FitError for a singular linear part', () => {
    expect(() => invertTransform({ kind: 'affine', linear: [[1, 2], [2, 4]], translation: [0, 0] })).toThrow(
      new FitError('invertTransform: linear part is singular (determinant 0)'),
    );
  });
});

describe('transformScale and transformAnisotropy', () => {
  it('transformScale is |det A|^(1/d): 2 for the turn scaled by 2, 1 for the unit-determinant shear', () => {
    expectClose(transformScale(turn), 2, 15);
    expectClose(transformScale(shear), 1, 15);
    expectClose(transformScale({ kind: 'affine', linear: [[2, 0, 0], [0, 4, 0], [0, 0, -1]], translation: [0, 0, 0] }), 2, 14);
  });

  it('transformAnisotropy is the largest over the smallest singular value, Infinity when one is 0', () => {
    expect(transformAnisotropy([4, 2, 1])).toBe(4);
    expect(transformAnisotropy([3, 3])).toBe(1);
    expect(transformAnisotropy([1, 0])).toBe(Infinity);
  });
});
