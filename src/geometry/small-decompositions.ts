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

/** Eigen-decomposition of a symmetric d x d matrix (d <= 3 intended): values descending, vectors as columns. */
export function symmetricEigenSmall(a: Matrix): { values: number[]; vectors: number[][] } {
  const d = a.length;
  const m = a.map((row, i) => row.map((v, j) => 0.5 * (v + a[j][i])));
  const v: number[][] = [];
  for (let i = 0; i < d; i++) {
    v.push(new Array<number>(d).fill(0));
    v[i][i] = 1;
  }
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    let off = 0, diag = 0;
    for (let p = 0; p < d; p++) {
      diag += m[p][p] * m[p][p];
      for (let q = p + 1; q < d; q++) off += m[p][q] * m[p][q];
    }
    if (off <= EPS * EPS * diag || off === 0) break;
    for (let p = 0; p < d - 1; p++)
      for (let q = p + 1; q < d; q++) {
        const apq = m[p][q];
        if (apq === 0) continue;
        // Rotation angle that zeroes m[p][q]: theta = (a_qq - a_pp) / (2 a_pq), t = sgn(theta) / (|theta| + sqrt(theta^2 + 1)).
        const theta = (m[q][q] - m[p][p]) / (2 * apq);
        const t = (theta >= 0 ? 1 : -1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1), s = t * c;
        for (let k = 0; k < d; k++) {
          const mkp = m[k][p], mkq = m[k][q];
          m[k][p] = c * mkp - s * mkq;
          m[k][q] = s * mkp + c * mkq;
        }
        for (let k = 0; k < d; k++) {
          const mpk = m[p][k], mqk = m[q][k];
          m[p][k] = c * mpk - s * mqk;
          m[q][k] = s * mpk + c * mqk;
        }
        for (let k = 0; k < d; k++) {
          const vkp = v[k][p], vkq = v[k][q];
          v[k][p] = c * vkp - s * vkq;
          v[k][q] = s * vkp + c * vkq;
        }
      }
  }
  const order = Array.from({ length: d }, (_, i) => i).sort((i, j) => m[j][j] - m[i][i]);
  return { values: order.map((i) => m[i][i]), vectors: v.map((row) => order.map((i) => row[i])) };
}

/**
 * Singular value decomposition A = U diag(s) V^T of a square d x d matrix
 * (d <= 3 intended); U and V orthogonal also when A is rank deficient
 * (missing left vectors completed by a cross product in 3-D or a
 * perpendicular in 2-D), s non-negative and descending.
 */
export function svdSmall(a: Matrix): { u: number[][]; s: number[]; v: number[][] } {
  const d = a.length;
  const w = a.map((row) => row.slice());
  const v: number[][] = [];
  for (let i = 0; i < d; i++) {
    v.push(new Array<number>(d).fill(0));
    v[i][i] = 1;
  }
  for (let sweep = 0; sweep < MAX_SWEEPS; sweep++) {
    let rotated = false;
    for (let p = 0; p < d - 1; p++)
      for (let q = p + 1; q < d; q++) {
        let alpha = 0, beta = 0, gamma = 0;
        for (let k = 0; k < d; k++) {
          alpha += w[k][p] * w[k][p];
          beta += w[k][q] * w[k][q];
          gamma += w[k][p] * w[k][q];
        }
        if (gamma === 0 || Math.abs(gamma) <= EPS * Math.sqrt(alpha * beta)) continue;
        rotated = true;
        const zeta = (beta - alpha) / (2 * gamma);
        const t = (zeta >= 0 ? 1 : -1) / (Math.abs(zeta) + Math.sqrt(1 + zeta * zeta));
        const c = 1 / Math.sqrt(1 + t * t), s = c * t;
        for (let k = 0; k < d; k++) {
          const wp = w[k][p], wq = w[k][q];
          w[k][p] = c * wp - s * wq;
          w[k][q] = s * wp + c * wq;
          const vp = v[k][p], vq = v[k][q];
          v[k][p] = c * vp - s * vq;
          v[k][q] = s * vp + c * vq;
        }
      }
    if (!rotated) break;
  }
  const norms = Array.from({ length: d }, (_, j) => {
    let n = 0;
    for (let k = 0; k < d; k++) n += w[k][j] * w[k][j];
    return Math.sqrt(n);
  });
  const order = Array.from({ length: d }, (_, i) => i).sort((i, j) => norms[j] - norms[i]);
  const s = order.map((j) => norms[j]);
  const vs = v.map((row) => order.map((j) => row[j]));
  const u: number[][] = Array.from({ length: d }, () => new Array<number>(d).fill(0));
  const tiny = (s[0] || 1) * 1e-13;
  let good = 0;
  for (let c = 0; c < d; c++) {
    const j = order[c];
    if (s[c] > tiny) {
      for (let k = 0; k < d; k++) u[k][c] = w[k][j] / s[c];
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
