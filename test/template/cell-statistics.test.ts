import { describe, it, expect } from 'vitest';
import {
  addObservationInPlace,
  cellsFromSums,
  emptySums,
  floorEigenvalues,
  pooledCovariance,
  predictiveCovariance,
  predictiveCutoff,
  scatterFromSums,
  shrunkCovariance,
} from '../../src/template/cell-statistics.js';
import { fitSimilarity, isPositiveDefinite, mahalanobisSquared, precisionMatrix, applyTransform, symmetricEigen } from '../../src/geometry/index.js';
import { buildTemplate } from '../../src/template/build.js';
import { chiSquareQuantile } from '../../src/stats/index.js';
import { createRng } from '../../src/random.js';
import { generateAnimal, generateLayout } from '../support/animals.js';

function sumsOf(points: number[][]) {
  const s = emptySums(points[0].length);
  for (const p of points) addObservationInPlace(s, p);
  return s;
}

// Hand derivation: cell A = {(0,0), (2,0), (0,2)}, mean (2/3, 2/3), scatter [[8/3, -4/3], [-4/3, 8/3]];
// cell B = {(10,10), (11,10)}, scatter [[1/2, 0], [0, 0]]; pooled = (W_A + W_B) / (2 + 1).
const A = sumsOf([[0, 0], [2, 0], [0, 2]]);
const B = sumsOf([[10, 10], [11, 10]]);

describe('scatterFromSums', () => {
  it('gives W = Q - S S^T / n (hand derivation, cell A)', () => {
    const w = scatterFromSums(A.n, A.sum, A.sumOfSquares);
    expect(w[0][0]).toBeCloseTo(8 / 3, 12);
    expect(w[0][1]).toBeCloseTo(-4 / 3, 12);
    expect(w[1][1]).toBeCloseTo(8 / 3, 12);
  });
  it('is zero for a single observation', () => {
    const one = sumsOf([[5, 6]]);
    expect(scatterFromSums(one.n, one.sum, one.sumOfSquares)).toEqual([[0, 0], [0, 0]]);
  });
});

describe('pooledCovariance', () => {
  it('divides the summed scatters by sum (n_k - 1) (hand derivation: [[19/18, -4/9], [-4/9, 8/9]])', () => {
    const p = pooledCovariance(
      [A, B].map((s) => ({ n: s.n, scatter: scatterFromSums(s.n, s.sum, s.sumOfSquares) })),
      2,
    );
    expect(p[0][0]).toBeCloseTo(19 / 18, 12);
    expect(p[0][1]).toBeCloseTo(-4 / 9, 12);
    expect(p[1][1]).toBeCloseTo(8 / 9, 12);
  });
  it('throws FitError when no cell was seen twice', () => {
    expect(() => pooledCovariance([{ n: 1, scatter: [[0, 0], [0, 0]] }], 2)).toThrow(/no cell was observed in two or more samples/);
  });
  it('floors eigenvalues at 1e-6 um^2 so a flat scatter still gives a positive definite matrix', () => {
    const p = pooledCovariance([{ n: 3, scatter: [[2, 0], [0, 0]] }], 2);
    expect(isPositiveDefinite(p)).toBe(true);
    expect(symmetricEigen(p).values[1]).toBeCloseTo(1e-6, 12);
    expect(floorEigenvalues([[1, 0], [0, 2]], 1e-6)).toEqual([[1, 0], [0, 2]]);
  });
});

describe('shrunkCovariance (inverse-Wishart posterior mean)', () => {
  const pooled = [[19 / 18, -4 / 9], [-4 / 9, 8 / 9]];
  it('is (nu0 Sigma_pool + W) / (nu0 + n - 1) (hand derivation, cell A, nu0 = 5)', () => {
    const w = scatterFromSums(A.n, A.sum, A.sumOfSquares);
    const s = shrunkCovariance(A.n, w, pooled, 5);
    expect(s[0][0]).toBeCloseTo((5 * 19 / 18 + 8 / 3) / 7, 12);
    expect(s[0][1]).toBeCloseTo((5 * -4 / 9 - 4 / 3) / 7, 12);
    expect(s[1][1]).toBeCloseTo((5 * 8 / 9 + 8 / 3) / 7, 12);
  });
  it('equals the pooled covariance for a cell seen once', () => {
    const s = shrunkCovariance(1, [[0, 0], [0, 0]], pooled, 5);
    for (let a = 0; a < 2; a++) for (let b = 0; b < 2; b++) expect(s[a][b]).toBeCloseTo(pooled[a][b], 14);
  });
  it('approaches the sample covariance W / (n - 1) as n grows', () => {
    const w = [[1000, 0], [0, 4000]];
    const s = shrunkCovariance(1001, w, pooled, 5);
    expect(s[0][0]).toBeCloseTo(1, 1);
    expect(s[1][1]).toBeCloseTo(4, 1);
  });
});

