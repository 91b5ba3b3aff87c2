/**
 * Jacobi decompositions for the small (d <= 3) matrices on cairn's hot paths,
 * where constructing ml-matrix objects costs more than the arithmetic.
 *
 * - symmetricEigenSmall: cyclic Jacobi eigenvalue method (Jacobi 1846; Golub &
 *   Van Loan, Matrix Computations, sec. 8.5, cited from memory).
 * - svdSmall: one-sided Jacobi SVD (Hestenes 1958; Demmel & Veselic 1992,
 *   cited from memory): orthogonalise the columns of A by plane rotations,
 *   A V = W, then s_j = |w_j| and u_j = w_j / s_j.
 *
 * Both iterate to machine precision (sweeps stop when every off-diagonal
 * quantity is below 1e-15 relative), return descending values, and are
 * checked against the ml-matrix decompositions in the tests.
 */
import type { Matrix } from '../types.js';

const EPS = 1e-14;
const MAX_SWEEPS = 30;

// Working storage for d <= 3 (row-major, stride d), reused across calls: the
// decompositions run thousands of times per fit-heavy job.
const WORK_M = new Float64Array(9);
const WORK_V = new Float64Array(9);
const WORK_D = new Float64Array(3);
const WORK_ORDER = new Int32Array(3);

/**
 * Indices 0..d-1 into `order`, sorted by decreasing `key` and stably (equal keys keep
 * index order): the order Array.prototype.sort gives with comparator (i, j) => key[j] - key[i].
 */
function orderDescending(key: Float64Array, d: number, order: Int32Array): void {
  for (let i = 0; i < d; i++) {
    let k = i;
    while (k > 0 && key[order[k - 1]] < key[i]) {
      order[k] = order[k - 1];
      k--;
    }
    order[k] = i;
  }
}

/**
 * Cyclic Jacobi on m = (A + A^T) / 2 (row-major, stride d, overwritten: its diagonal
 * ends as the eigenvalues), accumulating the rotations into v = I when v is given.
 * The rotations depend on m only, so the eigenvalues are the same with or without v.
 */
function jacobiInPlace(a: Matrix, d: number, m: Float64Array, v: Float64Array | null): void {
  for (let i = 0; i < d; i++)
    for (let j = 0; j < d; j++) {
      m[i * d + j] = 0.5 * (a[i][j] + a[j][i]);
      if (v) v[i * d + j] = i === j ? 1 : 0;
    }
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    let off = 0, diag = 0;
    for (let p = 0; p < d; p++) {
      diag += m[p * d + p] * m[p * d + p];
      for (let q = p + 1; q < d; q++) off += m[p * d + q] * m[p * d + q];
    }
    if (off <= EPS * EPS * diag || off === 0) break;
    for (let p = 0; p < d - 1; p++)
      for (let q = p + 1; q < d; q++) {
        const apq = m[p * d + q];
        if (apq === 0) continue;
        // Rotation angle that zeroes m[p][q]: theta = (a_qq - a_pp) / (2 a_pq), t = sgn(theta) / (|theta| + sqrt(theta^2 + 1)).
        const theta = (m[q * d + q] - m[p * d + p]) / (2 * apq);
        const t = (theta >= 0 ? 1 : -1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1), s = t * c;
        for (let k = 0; k < d; k++) {
          const mkp = m[k * d + p], mkq = m[k * d + q];
          m[k * d + p] = c * mkp - s * mkq;
          m[k * d + q] = s * mkp + c * mkq;
        }
        for (let k = 0; k < d; k++) {
          const mpk = m[p * d + k], mqk = m[q * d + k];
          m[p * d + k] = c * mpk - s * mqk;
          m[q * d + k] = s * mpk + c * mqk;
        }
        if (v)
          for (let k = 0; k < d; k++) {
            const vkp = v[k * d + p], vkq = v[k * d + q];
            v[k * d + p] = c * vkp - s * vkq;
            v[k * d + q] = s * vkp + c * vkq;
          }
      }
  }
}

/** Eigen-decomposition of a symmetric d x d matrix (d <= 3 intended): values descending, vectors as columns. */
export function symmetricEigenSmall(a: Matrix): { values: number[]; vectors: number[][] } {
  const d = a.length;
  const v = d <= 3 ? WORK_V : new Float64Array(d * d);
  const { diagonal, order } = jacobiDescending(a, d, v);
  const values = new Array<number>(d);
  const vectors: number[][] = [];
  for (let c = 0; c < d; c++) values[c] = diagonal[order[c]];
  for (let k = 0; k < d; k++) {
    const row = new Array<number>(d);
    for (let c = 0; c < d; c++) row[c] = v[k * d + order[c]];
    vectors.push(row);
  }
  return { values, vectors };
}

/**
 * The eigenvalues of symmetricEigenSmall(a), descending, without the eigenvectors
 * (the same rotations, so the same values to the bit); written into `out` (length >= d).
 */
