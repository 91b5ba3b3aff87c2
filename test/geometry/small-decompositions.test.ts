import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { EigenvalueDecomposition, Matrix as MlMatrix, SingularValueDecomposition } from 'ml-matrix';
import { svdSmall, symmetricEigenSmall, symmetricEigenvaluesSmall } from '../../src/geometry/small-decompositions.js';

// Entries on a 1e-3 grid: avoids subnormal numbers, which say nothing about the 3x3 fits these serve.
const entry = fc.integer({ min: -10000, max: 10000 }).map((k) => k / 1000);
const square = (d: number) => fc.array(fc.array(entry, { minLength: d, maxLength: d }), { minLength: d, maxLength: d });

function reconstruct(u: number[][], s: number[], v: number[][]): number[][] {
  const d = s.length;
  return u.map((_, i) => Array.from({ length: d }, (_, j) => s.reduce((acc, sk, k) => acc + u[i][k] * sk * v[j][k], 0)));
}

function orthonormalError(q: number[][]): number {
  const d = q.length;
  let e = 0;
  for (let a = 0; a < d; a++)
    for (let b = 0; b < d; b++) {
      let dot = 0;
      for (let k = 0; k < d; k++) dot += q[k][a] * q[k][b];
      e = Math.max(e, Math.abs(dot - (a === b ? 1 : 0)));
    }
  return e;
}

describe('svdSmall (one-sided Jacobi)', () => {
  for (const d of [2, 3]) {
    it(`matches ml-matrix singular values and reconstructs A = U S V^T for random ${d}x${d} matrices`, () => {
      fc.assert(
        fc.property(square(d), (a) => {
          const r = svdSmall(a);
          const ref = new SingularValueDecomposition(new MlMatrix(a), { autoTranspose: true }).diagonal;
          const scale = Math.max(1, ...ref);
          r.s.forEach((s, i) => expect(Math.abs(s - ref[i]) / scale).toBeLessThan(1e-12));
          const back = reconstruct(r.u, r.s, r.v);
          back.forEach((row, i) => row.forEach((x, j) => expect(Math.abs(x - a[i][j]) / scale).toBeLessThan(1e-12)));
          expect(orthonormalError(r.u)).toBeLessThan(1e-12);
          expect(orthonormalError(r.v)).toBeLessThan(1e-12);
        }),
        { seed: 20261202, numRuns: 200 },
      );
    });
  }

  it('keeps U orthogonal for rank-deficient matrices (rank 1 in 3-D, zero matrix)', () => {
    const rank1 = [
      [1, 2, 3],
      [2, 4, 6],
      [3, 6, 9],
    ];
    for (const a of [rank1, [[0, 0, 0], [0, 0, 0], [0, 0, 0]]]) {
      const r = svdSmall(a);
      expect(orthonormalError(r.u)).toBeLessThan(1e-12);
      expect(orthonormalError(r.v)).toBeLessThan(1e-12);
    }
    expect(svdSmall(rank1).s[0]).toBeCloseTo(14, 12); // |(1,2,3)|^2 = 14: the only singular value (hand derivation)
  });
});

describe('symmetricEigenSmall (cyclic Jacobi)', () => {
  it('matches ml-matrix eigenvalues, sorted descending, with orthonormal eigenvectors', () => {
    fc.assert(
      fc.property(square(3), (b) => {
        const a = b.map((row, i) => row.map((x, j) => 0.5 * (x + b[j][i])));
        const r = symmetricEigenSmall(a);
        const ref = new EigenvalueDecomposition(new MlMatrix(a), { assumeSymmetric: true }).realEigenvalues.sort((x, y) => y - x);
        const scale = Math.max(1, ...ref.map(Math.abs));
        r.values.forEach((v, i) => expect(Math.abs(v - ref[i]) / scale).toBeLessThan(1e-12));
        expect(orthonormalError(r.vectors)).toBeLessThan(1e-12);
        for (let k = 0; k < 3; k++) {
          for (let i = 0; i < 3; i++) {
            const av = a[i].reduce((s, x, j) => s + x * r.vectors[j][k], 0);
            expect(Math.abs(av - r.values[k] * r.vectors[i][k]) / scale).toBeLessThan(1e-11);
          }
        }
      }),
      { seed: 20261202, numRuns: 200 },
    );
  });
});

describe('symmetricEigenvaluesSmall (the same Jacobi rotations, values only)', () => {
  for (const d of [1, 2, 3]) {
    it(`returns exactly the eigenvalues of symmetricEigenSmall for random and rank-deficient ${d}x${d} matrices`, () => {
      fc.assert(
        fc.property(square(d), fc.boolean(), (b, deficient) => {
          // Symmetric, or the rank-1 matrix x x^T of the first row.
          const a = deficient ? b.map((_, i) => b.map((__, j) => b[0][i] * b[0][j])) : b.map((row, i) => row.map((x, j) => 0.5 * (x + b[j][i])));
          const out = new Float64Array(3);
          symmetricEigenvaluesSmall(a, out);
          expect(Array.from(out.subarray(0, d))).toEqual(symmetricEigenSmall(a).values);
        }),
        { seed: 20261203, numRuns: 100 },
      );
    });
  }
});
