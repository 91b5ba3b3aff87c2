import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { readFileSync } from 'node:fs';
import { assignWithAbstention, solveAssignment, type Assignment } from '../../src/match/assignment.js';
import { FitError, UsageError } from '../../src/errors.js';
import { createRng } from '../../src/random.js';

interface ScipyCase {
  name: string;
  shape: [number, number];
  cost: (number | null)[][];
  unique: boolean;
  feasible: boolean;
  rows?: number[];
  columns?: number[];
  total?: number;
  base?: (number | null)[][];
  abstain?: number[];
}
interface ClueCase {
  name: string;
  feasible: boolean;
  rows?: number[];
  columns?: number[];
  total?: number;
}

const fixture = (name: string): unknown =>
  JSON.parse(readFileSync(new URL(`../fixtures/reference/${name}`, import.meta.url), 'utf8'));
/** JSON null is a forbidden (+Infinity) entry. */
const decode = (m: (number | null)[][]): number[][] => m.map((row) => row.map((v) => (v === null ? Infinity : v)));

function expectValidMatching(cost: number[][], result: Assignment): void {
  const n = cost.length;
  const m = n > 0 ? cost[0].length : 0;
  expect(result.rowToColumn).toHaveLength(n);
  expect(result.columnToRow).toHaveLength(m);
  let pairs = 0;
  let total = 0;
  result.rowToColumn.forEach((j, i) => {
    if (j < 0) return;
    pairs++;
    expect(result.columnToRow[j]).toBe(i);
    expect(Number.isFinite(cost[i][j])).toBe(true);
    total += cost[i][j];
  });
  expect(result.columnToRow.filter((i) => i >= 0)).toHaveLength(pairs);
  expect(pairs).toBe(Math.min(n, m));
  expect(result.total).toBeCloseTo(total, 9);
}

/** Minimum total over all matchings of min(n, m) pairs, by enumeration; Infinity if none is feasible. */
function bruteForce(cost: number[][]): { total: number; optima: number } {
  const n = cost.length;
  const m = cost[0].length;
  const c = n <= m ? cost : cost[0].map((_, j) => cost.map((row) => row[j]));
  const rows = c.length;
  const cols = c[0].length;
  const used = new Array<boolean>(cols).fill(false);
  const totals: number[] = [];
  const walk = (i: number, sum: number): void => {
    if (i === rows) {
      totals.push(sum);
      return;
    }
    for (let j = 0; j < cols; j++) {
      if (used[j]) continue;
      used[j] = true;
      walk(i + 1, sum + c[i][j]);
      used[j] = false;
    }
  };
  walk(0, 0);
  const total = Math.min(...totals);
  return { total, optima: totals.filter((t) => Math.abs(t - total) <= 1e-9).length };
}

/** n x m matrices (1..6) of costs on a 1e-3 grid; `forbidden` puts some +Infinity entries in. */
const matrix = (forbidden: boolean) =>
  fc.tuple(fc.integer({ min: 1, max: 6 }), fc.integer({ min: 1, max: 6 })).chain(([n, m]) =>
    fc.array(
      fc.array(
        forbidden
          ? fc.oneof(
              { weight: 4, arbitrary: fc.integer({ min: -20_000, max: 20_000 }).map((v) => v / 1000) },
              { weight: 1, arbitrary: fc.constant(Infinity) },
            )
          : fc.integer({ min: -20_000, max: 20_000 }).map((v) => v / 1000),
        { minLength: m, maxLength: m },
      ),
      { minLength: n, maxLength: n },
    ),
  );