export function symmetricEigenvaluesSmall(a: Matrix, out: Float64Array): void {
  const d = a.length;
  const { diagonal, order } = jacobiDescending(a, d, null);
  for (let c = 0; c < d; c++) out[c] = diagonal[order[c]];
}

/**
 * Jacobi rotations on a (accumulated into v when given), then the diagonal and
 * the order of its entries, descending (module scratch for d <= 3).
 */
function jacobiDescending(a: Matrix, d: number, v: Float64Array | null): { diagonal: Float64Array; order: Int32Array } {
  const small = d <= 3;
  const m = small ? WORK_M : new Float64Array(d * d);
  jacobiInPlace(a, d, m, v);
  const diagonal = small ? WORK_D : new Float64Array(d);
  const order = small ? WORK_ORDER : new Int32Array(d);
  for (let i = 0; i < d; i++) diagonal[i] = m[i * d + i];
  orderDescending(diagonal, d, order);
  return { diagonal, order };
}

/**
 * Singular value decomposition A = U diag(s) V^T of a square d x d matrix
 * (d <= 3 intended); U and V orthogonal also when A is rank deficient
 * (missing left vectors completed by a cross product in 3-D or a
 * perpendicular in 2-D), s non-negative and descending.
 */
export function svdSmall(a: Matrix): { u: number[][]; s: number[]; v: number[][] } {
  const d = a.length;
  const small = d <= 3;
  // w = A and v = I, row-major with stride d.
  const w = small ? WORK_M : new Float64Array(d * d);
  const v = small ? WORK_V : new Float64Array(d * d);
  for (let i = 0; i < d; i++)
    for (let j = 0; j < d; j++) {
      w[i * d + j] = a[i][j];
      v[i * d + j] = i === j ? 1 : 0;
    }
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    let rotated = false;
    for (let p = 0; p < d - 1; p++)
      for (let q = p + 1; q < d; q++) {
        let alpha = 0, beta = 0, gamma = 0;
        for (let k = 0; k < d; k++) {
          const wp = w[k * d + p], wq = w[k * d + q];
          alpha += wp * wp;
          beta += wq * wq;
          gamma += wp * wq;
        }
        if (gamma === 0 || Math.abs(gamma) <= EPS * Math.sqrt(alpha * beta)) continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t), s = c * t;
        for (let k = 0; k < d; k++) {
          const wp = w[k * d + p], wq = w[k * d + q];
          w[k * d + p] = c * wp - s * wq;
          w[k * d + q] = s * wp + c * wq;
          const vp = v[k * d + p], vq = v[k * d + q];
          v[k * d + p] = c * vp - s * vq;
          v[k * d + q] = s * vp + c * vq;
        }
      }
    if (!rotated) break;
  }
  const norms = small ? WORK_D : new Float64Array(d);
  const order = small ? WORK_ORDER : new Int32Array(d);
  for (let j = 0; j < d; j++) {
    let n = 0;
    for (let k = 0; k < d; k++) n += w[k * d + j] * w[k * d + j];
    norms[j] = Math.sqrt(n);
  }
  orderDescending(norms, d, order);
  const s = new Array<number>(d);
  for (let c = 0; c < d; c++) s[c] = norms[order[c]];
  const vs: number[][] = [];
  const u: number[][] = [];
  for (let k = 0; k < d; k++) {
    const vrow = new Array<number>(d);
    for (let c = 0; c < d; c++) vrow[c] = v[k * d + order[c]];
    vs.push(vrow);
    const urow = new Array<number>(d);
    for (let c = 0; c < d; c++) urow[c] = 0;
    u.push(urow);
  }
  const tiny = (s[0] || 1) * 1e-13;
  let good = 0;
  for (let c = 0; c < d; c++) {
    const j = order[c];
    if (s[c] > tiny) {
      for (let k = 0; k < d; k++) u[k][c] = w[k * d + j] / s[c];
      good++;
    }
  }
  completeOrthonormal(u, good);
  return { u, s, v: vs };
}

/** Fill columns good..d-1 of u so that its columns are orthonormal (Gram-Schmidt on unit vectors). */
function completeOrthonormal(u: number[][], good: number): void {
  const d = u.length;
  for (let c = good; c < d; c++) {
    if (d === 3 && c === 2) {
      // Cross product of the first two columns.
      u[0][2] = u[1][0] * u[2][1] - u[2][0] * u[1][1];
      u[1][2] = u[2][0] * u[0][1] - u[0][0] * u[2][1];
      u[2][2] = u[0][0] * u[1][1] - u[1][0] * u[0][1];
      continue;
    }
    for (let e = 0; e < d; e++) {
      const cand = new Array<number>(d).fill(0);
      cand[e] = 1;
      for (let b = 0; b < c; b++) {
        let dot = 0;
        for (let k = 0; k < d; k++) dot += u[k][b] * cand[k];
        for (let k = 0; k < d; k++) cand[k] -= dot * u[k][b];
      }
      const n = Math.hypot(...cand);
      if (n > 0.5) {
        for (let k = 0; k < d; k++) u[k][c] = cand[k] / n;
        break;
      }
    }
  }
}
