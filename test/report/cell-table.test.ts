import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import { FitError } from '../../src/errors.js';
import { multiply, transpose } from '../../src/geometry/linear-algebra.js';
import { createRng, randomRotation, shuffle } from '../../src/random.js';
import {
  cellTable,
  describeCells,
  leastSeparableCells,
  mostVariableCells,
  sortCellSummaries,
} from '../../src/report/cell-table.js';
import type { Template } from '../../src/types.js';
import { makeCell, makeTemplate, testTemplate } from './support/template.js';

// numpy 1.24.2 / scipy 1.10.1 (Debian python3-scipy), fixture test/fixtures/cell-summary.json,
// made by scripts/fixtures/cell-summary.py
interface FixtureCell {
  label: string;
  mean: number[];
  covariance: number[][];
  expected: {
    principalSds: number[];
    generalisedSd: number;
    nearest: string;
    nearestDistance: number;
    mahalanobisUnderThis: number;
    mahalanobisUnderOther: number;
    leastSeparated: string;
    separation: number;
  };
}
const fixture = JSON.parse(readFileSync(new URL('../fixtures/cell-summary.json', import.meta.url), 'utf8')) as {
  cells: FixtureCell[];
};

function deepFreeze<T>(o: T): T {
  if (o && typeof o === 'object') {
    for (const v of Object.values(o as object)) deepFreeze(v);
    Object.freeze(o);
  }
  return o;
}

describe('describeCells', () => {
  const template = makeTemplate(
    fixture.cells.map((c, i) => makeCell(c.label, c.mean, c.covariance, 3 + i)),
    3,
  );
  const summaries = describeCells(template);

  it('gives principal sds, generalised sd, nearest cell and Mahalanobis distances both ways as numpy/scipy do (10 digits)', () => {
    expect(summaries).toHaveLength(fixture.cells.length);
    fixture.cells.forEach((c, i) => {
      const s = summaries[i];
      expect(s.label).toBe(c.label);
      s.principalSds.forEach((v, k) => expect(v).toBeCloseTo(c.expected.principalSds[k], 10));
      expect(s.generalisedSd).toBeCloseTo(c.expected.generalisedSd, 10);
      expect(s.nearest?.label).toBe(c.expected.nearest);
      expect(s.nearest?.distance).toBeCloseTo(c.expected.nearestDistance, 10);
      expect(s.nearest?.mahalanobisUnderThis).toBeCloseTo(c.expected.mahalanobisUnderThis, 10);
      expect(s.nearest?.mahalanobisUnderOther).toBeCloseTo(c.expected.mahalanobisUnderOther, 10);
      expect(s.leastSeparated?.label).toBe(c.expected.leastSeparated);
      expect(s.leastSeparated?.separation).toBeCloseTo(c.expected.separation, 10);
    });
  });

  it('matches a hand derivation for diagonal covariances', () => {
    // A at the origin with Sigma_A = diag(1, 4, 9); B at (3, 0, 0) with Sigma_B = diag(9, 1, 1);
    // C at (0, 0, 12) with Sigma_C = I. Hand: |AB| = 3, D_A(B) = 3 / 1 = 3, D_B(A) = 3 / 3 = 1;
    // |AC| = 12, D_A(C) = 12 / 3 = 4, D_C(A) = 12. Principal sds of A: 3, 2, 1; generalised sd (1*4*9)^(1/6) = 6^(1/3).
    const t = makeTemplate(
      [
        makeCell('A', [0, 0, 0], [[1, 0, 0], [0, 4, 0], [0, 0, 9]], 10),
        makeCell('B', [3, 0, 0], [[9, 0, 0], [0, 1, 0], [0, 0, 1]], 10),
        makeCell('C', [0, 0, 12], [[1, 0, 0], [0, 1, 0], [0, 0, 1]], 2),
      ],
      3,
      [
        { sample: 'gk-01', row: 5, label: 'C', distance: 5, likelierLabel: null, likelierDistance: null },
        { sample: 'gk-02', row: 9, label: 'C', distance: 6, likelierLabel: 'A', likelierDistance: 1 },
      ],
    );
    const [a, b, c] = describeCells(t);
    expect(a.principalSds.map((v) => Number(v.toFixed(12)))).toEqual([3, 2, 1]);
    expect(a.generalisedSd).toBeCloseTo(Math.cbrt(6), 12);
    expect(a.nearest).toEqual({ label: 'B', distance: 3, mahalanobisUnderThis: 3, mahalanobisUnderOther: 1 });
    expect(b.nearest?.mahalanobisUnderThis).toBeCloseTo(1, 12);
    expect(b.leastSeparated).toEqual({ label: 'A', separation: 1 });
    expect(c.nearest?.label).toBe('A');
    expect(c.nearest?.mahalanobisUnderThis).toBeCloseTo(12, 12);
    expect(c.nearest?.mahalanobisUnderOther).toBeCloseTo(4, 12);
    expect(c.sparse).toBe(true);
    expect([a.flagged, b.flagged, c.flagged]).toEqual([0, 0, 2]);
  });

  it('gives no neighbour for a one-cell template and an empty list for an empty one', () => {
    const one = describeCells(makeTemplate([makeCell('A', [1, 2], [[1, 0], [0, 2]], 4)], 2));
    expect(one[0].nearest).toBeNull();
    expect(one[0].leastSeparated).toBeNull();
    expect(one[0].principalSds[0]).toBeCloseTo(Math.SQRT2, 12);
    expect(describeCells(makeTemplate([], 3))).toEqual([]);
  });

  it('does not change its input', () => {
    const t = deepFreeze(testTemplate({ cells: 12 }));
    const before = JSON.stringify(t);
    expect(() => describeCells(t)).not.toThrow();
    expect(JSON.stringify(t)).toBe(before);
  });

  it('throws FitError naming the cell whose covariance is not positive definite', () => {
    const t = makeTemplate(
      [makeCell('Good', [0, 0], [[1, 0], [0, 1]], 5), makeCell('Flat-1', [1, 1], [[1, 1], [1, 1]], 5)],
      2,
    );
    expect(() => describeCells(t)).toThrow(FitError);
    expect(() => describeCells(t)).toThrow(/cell "Flat-1" is not positive definite/);
  });

  it('is invariant to rotating and translating the whole template (sds, distances, Mahalanobis, neighbours)', () => {
    const base = testTemplate({ cells: 15, seed: 3 });
    const ref = describeCells(base);
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1_000_000 }), fc.double({ min: -50, max: 50, noNaN: true }), (seed, shift) => {
        const r = randomRotation(createRng(seed), 3);
        const moved: Template = {
          ...base,
          cells: base.cells.map((c) =>
            makeCell(
              c.label,
              r.map((row) => row.reduce((s, v, k) => s + v * c.mean[k], 0) + shift),
              multiply(multiply(r, c.covariance), transpose(r)).map((row, i, m) => row.map((v, j) => 0.5 * (v + m[j][i]))),
              c.count,
            ),
          ),
        };
        const got = describeCells(moved);
        got.forEach((s, i) => {
          s.principalSds.forEach((v, k) => expect(v).toBeCloseTo(ref[i].principalSds[k], 8));
          expect(s.nearest?.label).toBe(ref[i].nearest?.label);
          expect(s.nearest?.distance).toBeCloseTo(ref[i].nearest!.distance, 8);
          expect(s.nearest?.mahalanobisUnderThis).toBeCloseTo(ref[i].nearest!.mahalanobisUnderThis, 7);
          expect(s.leastSeparated?.separation).toBeCloseTo(ref[i].leastSeparated!.separation, 7);
        });
      }),
      { seed: 42, numRuns: 15 },
    );
  });
});

