import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FitError } from '../../src/errors.js';
import {
  cholesky,
  gaussianLogDensity,
  isPositiveDefinite,
  logDeterminant,
  mahalanobisDistance,
  mahalanobisSquared,
  multiply,
  precisionMatrix,
  sampleCovariance,
  transpose,
} from '../../src/geometry/index.js';
import { expectArrayClose, expectClose } from './expect-close.js';

interface CovarianceFixture {
  python: string;
  numpy: string;
  scipy: string;
  spd: {
    sigma: number[][];
    cholesky: number[][];
    slogdet: [number, number];
    inverse: number[][];
    mu: number[];
    x: number[][];
    mahalanobis: number[];
    logpdf: number[];
  }[];
  sampleCovariance: { points: number[][]; cov: number[][] }[];
}
// Python 3.11.2, numpy 1.24.2 (Debian python3-numpy 1:1.24.2-1+deb12u1), scipy 1.10.1 (python3-scipy 1.10.1-2);
// seeded inputs written by scripts/fixtures/covariance.py, fixture test/fixtures/reference/covariance-numpy.json.
const fixture = JSON.parse(
  readFileSync(new URL('../fixtures/reference/covariance-numpy.json', import.meta.url), 'utf8'),
) as CovarianceFixture;

function deepFreeze(m: number[][]): readonly (readonly number[])[] {
  return Object.freeze(m.map((r) => Object.freeze(r.slice())));
}

describe('cholesky', () => {
  // The 3x3 example of the Wikipedia article "Cholesky decomposition" (quoted from memory), checked by
  // hand: L L^T reproduces every entry of A.
  const a = deepFreeze([
    [4, 12, -16],
    [12, 37, -43],
    [-16, -43, 98],
  ]);

  it('factors the textbook matrix [[4,12,-16],[12,37,-43],[-16,-43,98]] as L = [[2,0,0],[6,1,0],[-8,5,3]]', () => {
    expectArrayClose(cholesky(a), [
      [2, 0, 0],
      [6, 1, 0],
      [-8, 5, 3],
    ], 14);
  });

  it('matches numpy.linalg.cholesky on seeded SPD matrices (1x1 to 4x4) to 12 digits', () => {
    for (const c of fixture.spd) {
      expectArrayClose(cholesky(c.sigma), c.cholesky, 12, 'L');
      expectArrayClose(multiply(c.cholesky, transpose(c.cholesky)), c.sigma, 10, 'L L^T');
    }
  });

  it('accepts a rotated covariance R S R^T whose zero off-diagonals differ only by rounding', () => {
    // Found while testing: [[100, 7.1e-15, 0], [-7.1e-15, 100, 0], [0, 0, 9]] was rejected as not symmetric.
    const sigma = [[100, 7.105427357601002e-15, 0], [-7.105427357601002e-15, 100, 0], [0, 0, 9]];
    expectArrayClose(cholesky(sigma), [[10, 0, 0], [0, 10, 0], [0, 0, 3]], 14);
    expect(() => cholesky([[100, 1e-6], [-1e-6, 100]])).toThrow(new FitError('cholesky: matrix is not symmetric at (1, 0)'));
  });

  it('throws FitError for a matrix that is not positive definite, not symmetric or not square', () => {
    expect(() => cholesky([[1, 2], [2, 1]])).toThrow(FitError);
    expect(() => cholesky([[1, 2], [2, 1]])).toThrow(/not positive definite \(pivot 1 is -3\)/);
    expect(() => cholesky([[0, 0], [0, 1]])).toThrow(/not positive definite \(pivot 0 is 0\)/);
    expect(() => cholesky([[2, 1], [0, 2]])).toThrow(new FitError('cholesky: matrix is not symmetric at (1, 0)'));
    expect(() => cholesky([[2, 1, 0], [1, 2, 0]])).toThrow(new FitError('cholesky: matrix is not square (2x3)'));
    expect(() => cholesky([[NaN, 0], [0, 1]])).toThrow(FitError);
    expect(isPositiveDefinite([[1, 2], [2, 1]])).toBe(false);
    expect(isPositiveDefinite(a)).toBe(true);
  });
});