describe('cellsFromSums', () => {
  it('gives mean S/n, positive definite covariances, the exact sums, and marks cells below minCount sparse', () => {
    const { cells, pooled } = cellsFromSums([{ label: 'A', sums: A }, { label: 'B', sums: B }, { label: 'C', sums: sumsOf([[3, 3]]) }], 2, 5, 3);
    expect(cells.map((c) => [c.label, c.count, c.sparse])).toEqual([['A', 3, false], ['B', 2, true], ['C', 1, true]]);
    expect(cells[0].mean[0]).toBeCloseTo(2 / 3, 14);
    for (let a = 0; a < 2; a++) for (let b = 0; b < 2; b++) expect(cells[2].covariance[a][b]).toBeCloseTo(pooled[a][b], 14);
    for (const c of cells) expect(isPositiveDefinite(c.covariance)).toBe(true);
    expect(cells[0].sum).toEqual([2, 2]);
    expect(cells[0].sumOfSquares).toEqual([[4, 0], [0, 4]]);
  });
});

describe('predictiveCovariance', () => {
  it('is (1 + 1/n) times the cell covariance', () => {
    const cell = { label: 'A', mean: [0, 0], covariance: [[2, 0.5], [0.5, 1]], count: 4, sum: [0, 0], sumOfSquares: [[0, 0], [0, 0]], sparse: false };
    expect(predictiveCovariance(cell)).toEqual([[2.5, 0.625], [0.625, 1.25]]);
  });

  it("covers held-out animals' positions at close to the nominal 95% (synthetic animals, 3-D)", () => {
    // Leave-one-animal-out: template from 15 animals, the 16th aligned to it on all its labels.
    const rng = createRng(2026);
    const layout = generateLayout(rng, { cells: 60, dim: 3 });
    const animals = Array.from({ length: 16 }, (_, i) =>
      generateAnimal(layout, rng, `a${i}`, { labelledFraction: 1, outlierFraction: 0, missingFraction: 0.1, bend: 0 }),
    );
    const q = chiSquareQuantile(0.95, 3);
    let inPredictive = 0, inPlain = 0, total = 0;
    for (let h = 0; h < 4; h++) {
      const train = animals.filter((_, i) => i !== h).map((a) => a.sample);
      const { template } = buildTemplate(train, { robust: 'none' });
      const held = animals[h].sample;
      const byLabel = new Map(template.cells.map((c) => [c.label, c]));
      const idx = held.labels.map((l, i) => (l !== null && byLabel.has(l) ? i : -1)).filter((i) => i >= 0);
      const fit = fitSimilarity(idx.map((i) => held.coords[i]), idx.map((i) => byLabel.get(held.labels[i] as string)!.mean));
      const y = applyTransform(fit.transform, idx.map((i) => held.coords[i]));
      idx.forEach((i, j) => {
        const cell = byLabel.get(held.labels[i] as string)!;
        if (mahalanobisSquared(y[j], cell.mean, precisionMatrix(predictiveCovariance(cell))) <= q) inPredictive++;
        if (mahalanobisSquared(y[j], cell.mean, precisionMatrix(cell.covariance)) <= q) inPlain++;
        total++;
      });
    }
    const coverage = inPredictive / total;
    expect(coverage).toBeGreaterThan(0.9);
    expect(coverage).toBeLessThan(0.99);
    expect(inPredictive).toBeGreaterThanOrEqual(inPlain);
  });
});

describe('predictiveCutoff', () => {
  // scipy 1.10.1 (Debian python3-scipy): f.ppf(0.999, 3, 16) = 9.005936855560376; chi2.ppf(0.999, 3) = 16.26623619623813.
  it('is d F^-1_{d, nu0+n+1}(1 - p) (nu0 + n - 1) / (nu0 + n + 1) for the Student-t reference (n = 10, nu0 = 5, d = 3)', () => {
    expect(predictiveCutoff(10, 3, 5, 0.001)).toBeCloseTo((3 * 9.005936855560376 * 14) / 16, 9);
  });
  it('is the chi-square quantile for the chi-square reference, and the Student-t radius approaches it as n grows', () => {
    expect(predictiveCutoff(10, 3, 5, 0.001, 'chi-square')).toBeCloseTo(16.26623619623813, 9);
    expect(predictiveCutoff(100000, 3, 5, 0.001)).toBeCloseTo(16.26623619623813, 1);
    expect(predictiveCutoff(10, 3, 5, 0.001)).toBeGreaterThan(predictiveCutoff(40, 3, 5, 0.001));
  });
});
