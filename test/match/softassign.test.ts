import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { gaussianLogDensity } from '../../src/geometry/index.js';
import { buildCellGrid } from '../../src/match/cell-grid.js';
import { buildCellModel, cellMahalanobisSquared } from '../../src/match/cell-model.js';
import { createRng } from '../../src/random.js';
import { generateLayout } from '../support/animals.js';
import { greedyMatching, pairGains, pointLikelihood, sinkhorn, type PairGains } from '../../src/match/softassign.js';
import { pairTable, templateFromLayout } from './support.js';

describe('pairGains', () => {
  it('equals log(rho J N(y; mu, S)) - log(Lambda u) - log(1 - rho) with S the predictive covariance', () => {
    const layout = {
      dim: 3 as const,
      labels: ['Aa', 'Bb'],
      positions: [
        [0, 0, 0],
        [5, 1, 0],
      ],
      jitter: [
        [
          [2, 0.3, 0],
          [0.3, 1, 0.1],
          [0, 0.1, 1.5],
        ],
        [
          [1, 0, 0],
          [0, 1, 0],
          [0, 0, 1],
        ],
      ],
    };
    const template = templateFromLayout(layout, 4); // predictive covariance = (1 + 1/4) jitter
    const model = buildCellModel(template);
    const grid = buildCellGrid(model, 3.5);
    const params = { detection: 0.8, outliers: 3, outlierDensity: 1e-4 };
    const y = [0.7, -0.4, 0.9];
    const g = pairGains(model, grid, [y], 1.3, params);
    const k = Array.from(g.cells).indexOf(0);
    expect(k).toBeGreaterThanOrEqual(0);
    // Hand formula with the geometry module's Gaussian log density (independent code path).
    const s = layout.jitter[0].map((row) => row.map((v) => v * 1.25));
    const expected = Math.log(0.8 * 1.3) + gaussianLogDensity(y, [0, 0, 0], s) - Math.log(3 * 1e-4) - Math.log(0.2);
    expect(g.gains[k]).toBeCloseTo(expected, 10);
  });

  it('subtracts each point\'s outlier excess delta_i from its gains, and positiveOnly drops the pairs it makes non-positive', () => {
    const rng = createRng(5);
    const layout = generateLayout(rng, { cells: 40, dim: 3 });
    const model = buildCellModel(templateFromLayout(layout, 10));
    const grid = buildCellGrid(model, 3.5);
    const params = { detection: 0.85, outliers: 8, outlierDensity: 1e-4 };
    const points = layout.positions.slice(0, 12).map((p) => p.map((v) => v + 0.3));
    const excess = Float64Array.from(points, (_, i) => (i % 3 === 0 ? 0 : 0.7 * i));
    const plain = pairGains(model, grid, points, 1, params);
    const guarded = pairGains(model, grid, points, 1, { ...params, outlierExcess: excess });
    expect(Array.from(guarded.cells)).toEqual(Array.from(plain.cells));
    for (let i = 0; i < points.length; i++)
      for (let j = plain.rowStart[i]; j < plain.rowStart[i + 1]; j++) expect(guarded.gains[j]).toBeCloseTo(plain.gains[j] - excess[i], 12);
    const positive = pairGains(model, grid, points, 1, { ...params, outlierExcess: excess }, true);
    expect(positive.gains.length).toBe(Array.from(guarded.gains).filter((g) => g > 0).length);
    expect(() => pairGains(model, grid, points, 1, { ...params, outlierExcess: new Float64Array(3) })).toThrow(RangeError);
  });
});

