/**
 * Small dense linear algebra on plain nested arrays (d is 1-3 in practice).
 * Hand-written loops: these sit on hot paths where allocating ml-matrix
 * objects would dominate. Decompositions (SVD, eigen) use ml-matrix.
 */
import { EigenvalueDecomposition, LuDecomposition, Matrix as MlMatrix, SingularValueDecomposition } from 'ml-matrix';
import { FitError } from '../errors.js';
import { svdSmall, symmetricEigenSmall } from './small-decompositions.js';
import type { Matrix, Points } from '../types.js';

/** d x d identity matrix (new array). */
export function identity(d: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < d; i++) {
    const row = new Array<number>(d).fill(0);
    row[i] = 1;
    out.push(row);
  }
  return out;
}

/** rows x cols matrix of zeros (new array). */
export function zeros(rows: number, cols: number): number[][] {
  const out: number[][] = [];
  for (let i = 0; i < rows; i++) out.push(new Array<number>(cols).fill(0));
  return out;
}

/** A^T: (A^T)_ji = A_ij, for an n x m matrix (n = 0 gives []). */
export function transpose(a: Matrix): number[][] {
  const rows = a.length, cols = rows ? a[0].length : 0;
  const out = zeros(cols, rows);
  for (let i = 0; i < rows; i++) for (let j = 0; j < cols; j++) out[j][i] = a[i][j];
  return out;
}

/** Matrix product (A B)_ij = sum_l A_il B_lj; A is n x k, B is k x m. Shapes are not checked. */
export function multiply(a: Matrix, b: Matrix): number[][] {
  const n = a.length, m = b[0].length, k = b.length;
  const out = zeros(n, m);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < m; j++) {
      let s = 0;
      for (let l = 0; l < k; l++) s += a[i][l] * b[l][j];
      out[i][j] = s;
    }
  return out;
}

/** Matrix-vector product (A v)_i = sum_j A_ij v_j; A is n x d, v has length d. */
export function multiplyVector(a: Matrix, v: readonly number[]): number[] {
  const out = new Array<number>(a.length);
  for (let i = 0; i < a.length; i++) {
    let s = 0;
    const row = a[i];
    for (let j = 0; j < v.length; j++) s += row[j] * v[j];
    out[i] = s;
  }
  return out;
}

/** c A, entry by entry. */
export function scaleMatrix(a: Matrix, c: number): number[][] {
  return a.map((row) => row.map((v) => v * c));
}

/** A + B, entry by entry (same shapes). */
export function addMatrices(a: Matrix, b: Matrix): number[][] {
  return a.map((row, i) => row.map((v, j) => v + b[i][j]));
}

/** tr A = sum_i A_ii of a square matrix. */
export function trace(a: Matrix): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i][i];
  return s;
}

/** Determinant of a 1x1, 2x2 or 3x3 matrix by cofactor expansion; larger sizes via LU in ml-matrix. */
export function determinant(a: Matrix): number {
  const d = a.length;
  if (d === 1) return a[0][0];
  if (d === 2) return a[0][0] * a[1][1] - a[0][1] * a[1][0];
  if (d === 3)
    return (
      a[0][0] * (a[1][1] * a[2][2] - a[1][2] * a[2][1]) -
      a[0][1] * (a[1][0] * a[2][2] - a[1][2] * a[2][0]) +
      a[0][2] * (a[1][0] * a[2][1] - a[1][1] * a[2][0])
    );
  return new LuDecomposition(new MlMatrix(a.map((r) => r.slice()))).determinant;
}

/**
 * Weighted mean of the rows of an n x d array, mu = sum_i w_i p_i / sum_i w_i;
 * weights need not sum to one (default all 1). Needs n >= 1 and a positive total
 * weight (callers check; otherwise the result is NaN).
 */
export function weightedMean(points: Points, weights?: readonly number[]): number[] {
  const d = points[0].length;
  const out = new Array<number>(d).fill(0);
  let total = 0;
  for (let i = 0; i < points.length; i++) {
    const w = weights ? weights[i] : 1;
    total += w;
    for (let j = 0; j < d; j++) out[j] += w * points[i][j];
  }
  for (let j = 0; j < d; j++) out[j] /= total;
  return out;
}

