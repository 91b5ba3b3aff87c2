import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  applyTransform,
  composeTransforms,
  fitTransform,
  identityTransform,
  invertTransform,
  multiply,
  sampleCovariance,
  symmetricEigen,
} from '../../src/geometry/index.js';
import { createRng, shuffle } from '../../src/random.js';
import type { Transform } from '../../src/types.js';
import { expectArrayClose } from './expect-close.js';

const SEED = 20261201;
const RUNS = 40;
const settings = { seed: SEED, numRuns: RUNS };

type Kind = Transform['kind'];
const kinds: Kind[] = ['similarity', 'rigid', 'affine'];

const coord = fc.double({ min: -200, max: 200, noNaN: true, noDefaultInfinity: true });

/** n x d points whose spread is well conditioned (smallest/largest covariance eigenvalue >= 0.01). */
function wellConditioned(dim: 2 | 3): fc.Arbitrary<number[][]> {
  return fc
    .array(fc.array(coord, { minLength: dim, maxLength: dim }), { minLength: dim + 3, maxLength: 12 })
    .filter((pts) => {
      const { values } = symmetricEigen(sampleCovariance(pts));
      return values[0] > 1 && values[dim - 1] / values[0] >= 0.01;
    });
}

/** A proper rotation: 2-D from an angle, 3-D from a normalised quaternion. */
function rotation(dim: 2 | 3): fc.Arbitrary<number[][]> {
  if (dim === 2) {
    return fc.double({ min: -Math.PI, max: Math.PI, noNaN: true }).map((a) => [
      [Math.cos(a), -Math.sin(a)],
      [Math.sin(a), Math.cos(a)],
    ]);
  }
  const q = fc.double({ min: -1, max: 1, noNaN: true });
  return fc
    .tuple(q, q, q, q)
    .filter(([w, x, y, z]) => w * w + x * x + y * y + z * z > 0.05)
    .map(([w0, x0, y0, z0]) => {
      const n = Math.hypot(w0, x0, y0, z0);
      const [w, x, y, z] = [w0 / n, x0 / n, y0 / n, z0 / n];
      return [
        [1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
        [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
        [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)],
      ];
    });
}

/** A random transform of the given family; affine ones are R1 diag(s) R2 with s in [0.5, 2] (det > 0). */
function transform(kind: Kind, dim: 2 | 3): fc.Arbitrary<Transform> {
  const translation = fc.array(fc.double({ min: -500, max: 500, noNaN: true }), { minLength: dim, maxLength: dim });
  if (kind === 'affine') {
    const s = fc.array(fc.double({ min: 0.5, max: 2, noNaN: true }), { minLength: dim, maxLength: dim });
    return fc.tuple(rotation(dim), s, rotation(dim), translation).map(([r1, sv, r2, t]) => ({
      kind,
      linear: multiply(r1.map((row) => row.map((v, j) => v * sv[j])), r2),
      translation: t,
    }));
  }
  const scale = kind === 'rigid' ? fc.constant(1) : fc.double({ min: 0.3, max: 3, noNaN: true });
  return fc.tuple(rotation(dim), scale, translation).map(([r, c, t]) => ({
    kind,
    linear: r.map((row) => row.map((v) => v * c)),
    translation: t,
  }));
}

function expectSameTransform(actual: Transform, expected: Transform, digits: number): void {
  expectArrayClose(actual.linear, expected.linear, digits, 'A');
  expectArrayClose(actual.translation, expected.translation, digits, 't');
}

describe('geometry properties (fast-check, seed 20261201, 40 runs each)', () => {
  for (const dim of [2, 3] as const) {
    for (const kind of kinds) {
      it(`${kind} ${dim}-D: fitting T(X) to X recovers T`, () => {
        fc.assert(
          fc.property(wellConditioned(dim), transform(kind, dim), (x, t) => {
            const fit = fitTransform(kind, x, applyTransform(t, x));
            expectSameTransform(fit.transform, t, 8);
            expect(fit.reflected).toBe(false);
            expect(fit.meanSquaredResidual).toBeLessThan(1e-12);
          }),
          settings,
        );
      });

      it(`${kind} ${dim}-D: the fit does not depend on point order (noisy data)`, () => {
        fc.assert(
          fc.property(wellConditioned(dim), transform(kind, dim), fc.integer(), (x, t, seed) => {
            const rng = createRng(seed);
            const y = applyTransform(t, x).map((p) => p.map((v) => v + 5 * (rng() - 0.5)));
            const weights = x.map(() => 0.5 + rng());
            const order = shuffle(x.map((_, i) => i), rng);
            const a = fitTransform(kind, x, y, { weights });
            const b = fitTransform(
              kind,
              order.map((i) => x[i]),
              order.map((i) => y[i]),
              { weights: order.map((i) => weights[i]) },
            );
            expectSameTransform(b.transform, a.transform, 9);
            expectArrayClose(b.meanSquaredResidual, a.meanSquaredResidual, 9, 'msr');
          }),
          settings,
        );
      });

      it(`${kind} ${dim}-D: fitting target -> source gives the inverse of source -> target for exact data`, () => {
        fc.assert(
          fc.property(wellConditioned(dim), transform(kind, dim), (x, t) => {
            const y = applyTransform(t, x);
            const forward = fitTransform(kind, x, y);
            const backward = fitTransform(kind, y, x);
            expectSameTransform(backward.transform, invertTransform(forward.transform), 8);
          }),
          settings,
        );
      });

      it(`${kind} ${dim}-D: compose(T, invert(T)) and compose(invert(T), T) are the identity`, () => {
        fc.assert(
          fc.property(transform(kind, dim), (t) => {
            const inv = invertTransform(t);
            expectSameTransform(composeTransforms(t, inv), identityTransform(dim), 9);
            expectSameTransform(composeTransforms(inv, t), identityTransform(dim), 9);
          }),
          settings,
        );
      });
    }

    it(`${dim}-D: invert(compose(A, B)) = compose(invert(B), invert(A)) across families`, () => {
      const any = fc.constantFrom(...kinds).chain((k) => transform(k, dim));
      fc.assert(
        fc.property(any, any, (a, b) => {
          expectSameTransform(
            invertTransform(composeTransforms(a, b)),
            composeTransforms(invertTransform(b), invertTransform(a)),
            9,
          );
        }),
        settings,
      );
    });
  }
});