describe('pairGains against a scan of every pair', () => {
  // Reference: every (point, cell) pair, e2 from cellMahalanobisSquared (a separate code path), kept when
  // e2 <= 3.5^2 c and, with positiveOnly, gain > 0; rows in point order, cells ascending.
  function reference(model: ReturnType<typeof buildCellModel>, mapped: number[][], jacobian: number, params: { detection: number; outliers: number; outlierDensity: number; inflation?: number }, positiveOnly: boolean) {
    const c = params.inflation ?? 1;
    const base = Math.log(params.detection * jacobian) - Math.log(params.outliers * params.outlierDensity) - Math.log(1 - params.detection) - 0.5 * model.dim * Math.log(2 * Math.PI * c);
    const rows: { cell: number; gain: number; e2: number }[][] = [];
    for (const y of mapped) {
      const row: { cell: number; gain: number; e2: number }[] = [];
      for (let k = 0; k < model.size; k++) {
        const e2 = cellMahalanobisSquared(model, k, y);
        if (e2 > 12.25 * c) continue;
        const gain = base - 0.5 * model.logDets[k] - (0.5 / c) * e2;
        if (positiveOnly && !(gain > 0)) continue;
        row.push({ cell: k, gain, e2 });
      }
      rows.push(row);
    }
    return rows;
  }

  for (const dim of [2, 3] as const)
    for (const inflation of [1, 4])
      it(`lists the same pairs and gains in ${dim}-D at inflation ${inflation}, with and without positiveOnly and scratch`, () => {
        const rng = createRng(40 + dim + inflation);
        const layout = generateLayout(rng, { cells: 150, dim, arrangement: 'uniform' });
        // Cells four times as wide as the layout's jitter: three points (a buffer of 64 entries) crowded into
        // one spot then reach more cells than the buffer holds, and it must grow.
        const wide = { ...layout, jitter: layout.jitter.map((m) => m.map((r) => r.map((v) => 16 * v))) };
        const model = buildCellModel(templateFromLayout(wide, 10));
        const grid = buildCellGrid(model, 3.5 * Math.sqrt(inflation));
        // Points over the head and beyond it, and the crowded three.
        const lo = layout.positions.reduce((m, p) => m.map((v, a) => Math.min(v, p[a])), new Array<number>(dim).fill(Infinity));
        const hi = layout.positions.reduce((m, p) => m.map((v, a) => Math.max(v, p[a])), new Array<number>(dim).fill(-Infinity));
        const spread = Array.from({ length: 40 }, () => lo.map((v, a) => v - 5 + rng() * (hi[a] - v + 10)));
        const crowded = Array.from({ length: 3 }, () => layout.positions[0].map((v) => v + rng()));
        for (const mapped of [spread, crowded])
          for (const positiveOnly of [false, true])
            for (const scratch of [false, true]) {
              const params = { detection: 0.85, outliers: 20, outlierDensity: 1e-5, inflation };
              const g = pairGains(model, grid, mapped, 1.1, params, positiveOnly, scratch);
              const want = reference(model, mapped, 1.1, params, positiveOnly);
              expect(g.rowStart.length).toBe(mapped.length + 1);
              want.forEach((row, i) => {
                const got = Array.from({ length: g.rowStart[i + 1] - g.rowStart[i] }, (_, j) => g.rowStart[i] + j)
                  .map((j) => ({ cell: g.cells[j], gain: g.gains[j], e2: g.distances[j] }))
                  .sort((a, b) => a.cell - b.cell);
                expect(got.map((p) => p.cell)).toEqual(row.map((p) => p.cell));
                got.forEach((p, j) => {
                  expect(p.gain).toBeCloseTo(row[j].gain, 9);
                  expect(p.e2).toBeCloseTo(row[j].e2, 9);
                });
              });
              if (mapped === crowded && !positiveOnly) expect(g.gains.length).toBeGreaterThan(64);
            }
      });
});

describe('sinkhorn (posterior marginals)', () => {
  it('gives the exact posterior W / (1 + W) for one point and one cell (hand derivation)', () => {
    // Two configurations: matched (weight W = e^g) or not (weight 1).
    const m = sinkhorn(pairTable([[Math.log(3)]]), 1, 1);
    expect(m.pair[0]).toBeCloseTo(0.75, 12);
    expect(m.outlier[0]).toBeCloseTo(0.25, 12);
  });

  it('gives the per-point mixture posterior when no cell is over-claimed', () => {
    const g = [[Math.log(2), Math.log(0.5), null]];
    const m = sinkhorn(pairTable(g), 1, 3);
    // W = (2, 0.5): P = W / (1 + 2.5).
    expect(m.pair[0]).toBeCloseTo(2 / 3.5, 12);
    expect(m.pair[1]).toBeCloseTo(0.5 / 3.5, 12);
    expect(m.outlier[0]).toBeCloseTo(1 / 3.5, 12);
  });

  it('shares one cell between two points that claim it equally (each at most 1/2)', () => {
    const m = sinkhorn(pairTable([[Math.log(1000)], [Math.log(1000)]]), 2, 1, 500, 1e-12);
    expect(m.pair[0]).toBeCloseTo(m.pair[1], 10);
    expect(m.pair[0] + m.pair[1]).toBeLessThanOrEqual(1 + 1e-9);
    expect(m.pair[0]).toBeGreaterThan(0.49);
  });

  it('keeps rows summing to one and columns to at most one (property, fixed seed)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.array(fc.option(fc.double({ min: -5, max: 8, noNaN: true }), { nil: null }), { minLength: 4, maxLength: 4 }), { minLength: 1, maxLength: 6 }),
        (rows) => {
          const t = pairTable(rows);
          const m = sinkhorn(t, rows.length, 4, 2000, 1e-12);
          const col = new Array(4).fill(0);
          for (let i = 0; i < rows.length; i++) {
            let s = m.outlier[i];
            for (let j = t.rowStart[i]; j < t.rowStart[i + 1]; j++) {
              s += m.pair[j];
              col[t.cells[j]] += m.pair[j];
            }
            expect(s).toBeCloseTo(1, 9);
          }
          for (const c of col) expect(c).toBeLessThanOrEqual(1 + 1e-6);
        },
      ),
      { seed: 42, numRuns: 60 },
    );
  });
});

