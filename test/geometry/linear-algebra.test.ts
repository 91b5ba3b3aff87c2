import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FitError } from '../../src/errors.js';
import {
  addMatrices,
  crossCovariance,
  determinant,
  identity,
  inverse,
  multiply,
  multiplyVector,
  scaleMatrix,
  squaredDistance,
  svd,
  symmetricEigen,
  trace,
  transpose,
  weightedMean,
  zeros,
} from '../../src/geometry/index.js';
import { expectArrayClose, expectClose } from './expect-close.js';

interface Fixture {
  spd: { sigma: number[][]; eighValues: number[]; eighVectors: number[][] }[];
  general: { matrix: number[][]; det: number; inverse: number[][] }[];
}
// Python 3.11.2, numpy 1.24.2 (Debian python3-numpy 1:1.24.2-1+deb12u1); seeded inputs written by
// scripts/fixtures/covariance.py, fixture test/fixtures/reference/covariance-numpy.json.
const fixture = JSON.parse(
  readFileSync(new URL('../fixtures/reference/covariance-numpy.json', import.meta.url), 'utf8'),
) as Fixture;

const freeze = (m: number[][]) => Object.freeze(m.map((r) => Object.freeze(r.slice())));

describe('elementary matrix operations', () => {
  it('identity, zeros, transpose, trace, scale and add produce the expected arrays', () => {
    expect(identity(3)).toEqual([[1, 0, 0], [0, 1, 0], [0, 0, 1]]);
    expect(zeros(2, 3)).toEqual([[0, 0, 0], [0, 0, 0]]);
    expect(transpose(freeze([[1, 2, 3], [4, 5, 6]]))).toEqual([[1, 4], [2, 5], [3, 6]]);
    expect(trace([[1, 2], [3, 4]])).toBe(5);
    expect(scaleMatrix([[1, -2]], 3)).toEqual([[3, -6]]);
    expect(addMatrices([[1, 2]], [[10, 20]])).toEqual([[11, 22]]);
  });

  it('multiply and multiplyVector follow the row-by-column rule (hand-computed 2x3 times 3x2)', () => {
    const a = freeze([[1, 2, 3], [4, 5, 6]]);
    const b = freeze([[7, 8], [9, 10], [11, 12]]);
    expect(multiply(a, b)).toEqual([[58, 64], [139, 154]]);
    expect(multiplyVector(a, [1, 0, -1])).toEqual([-2, -2]);
  });

  it('squaredDistance is the squared Euclidean distance: (0,0,0) to (1,2,2) is 9', () => {
    expect(squaredDistance([0, 0, 0], [1, 2, 2])).toBe(9);
  });
});

describe('determinant', () => {
  it('matches numpy.linalg.det for 2x2, 3x3 (cofactors) and 4x4 (LU) to 12 digits', () => {
    for (const c of fixture.general) expectClose(determinant(c.matrix), c.det, 12, `${c.matrix.length}x${c.matrix.length}`);
  });

  it('is 1 for a 1x1 [[1]] and -1 for a mirror', () => {
    expect(determinant([[1]])).toBe(1);
    expect(determinant([[-1, 0, 0], [0, 1, 0], [0, 0, 1]])).toBe(-1);
  });
});

describe('inverse', () => {
  it('matches numpy.linalg.inv for seeded general matrices to 10 digits', () => {
    for (const c of fixture.general) {
      const m = freeze(c.matrix);
      expectArrayClose(inverse(m), c.inverse, 10);
      expectArrayClose(multiply(m, inverse(m)), identity(m.length), 12, 'A A^-1');
    }
  });

  it('throws FitError for a singular matrix', () => {
    expect(() => inverse([[1, 2], [2, 4]])).toThrow(new FitError('inverse: matrix is singular'));
  });
});