/**
 * Weighted cross-covariance (1/W) sum_i w_i (a_i - ma)(b_i - mb)^T, with
 * W = sum_i w_i: the biased (divide by total weight) convention of Umeyama (1991), eq. 38.
 */
export function crossCovariance(
  a: Points,
  ma: readonly number[],
  b: Points,
  mb: readonly number[],
  weights?: readonly number[],
): number[][] {
  const da = ma.length, db = mb.length;
  const out = zeros(da, db);
  let total = 0;
  for (let i = 0; i < a.length; i++) {
    const w = weights ? weights[i] : 1;
    total += w;
    for (let r = 0; r < da; r++) {
      const ar = w * (a[i][r] - ma[r]);
      for (let c = 0; c < db; c++) out[r][c] += ar * (b[i][c] - mb[c]);
    }
  }
  for (let r = 0; r < da; r++) for (let c = 0; c < db; c++) out[r][c] /= total;
  return out;
}

/**
 * Singular value decomposition A = U diag(s) V^T (ml-matrix; used on square d x d matrices,
 * Golub-Kahan-Reinsch as in JAMA): U, V orthogonal (also when A is rank
 * deficient), s non-negative in descending order.
 */
export function svd(a: Matrix): { u: number[][]; s: number[]; v: number[][] } {
  if (a.length <= 3 && a.every((row) => row.length === a.length)) return svdSmall(a);
  const dec = new SingularValueDecomposition(new MlMatrix(a.map((r) => r.slice())), {
    autoTranspose: true,
  });
  return { u: dec.leftSingularVectors.to2DArray(), s: dec.diagonal, v: dec.rightSingularVectors.to2DArray() };
}

/**
 * Eigen-decomposition of a symmetric matrix, eigenvalues in descending order,
 * eigenvectors as the columns of `vectors` (ml-matrix, tridiagonal QL).
 */
export function symmetricEigen(a: Matrix): { values: number[]; vectors: number[][] } {
  if (a.length <= 3) return symmetricEigenSmall(a);
  const sym = a.map((row, i) => row.map((v, j) => 0.5 * (v + a[j][i])));
  const dec = new EigenvalueDecomposition(new MlMatrix(sym), { assumeSymmetric: true });
  const values = dec.realEigenvalues;
  const vecs = dec.eigenvectorMatrix.to2DArray();
  const order = values.map((_, i) => i).sort((i, j) => values[j] - values[i]);
  return {
    values: order.map((i) => values[i]),
    vectors: vecs.map((row) => order.map((i) => row[i])),
  };
}

/**
 * Inverse of a small square matrix by Gauss-Jordan elimination with partial
 * pivoting. Throws FitError('inverse: matrix is singular') when a pivot is
 * exactly 0 or not finite; a nearly singular matrix is inverted, not rejected.
 */
export function inverse(a: Matrix): number[][] {
  const d = a.length;
  // Augmented [A | I], one row array per row.
  const m: number[][] = [];
  for (let i = 0; i < d; i++) {
    const row = new Array<number>(2 * d);
    for (let j = 0; j < d; j++) {
      row[j] = a[i][j];
      row[d + j] = i === j ? 1 : 0;
    }
    m.push(row);
  }
  for (let c = 0; c < d; c++) {
    let p = c;
    for (let r = c + 1; r < d; r++) if (Math.abs(m[r][c]) > Math.abs(m[p][c])) p = r;
    if (m[p][c] === 0 || !Number.isFinite(m[p][c])) throw new FitError('inverse: matrix is singular');
    const swap = m[c];
    m[c] = m[p];
    m[p] = swap;
    const pivotRow = m[c];
    const piv = pivotRow[c];
    for (let j = 0; j < 2 * d; j++) pivotRow[j] /= piv;
    for (let r = 0; r < d; r++) {
      if (r === c) continue;
      const row = m[r];
      const f = row[c];
      if (f !== 0) for (let j = 0; j < 2 * d; j++) row[j] -= f * pivotRow[j];
    }
  }
  const out: number[][] = [];
  for (let i = 0; i < d; i++) out.push(m[i].slice(d));
  return out;
}

/** Squared Euclidean distance |a - b|^2 of two points of the same length. */
export function squaredDistance(a: readonly number[], b: readonly number[]): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) {
    const t = a[i] - b[i];
    s += t * t;
  }
  return s;
}