describe('pointLikelihood (points under the one-to-one model, Sinkhorn column factors)', () => {
  const cold = (cells: number) => new Float64Array(cells).fill(1);

  it('is the mixture log-likelihood sum_i log(1 + sum_k W_ik) when no cell is over-claimed (hand computation)', () => {
    // Point 0 near cells 0 and 1 (gains 0.5, -1), point 1 near cell 2 (gain 2): no column sum exceeds 1.
    const g = pairTable([
      [0.5, -1, null],
      [null, null, 2],
    ]);
    const expected = Math.log(1 + Math.exp(0.5) + Math.exp(-1)) + Math.log(1 + Math.exp(2));
    const columns = cold(3);
    expect(pointLikelihood(g, 2, 3, columns, 20).value).toBeCloseTo(expected, 12);
    expect(Array.from(columns)).toEqual([1, 1, 1]);
  });

  it('gives two points that claim one cell 2 log 2 in all, whatever their gain (worked example)', () => {
    // W = [[w], [w]], w > 1: the fixed point is b = 1 / w, a_i = 1 / 2, so L = 2 log 2, while the
    // mixture without the one-cell limit would give 2 log(1 + w): piling points onto a cell earns nothing.
    for (const gain of [0.5, 3, 9]) {
      const w = Math.exp(gain);
      const columns = cold(1);
      const r = pointLikelihood(pairTable([[gain], [gain]]), 2, 1, columns, 200);
      expect(r.value).toBeCloseTo(2 * Math.log(2), 9);
      expect(columns[0]).toBeCloseTo(1 / w, 9);
    }
  });

  it('reaches the same value warm-started from converged factors in one iteration as cold in many', () => {
    const rng = (() => {
      let x = 12345;
      return () => ((x = (x * 1103515245 + 12345) % 2147483648) / 2147483648);
    })();
    const gains = Array.from({ length: 30 }, () => Array.from({ length: 20 }, () => (rng() < 0.3 ? 6 * rng() - 2 : null)));
    const g = pairTable(gains);
    const columns = cold(20);
    const many = pointLikelihood(g, 30, 20, columns, 500).value;
    expect(pointLikelihood(g, 30, 20, columns, 1).value).toBeCloseTo(many, 8);
    // Never above the mixture log-likelihood (b_k <= 1).
    const mixture = gains.reduce((s, row) => s + Math.log(1 + row.reduce<number>((t, v) => t + (v === null ? 0 : Math.exp(v)), 0)), 0);
    expect(many).toBeLessThanOrEqual(mixture + 1e-9);
  });

  it('agrees with sinkhorn: L = -sum_i log P(i is an outlier)', () => {
    const g = pairTable([
      [2, 1.5, null],
      [1.8, null, 0.2],
      [null, 3, 2.5],
      [2.2, 2.1, null],
    ]);
    const m = sinkhorn(g, 4, 3, 2000, 1e-14);
    const expected = -Array.from(m.outlier).reduce((s, a) => s + Math.log(a), 0);
    expect(pointLikelihood(g, 4, 3, cold(3), 2000).value).toBeCloseTo(expected, 8);
  });
});