describe('weightedMean and crossCovariance', () => {
  it('weightedMean with weights (1, 3) of (0, 0) and (4, 8) is (3, 6); unweighted it is (2, 4)', () => {
    expect(weightedMean([[0, 0], [4, 8]], [1, 3])).toEqual([3, 6]);
    expect(weightedMean([[0, 0], [4, 8]])).toEqual([2, 4]);
  });

  it('crossCovariance divides by the total weight (biased, Umeyama 1991 eq. 38)', () => {
    // Hand computation: a = (0),(2), b = (0),(6), means 1 and 3: ((-1)(-3) + (1)(3)) / 2 = 3.
    expect(crossCovariance([[0], [2]], [1], [[0], [6]], [3])).toEqual([[3]]);
    // Weights (1, 3), means 1.5 and 4.5: (1 * (-1.5)(-4.5) + 3 * (0.5)(1.5)) / 4 = 9 / 4.
    expectArrayClose(crossCovariance([[0], [2]], [1.5], [[0], [6]], [4.5], [1, 3]), [[2.25]], 15);
  });
});

describe('svd', () => {
  it('reconstructs a = U diag(s) V^T with orthogonal U, V and descending non-negative s', () => {
    for (const c of fixture.general) {
      const { u, s, v } = svd(freeze(c.matrix));
      const d = c.matrix.length;
      const us = u.map((row) => row.map((val, j) => val * s[j]));
      expectArrayClose(multiply(us, transpose(v)), c.matrix, 12, 'U S V^T');
      expectArrayClose(multiply(transpose(u), u), identity(d), 12, 'U^T U');
      expectArrayClose(multiply(transpose(v), v), identity(d), 12, 'V^T V');
      for (let i = 1; i < d; i++) expect(s[i]).toBeLessThanOrEqual(s[i - 1]);
      expect(s[d - 1]).toBeGreaterThanOrEqual(0);
      expectClose(s.reduce((p, x) => p * x, 1), Math.abs(c.det), 10, 'prod s = |det|');
    }
  });

  it('gives orthogonal U and V for a rank-deficient matrix (needed by the rotation sign rule)', () => {
    const { u, s, v } = svd([[2, 0, 0], [0, 0, 0], [0, 0, 0]]);
    expectArrayClose(s, [2, 0, 0], 15);
    expectClose(Math.abs(determinant(u)), 1, 12, '|det U|');
    expectClose(Math.abs(determinant(v)), 1, 12, '|det V|');
  });
});

describe('symmetricEigen', () => {
  it('returns eigenvalues in descending order, equal to numpy.linalg.eigh (ascending) reversed, to 10 digits', () => {
    for (const c of fixture.spd) {
      const { values, vectors } = symmetricEigen(freeze(c.sigma));
      const expected = c.eighValues.slice().reverse();
      const top = Math.max(...expected);
      expectArrayClose(values.map((x) => x / top), expected.map((x) => x / top), 10, 'values');
      const d = values.length;
      for (let k = 0; k < d; k++) {
        // Column k of ours is column d-1-k of numpy's, up to sign.
        const ours = vectors.map((row) => row[k]);
        const ref = c.eighVectors.map((row) => row[d - 1 - k]);
        const sign = Math.sign(ours.reduce((s, x, i) => s + x * ref[i], 0));
        expectArrayClose(ours.map((x) => x * sign), ref, 8, `vector ${k}`);
      }
    }
  });

  it('orders [[1,0,0],[0,3,0],[0,0,2]] as 3, 2, 1 with matching unit vectors', () => {
    const { values, vectors } = symmetricEigen([[1, 0, 0], [0, 3, 0], [0, 0, 2]]);
    expect(values).toEqual([3, 2, 1]);
    expectArrayClose(vectors.map((r) => r.map(Math.abs)), [[0, 0, 1], [1, 0, 0], [0, 1, 0]], 15);
  });

  it('uses the symmetric part of a slightly asymmetric input', () => {
    const { values } = symmetricEigen([[2, 1 + 1e-12], [1 - 1e-12, 2]]);
    expectArrayClose(values, [3, 1], 12);
  });
});