describe('describeCells under re-ordering', () => {
  it('gives each cell the same summary whatever the order of the cells', () => {
    const base = testTemplate({ cells: 14, seed: 9 });
    const ref = new Map(describeCells(base).map((s) => [s.label, s]));
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1_000_000 }), (seed) => {
        const shuffled = shuffle(base.cells, createRng(seed));
        for (const s of describeCells({ ...base, cells: shuffled })) {
          const r = ref.get(s.label)!;
          expect(s.nearest?.label).toBe(r.nearest?.label);
          expect(s.leastSeparated?.label).toBe(r.leastSeparated?.label);
          expect(s.leastSeparated?.separation).toBeCloseTo(r.leastSeparated!.separation, 12);
          s.principalSds.forEach((v, k) => expect(v).toBeCloseTo(r.principalSds[k], 12));
        }
      }),
      { seed: 7, numRuns: 10 },
    );
  });
});

describe('sorted views', () => {
  const t = makeTemplate(
    [
      makeCell('b', [0, 0], [[1, 0], [0, 1]], 5), // largest sd 1, far from others
      makeCell('a', [10, 0], [[4, 0], [0, 1]], 5), // largest sd 2
      makeCell('c', [11, 0], [[4, 0], [0, 4]], 5), // largest sd 2, generalised sd 2
    ],
    2,
  );
  const s = describeCells(t);

  it('orders by label in code-point order', () => {
    expect(sortCellSummaries(s, 'label').map((x) => x.label)).toEqual(['a', 'b', 'c']);
  });

  it('puts the most variable first: largest principal sd, then generalised sd', () => {
    expect(mostVariableCells(s, 3).map((x) => x.label)).toEqual(['c', 'a', 'b']);
    expect(mostVariableCells(s, 1).map((x) => x.label)).toEqual(['c']);
  });

  it('puts the least separable first: smallest Mahalanobis separation', () => {
    // a-c: 1 um apart along x, sd 2 along x under both: separation 0.5; b is 10 um from a (D_a(b) = 5).
    expect(leastSeparableCells(s, 3).map((x) => x.label)).toEqual(['a', 'c', 'b']);
    expect(s[1].leastSeparated?.separation).toBeCloseTo(0.5, 12);
  });

  it('returns copies and leaves the input order alone', () => {
    const before = s.map((x) => x.label);
    sortCellSummaries(s, 'variability');
    expect(s.map((x) => x.label)).toEqual(before);
  });
});

describe('cellTable', () => {
  it('has one column per mean coordinate and principal sd, and null where a cell has no neighbour', () => {
    const t = makeTemplate([makeCell('A', [1, 2, 3], [[1, 0, 0], [0, 4, 0], [0, 0, 9]], 4)], 3);
    const table = cellTable(describeCells(t), 3);
    expect(table.columns.map((c) => c.key)).toEqual([
      'label', 'count', 'sparse', 'mean_x', 'mean_y', 'mean_z', 'sd_1', 'sd_2', 'sd_3', 'sd_generalised',
      'nearest', 'nearest_distance_um', 'nearest_mahalanobis_this', 'nearest_mahalanobis_other',
      'least_separable', 'separation_mahalanobis', 'flagged',
    ]);
    const row = table.rows[0];
    expect(row.slice(0, 9).map((v) => (typeof v === 'number' ? Number(v.toFixed(12)) : v))).toEqual([
      'A', 4, 'yes', 1, 2, 3, 3, 2, 1,
    ]);
    expect(row.slice(10, 16)).toEqual([null, null, null, null, null, null]);
  });
});