describe('greedyMatching', () => {
  /** The textbook greedy: sort pairs by descending gain (stable), take a pair when both ends are free. */
  function sortedGreedy(rows: (number | null)[][], cells: number): number {
    const pairs: { i: number; k: number; g: number; j: number }[] = [];
    let j = 0;
    rows.forEach((row, i) =>
      row.forEach((g, k) => {
        if (g !== null) {
          if (g > 0) pairs.push({ i, k, g, j });
          j++;
        }
      }),
    );
    pairs.sort((a, b) => b.g - a.g || a.j - b.j);
    const usedI = new Set<number>(), usedK = new Set<number>();
    let total = 0;
    for (const p of pairs) {
      if (usedI.has(p.i) || usedK.has(p.k)) continue;
      usedI.add(p.i);
      usedK.add(p.k);
      total += p.g;
    }
    void cells;
    return total;
  }

  it('equals the sort-based greedy matching (property, fixed seed, distinct gains)', () => {
    fc.assert(
      fc.property(
        fc.array(fc.array(fc.option(fc.integer({ min: -50, max: 200 }), { nil: null }), { minLength: 5, maxLength: 5 }), { minLength: 1, maxLength: 7 }),
        (raw) => {
          // Make gains distinct so that both greedy orders are unambiguous.
          let c = 0;
          const rows = raw.map((r) => r.map((v) => (v === null ? null : v + (c++) * 1e-6)));
          const m = greedyMatching(pairTable(rows), rows.length, 5);
          expect(m.total).toBeCloseTo(sortedGreedy(rows, 5), 9);
          const used = new Set<number>();
          for (const k of m.cellOfPoint) if (k >= 0) {
            expect(used.has(k)).toBe(false);
            used.add(k);
          }
        },
      ),
      { seed: 7, numRuns: 100 },
    );
  });
  /** Reference greedy on a PairGains table: every pair with g > 0 sorted by a comparator (gain descending, pair index ascending). */
  function referenceGreedy(t: PairGains, points: number): { total: number; cellOfPoint: number[] } {
    const rowOf: number[] = [];
    for (let i = 0; i < points; i++) for (let j = t.rowStart[i]; j < t.rowStart[i + 1]; j++) rowOf[j] = i;
    const order = Array.from(t.gains.keys()).filter((j) => t.gains[j] > 0);
    order.sort((a, b) => (t.gains[a] > t.gains[b] ? -1 : t.gains[a] < t.gains[b] ? 1 : a - b));
    const cellOfPoint = new Array<number>(points).fill(-1);
    const usedCell = new Set<number>();
    let total = 0;
    for (const j of order) {
      const i = rowOf[j], k = t.cells[j];
      if (cellOfPoint[i] >= 0 || usedCell.has(k)) continue;
      cellOfPoint[i] = k;
      usedCell.add(k);
      total += t.gains[j];
    }
    return { total, cellOfPoint };
  }

  /** Sparse table: row i lists its distinct cells with their gains. */
  function sparseTable(rows: { cell: number; gain: number }[][]): PairGains {
    const rowStart = [0], cells: number[] = [], g: number[] = [];
    for (const row of rows) {
      for (const p of row) {
        cells.push(p.cell);
        g.push(p.gain);
      }
      rowStart.push(cells.length);
    }
    return { rowStart: Int32Array.from(rowStart), cells: Int32Array.from(cells), gains: Float64Array.from(g), distances: new Float64Array(g.length) };
  }

  it('gives the comparator-sorted greedy bit for bit: same cellOfPoint, same total (property, fixed seed, ties, equal and extreme gains)', () => {
    const gain = fc.oneof(
      fc.integer({ min: -2, max: 4 }), // many exact ties, zeros and negatives (never taken)
      fc.double({ min: 1e-3, max: 8, noNaN: true }),
      fc.constantFrom(1, 1 + 2 ** -52, 1 + 2 ** -51, 1e9, 5e-324, Infinity, Number.NaN), // near-equal, huge (one band for the rest), subnormal
    );
    fc.assert(
      fc.property(
        fc.integer({ min: 1, max: 40 }).chain((cells) =>
          fc.tuple(
            fc.constant(cells),
            fc.array(fc.uniqueArray(fc.record({ cell: fc.nat({ max: cells - 1 }), gain }), { selector: (p) => p.cell, maxLength: 25 }), {
              minLength: 1,
              maxLength: 40,
            }),
          ),
        ),
        ([cells, rows]) => {
          const t = sparseTable(rows);
          const m = greedyMatching(t, rows.length, cells);
          const r = referenceGreedy(t, rows.length);
          expect(Array.from(m.cellOfPoint)).toEqual(r.cellOfPoint);
          expect(Object.is(m.total, r.total)).toBe(true);
        },
      ),
      { seed: 20261202, numRuns: 300 },
    );
  });

  it('orders a band of hundreds of pairs exactly (one huge gain puts the other 1,199 pairs, with ties, in one band)', () => {
    // 60 points x 20 cells each, gains k/7 for k in 1..5 (exact ties) and one gain of 1e9.
    const rows = Array.from({ length: 60 }, (_, i) =>
      Array.from({ length: 20 }, (_, c) => ({ cell: (i * 7 + c * 3) % 60, gain: i === 17 && c === 4 ? 1e9 : (((i * 13 + c * 5) % 5) + 1) / 7 })),
    );
    const t = sparseTable(rows);
    const m = greedyMatching(t, 60, 60);
    const r = referenceGreedy(t, 60);
    expect(Array.from(m.cellOfPoint)).toEqual(r.cellOfPoint);
    expect(Object.is(m.total, r.total)).toBe(true);
    expect(m.cellOfPoint[17]).toBe((17 * 7 + 4 * 3) % 60);
  });
});