describe('logDeterminant', () => {
  it('is 2 log 6 for the textbook matrix (det = (2*1*3)^2 = 36)', () => {
    expectClose(logDeterminant([[4, 12, -16], [12, 37, -43], [-16, -43, 98]]), Math.log(36), 14);
  });

  it('matches numpy.linalg.slogdet to 12 digits, including a matrix with det far below 1', () => {
    for (const c of fixture.spd) {
      expect(c.slogdet[0]).toBe(1);
      expectClose(logDeterminant(c.sigma), c.slogdet[1], 12, 'log det');
    }
    expect(Math.min(...fixture.spd.map((c) => c.slogdet[1]))).toBeLessThan(-10);
  });

  it('throws FitError when the matrix is not positive definite', () => {
    expect(() => logDeterminant([[1, 0], [0, -1]])).toThrow(FitError);
  });
});

describe('precisionMatrix', () => {
  it('matches numpy.linalg.inv of SPD matrices to 10 digits relative to the largest entry', () => {
    for (const c of fixture.spd) {
      const scale = Math.max(...c.inverse.flat().map(Math.abs));
      const p = precisionMatrix(c.sigma).map((r) => r.map((v) => v / scale));
      expectArrayClose(p, c.inverse.map((r) => r.map((v) => v / scale)), 10, 'Sigma^-1');
    }
  });
});

describe('Mahalanobis distance', () => {
  it('is |x - mu| / sigma in one dimension: x = 5, mu = 1, variance 4 gives 2', () => {
    expectClose(mahalanobisDistance([5], [1], [[4]]), 2, 15);
    expectClose(mahalanobisSquared([5], [1], [[0.25]]), 4, 15);
  });

  it('matches scipy.spatial.distance.mahalanobis (given VI = Sigma^-1) to 10 digits', () => {
    for (const c of fixture.spd) {
      const p = precisionMatrix(c.sigma);
      c.x.forEach((x, i) => {
        expectClose(mahalanobisDistance(x, c.mu, c.sigma), c.mahalanobis[i], 10, 'distance');
        expectClose(mahalanobisSquared(x, c.mu, p), c.mahalanobis[i] ** 2, 10, 'squared');
      });
    }
  });

  it('does not modify its inputs', () => {
    const sigma = deepFreeze([[4, 1], [1, 3]]);
    const x = Object.freeze([1, 2]), mu = Object.freeze([0, 0]);
    expect(() => mahalanobisDistance(x, mu, sigma)).not.toThrow();
  });
});

describe('gaussianLogDensity', () => {
  it('matches scipy.stats.multivariate_normal.logpdf to 10 digits', () => {
    for (const c of fixture.spd) {
      c.x.forEach((x, i) => expectClose(gaussianLogDensity(x, c.mu, c.sigma), c.logpdf[i], 10, 'logpdf'));
    }
  });

  it('is -0.5 log(2 pi) at the mean of a standard normal', () => {
    expectClose(gaussianLogDensity([0], [0], [[1]]), -0.5 * Math.log(2 * Math.PI), 15);
  });
});

describe('sampleCovariance (n - 1 denominator)', () => {
  it('matches numpy.cov(points, rowvar=False) to 10 digits, from 2 to 30 points', () => {
    for (const c of fixture.sampleCovariance) {
      const scale = Math.max(...c.cov.flat().map(Math.abs));
      const ours = sampleCovariance(deepFreeze(c.points)).map((r) => r.map((v) => v / scale));
      expectArrayClose(ours, c.cov.map((r) => r.map((v) => v / scale)), 10, 'cov');
    }
  });

  it('divides by n - 1: points (0, 0) and (2, 4) give [[2, 4], [4, 8]]', () => {
    expectArrayClose(sampleCovariance([[0, 0], [2, 4]]), [[2, 4], [4, 8]], 15);
  });

  it('throws FitError for fewer than 2 points', () => {
    expect(() => sampleCovariance([[1, 2]])).toThrow(new FitError('sampleCovariance needs at least 2 points, got 1'));
    expect(() => sampleCovariance([])).toThrow(new FitError('sampleCovariance needs at least 2 points, got 0'));
  });
});