describe('solveAssignment', () => {
  it('solves the scipy documentation example [[4,1,3],[2,0,5],[3,2,2]] with total 5', () => {
    // scipy.optimize.linear_sum_assignment docstring (scipy 1.10): col_ind [1, 0, 2], total 5.
    const result = solveAssignment([
      [4, 1, 3],
      [2, 0, 5],
      [3, 2, 2],
    ]);
    expect(result.rowToColumn).toEqual([1, 0, 2]);
    expect(result.columnToRow).toEqual([1, 0, 2]);
    expect(result.total).toBe(5);
  });

  // scipy 1.10.1 (Debian python3-scipy 1.10.1-2, numpy 1.24.2) linear_sum_assignment,
  // fixture test/fixtures/reference/assignment-scipy.json from scripts/fixtures/assignment.py.
  const scipy = fixture('assignment-scipy.json') as { cases: ScipyCase[] };
  for (const c of scipy.cases) {
    if (c.name === 'abstention-20x15') continue; // checked through assignWithAbstention below
    it(`matches scipy.optimize.linear_sum_assignment on ${c.name} (${c.shape[0]}x${c.shape[1]})`, () => {
      const cost = decode(c.cost);
      if (!c.feasible) {
        expect(() => solveAssignment(cost)).toThrow(FitError);
        expect(() => solveAssignment(cost)).toThrow(/infeasible/);
        return;
      }
      const result = solveAssignment(cost);
      expectValidMatching(cost, result);
      expect(result.total).toBeCloseTo(c.total!, 9);
      if (c.unique) {
        // Continuous random costs: the optimum is unique, so the matching itself must agree.
        c.rows!.forEach((i, k) => expect(result.rowToColumn[i]).toBe(c.columns![k]));
      }
    });
  }

  // R 4.2.2 clue::solve_LSAP 0.3-64 (Debian r-cran-clue 0.3-64-1) on the same matrices, after the
  // transformation documented in scripts/fixtures/assignment.R (transpose to nrow <= ncol, shift to
  // non-negative, forbidden -> large finite); fixture test/fixtures/reference/assignment-clue.json.
  const clue = fixture('assignment-clue.json') as { cases: ClueCase[] };
  for (const r of clue.cases) {
    const c = scipy.cases.find((s) => s.name === r.name)!;
    it(`matches R clue::solve_LSAP on ${r.name}`, () => {
      const cost = decode(c.cost);
      if (!r.feasible) {
        expect(() => solveAssignment(cost)).toThrow(FitError);
        return;
      }
      const result = solveAssignment(cost);
      expect(result.total).toBeCloseTo(r.total!, 9); // clue fixture written with 15 significant digits
      if (c.unique) r.rows!.forEach((i, k) => expect(result.rowToColumn[i]).toBe(r.columns![k]));
    });
  }

  it('returns a valid matching of min(n, m) pairs whose total equals brute force (n, m <= 6, with forbidden entries)', () => {
    fc.assert(
      fc.property(matrix(true), (cost) => {
        const best = bruteForce(cost);
        if (best.total === Infinity) {
          expect(() => solveAssignment(cost)).toThrow(FitError);
          return;
        }
        const result = solveAssignment(cost);
        expectValidMatching(cost, result);
        expect(result.total).toBeCloseTo(best.total, 9);
      }),
      { seed: 4301, numRuns: 300 },
    );
  });

  it('finds the brute-force optimum on square all-finite matrices, the case that runs the full Jonker-Volgenant initialisation (many ties)', () => {
    // Small integer costs make equal reduced costs common, the tie branches of the
    // column reduction and the augmenting row reduction.
    const square = fc.integer({ min: 1, max: 7 }).chain((n) =>
      fc.array(fc.array(fc.integer({ min: 0, max: 4 }), { minLength: n, maxLength: n }), { minLength: n, maxLength: n }),
    );
    fc.assert(
      fc.property(square, (cost) => {
        const result = solveAssignment(cost);
        expectValidMatching(cost, result);
        expect(result.total).toBe(bruteForce(cost).total);
      }),
      { seed: 4305, numRuns: 400 },
    );
  });

  it('gives the same optimal total on a 120 x 120 uniform matrix whether or not the initialisation runs (one entry forbidden switches it off)', () => {
    const rng = createRng(4306);
    const cost = Array.from({ length: 120 }, () => Array.from({ length: 120 }, () => rng()));
    const withInit = solveAssignment(cost);
    // Forbidding a pair that no optimum uses leaves the optimum unchanged but skips
    // the reduction transfer and augmenting row reduction (they need finite costs).
    const j = (withInit.rowToColumn[0] + 1) % 120;
    const forbidden = cost.map((row, i) => (i === 0 ? row.map((v, k) => (k === j ? Infinity : v)) : row.slice()));
    const withoutInit = solveAssignment(forbidden);
    expectValidMatching(cost, withInit);
    expect(withInit.total).toBeCloseTo(withoutInit.total, 12);
  });

  it('keeps the same matching when a constant is added to a row that is always assigned (n <= m), or to a column (n >= m)', () => {
    fc.assert(
      fc.property(matrix(false), fc.nat(), fc.integer({ min: -50, max: 50 }), (cost, pick, shift) => {
        const n = cost.length;
        const m = cost[0].length;
        const before = solveAssignment(cost);
        const shifted =
          n <= m
            ? cost.map((row, i) => (i === pick % n ? row.map((v) => v + shift) : row.slice()))
            : cost.map((row) => row.map((v, j) => (j === pick % m ? v + shift : v)));
        const after = solveAssignment(shifted);
        expect(after.total).toBeCloseTo(before.total + shift, 9);
        if (bruteForce(cost).optima === 1) expect(after.rowToColumn).toEqual(before.rowToColumn);
      }),
      { seed: 4302, numRuns: 200 },
    );
  });

  it('is deterministic and agrees with its own transpose on a 120x90 random matrix', () => {
    const rng = createRng(11);
    const cost = Array.from({ length: 120 }, () => Array.from({ length: 90 }, () => rng()));
    const a = solveAssignment(cost);
    const b = solveAssignment(cost);
    const t = solveAssignment(cost[0].map((_, j) => cost.map((row) => row[j])));
    expectValidMatching(cost, a);
    expect(b).toEqual(a);
    expect(t.total).toBeCloseTo(a.total, 9);
    expect(t.rowToColumn).toEqual(a.columnToRow);
  });

  it('gives the same result whatever was solved before (storage kept between calls carries nothing over)', () => {
    const rng = createRng(29);
    const matrix = (n: number, m: number, forbidden: number): number[][] =>
      Array.from({ length: n }, () => Array.from({ length: m }, () => (rng() < forbidden ? Infinity : Math.floor(rng() * 20) / 4)));
    const problems = [matrix(40, 40, 0), matrix(12, 30, 0.3), matrix(30, 12, 0.3), matrix(25, 25, 0.2), matrix(3, 3, 0), matrix(40, 40, 0)];
    const abstain = problems.map((c) => c.map(() => 2 + rng()));
    const alone = problems.map((c, k) => [JSON.stringify(solveAssignment(c)), JSON.stringify(assignWithAbstention(c, abstain[k]))]);
    // Interleave: large, small, transposed, with abstention, in another order; each answer must be the one it gave alone.
    for (const k of [5, 4, 1, 3, 0, 2, 4, 5]) {
      expect(JSON.stringify(assignWithAbstention(problems[k], abstain[k]))).toBe(alone[k][1]);
      expect(JSON.stringify(solveAssignment(problems[k]))).toBe(alone[k][0]);
    }
  });

  it('returns empty matchings for empty matrices', () => {
    expect(solveAssignment([])).toEqual({ rowToColumn: [], columnToRow: [], total: 0 });
    expect(solveAssignment([[], []])).toEqual({ rowToColumn: [-1, -1], columnToRow: [], total: 0 });
  });

  it('does not modify its input (frozen arrays)', () => {
    const cost = Object.freeze([Object.freeze([1, 2]), Object.freeze([3, Infinity])]);
    expect(solveAssignment(cost).rowToColumn).toEqual([1, 0]);
  });

  it('rejects ragged rows, NaN, -Infinity and maximize: true with messages naming the entry', () => {
    expect(() => solveAssignment([[1, 2], [3]])).toThrow(new UsageError('solveAssignment: row 1 has 1 entries, expected 2'));
    expect(() => solveAssignment([[1, NaN]])).toThrow(
      new UsageError('solveAssignment: entry [0][1] is NaN; costs must be finite or +Infinity (forbidden)'),
    );
    expect(() => solveAssignment([[-Infinity]])).toThrow(UsageError);
    expect(() => solveAssignment([[1]], { maximize: true } as unknown as { maximize?: false })).toThrow(UsageError);
  });

  it('says the matrix is infeasible when forbidden entries leave no complete matching', () => {
    expect(() =>
      solveAssignment([
        [1, Infinity],
        [2, Infinity],
      ]),
    ).toThrow(
      new FitError(
        'solveAssignment: the 2 x 2 cost matrix is infeasible: no assignment of 2 pairs avoids the forbidden (Infinity) entries',
      ),
    );
  });
});

describe('assignWithAbstention', () => {
  it('matches scipy on the augmented matrix [C | diag(abstain)] (abstention-20x15)', () => {
    // scipy 1.10.1 linear_sum_assignment on the augmented matrix, fixture assignment-scipy.json.
    const c = (fixture('assignment-scipy.json') as { cases: ScipyCase[] }).cases.find((s) => s.name === 'abstention-20x15')!;
    const base = decode(c.base!);
    const result = assignWithAbstention(base, c.abstain!);
    expect(result.total).toBeCloseTo(c.total!, 9);
    const m = base[0].length;
    c.rows!.forEach((i, k) => {
      const j = c.columns![k];
      expect(result.rowToColumn[i]).toBe(j >= m ? -1 : j);
    });
    expect(result.abstentions).toBe(c.columns!.filter((j) => j >= m).length);
    expect(result.abstentions).toBeGreaterThan(0); // the case is built so that some rows abstain
  });

  it('lets a row abstain when every column costs more than its abstention (hand example)', () => {
    // Row 0 prefers column 0 (1 < 5); row 1's columns cost 9 and 8 > its abstention 3; row 2 takes column 1.
    const result = assignWithAbstention(
      [
        [1, 7],
        [9, 8],
        [6, 2],
      ],
      [5, 3, 4],
    );
    expect(result.rowToColumn).toEqual([0, -1, 1]);
    expect(result.columnToRow).toEqual([0, 2]);
    expect(result.total).toBe(1 + 3 + 2);
    expect(result.abstentions).toBe(1);
  });

  it('equals brute force over every choice of abstaining rows (n, m <= 5)', () => {
    fc.assert(
      fc.property(
        matrix(true).filter((c) => c.length <= 5 && c[0].length <= 5),
        fc.array(fc.integer({ min: 0, max: 20_000 }).map((v) => v / 1000), { minLength: 5, maxLength: 5 }),
        (cost, abstainAll) => {
          const n = cost.length;
          const abstain = abstainAll.slice(0, n);
          // Brute force: every row either takes an unused column or abstains.
          const m = cost[0].length;
          const used = new Array<boolean>(m).fill(false);
          let best = Infinity;
          const walk = (i: number, sum: number): void => {
            if (i === n) {
              best = Math.min(best, sum);
              return;
            }
            walk(i + 1, sum + abstain[i]);
            for (let j = 0; j < m; j++) {
              if (used[j] || cost[i][j] === Infinity) continue;
              used[j] = true;
              walk(i + 1, sum + cost[i][j]);
              used[j] = false;
            }
          };
          walk(0, 0);
          const result = assignWithAbstention(cost, abstain);
          expect(result.total).toBeCloseTo(best, 9);
          let total = 0;
          result.rowToColumn.forEach((j, i) => {
            total += j < 0 ? abstain[i] : cost[i][j];
            if (j >= 0) expect(result.columnToRow[j]).toBe(i);
          });
          expect(total).toBeCloseTo(result.total, 9);
        },
      ),
      { seed: 4303, numRuns: 200 },
    );
  });

  it('rejects a wrong number of abstention costs and reports infeasibility', () => {
    expect(() => assignWithAbstention([[1, 2]], [1, 2])).toThrow(
      new UsageError('assignWithAbstention: 2 abstention costs for 1 rows'),
    );
    expect(() => assignWithAbstention([[Infinity]], [Infinity])).toThrow(FitError);
  });
});
