/**
 * Rectangular linear assignment (minimum-cost bipartite matching).
 *
 * Problem: given an n x m cost matrix C, choose k = min(n, m) pairs (i, j),
 * each row and each column used at most once, minimising sum C[i][j].
 * Forbidden pairs are given as +Infinity.
 *
 * Method: the shortest augmenting path algorithm of Jonker & Volgenant (1987,
 * "A shortest augmenting path algorithm for dense and sparse linear assignment
 * problems", Computing 38:325-340), in the rectangular form of Crouse (2016,
 * "On implementing 2D rectangular assignment algorithms", IEEE Trans. Aerospace
 * and Electronic Systems 52(4):1679-1696, Algorithm 1 with the dual updates of
 * its Section IV), the form scipy.optimize.linear_sum_assignment uses. With
 * the matrix oriented so that n <= m, each row in turn is joined to the
 * matching by a Dijkstra search on reduced costs C[i][j] - u[i] - v[j] >= 0;
 * the duals (u, v) are then updated so reduced costs stay non-negative and
 * the path is augmented. O(n^2 m) time, O(n m) memory (one Float64Array copy).
 * JV's initialisation heuristics (column reduction, reduction transfer,
 * augmenting row reduction) are not used; they change speed, not the answer.
 */

import { FitError, UsageError } from '../errors.js';

/** A matching between the rows and columns of a cost matrix. */
export interface Assignment {
  /** Column assigned to each row, -1 = unassigned. Length n. */
  readonly rowToColumn: number[];
  /** Row assigned to each column, -1 = unassigned. Length m. */
  readonly columnToRow: number[];
  /** Sum of the costs of the assigned pairs. */
  readonly total: number;
}

/** An assignment in which each row may instead take its own "no label" option. */
export interface AbstainingAssignment extends Assignment {
  /** Rows that took their abstention option (rowToColumn = -1 for them). */
  readonly abstentions: number;
}

/**
 * Minimum-cost rectangular assignment of min(n, m) pairs.
 *
 * Objective: min over injective matchings of sum_{(i,j)} C[i][j]; when n <= m
 * every row is assigned, when n > m every column is.
 *
 * Shapes: `cost` is n x m (rows of equal length). Entries must be finite
 * numbers or +Infinity (forbidden pair). The input is not modified.
 * Ties between equally cheap matchings are broken deterministically (the same
 * input always gives the same matching), but not necessarily as scipy breaks them.
 *
 * Example: [[4,1,3],[2,0,5],[3,2,2]] -> rowToColumn [1,0,2], total 5
 * (the scipy.optimize.linear_sum_assignment documentation example).
 *
 * @throws UsageError for ragged rows, NaN or -Infinity entries, or `maximize: true`.
 * @throws FitError when no matching of min(n, m) pairs avoids the forbidden entries.
 */
export function solveAssignment(cost: readonly (readonly number[])[], options: { maximize?: false } = {}): Assignment {
  if ((options as { maximize?: boolean }).maximize === true) {
    throw new UsageError('solveAssignment: maximize is not supported; negate the costs instead');
  }
  const n = cost.length;
  const m = n > 0 ? cost[0].length : 0;
  for (let i = 0; i < n; i++) {
    const row = cost[i];
    if (row.length !== m) throw new UsageError(`solveAssignment: row ${i} has ${row.length} entries, expected ${m}`);
    for (let j = 0; j < m; j++) {
      const c = row[j];
      if (Number.isNaN(c) || c === -Infinity || typeof c !== 'number') {
        throw new UsageError(`solveAssignment: entry [${i}][${j}] is ${c}; costs must be finite or +Infinity (forbidden)`);
      }
    }
  }
  const rowToColumn = new Array<number>(n).fill(-1);
  const columnToRow = new Array<number>(m).fill(-1);
  if (n === 0 || m === 0) return { rowToColumn, columnToRow, total: 0 };

  // Orient so that nr <= nc (rows are the smaller side).
  const transpose = n > m;
  const nr = transpose ? m : n;
  const nc = transpose ? n : m;
  const c = new Float64Array(nr * nc);
  if (transpose) {
    for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) c[j * nc + i] = cost[i][j];
  } else {
    for (let i = 0; i < n; i++) for (let j = 0; j < m; j++) c[i * nc + j] = cost[i][j];
  }

  const col4row = lapRectangular(c, nr, nc);
  if (col4row === null) {
    throw new FitError(
      `solveAssignment: the ${n} x ${m} cost matrix is infeasible: no assignment of ${nr} pairs avoids the forbidden (Infinity) entries`,
    );
  }
  let total = 0;
  for (let r = 0; r < nr; r++) {
    const i = transpose ? col4row[r] : r;
    const j = transpose ? r : col4row[r];
    rowToColumn[i] = j;
    columnToRow[j] = i;
  }
  for (let i = 0; i < n; i++) if (rowToColumn[i] >= 0) total += cost[i][rowToColumn[i]];
  return { rowToColumn, columnToRow, total };
}

/**
 * Assignment in which each row i may take a private "no label" option at
 * cost abstainCost[i] instead of a column.
 *
 * Formulation: solve the n x (m + n) matrix [C | D] with D[i][i] = abstainCost[i]
 * and D[i][k] = +Infinity for k != i (each row's dummy column is its own);
 * every row is then assigned, to a real column or to its dummy. Minimises
 * sum over assigned pairs of C[i][j] + sum over abstaining rows of abstainCost[i].
 * A row abstains whenever no column is worth more than its abstention, so with
 * negative log-likelihood costs abstainCost[i] acts as a per-row outlier cost.
 *
 * Shapes: cost n x m, abstainCost length n; entries finite or +Infinity.
 * Returns rowToColumn (length n, -1 = abstained), columnToRow (length m,
 * -1 = unused), total (including abstention costs) and the abstention count.
 *
 * @throws UsageError for mismatched lengths or NaN / -Infinity entries.
 * @throws FitError when some row has neither a finite column nor a finite
 *   abstention that can be used.
 */
export function assignWithAbstention(
  cost: readonly (readonly number[])[],
  abstainCost: readonly number[],
): AbstainingAssignment {
  const n = cost.length;
  if (abstainCost.length !== n) {
    throw new UsageError(`assignWithAbstention: ${abstainCost.length} abstention costs for ${n} rows`);
  }
  const m = n > 0 ? cost[0].length : 0;
  for (let i = 0; i < n; i++) {
    const a = abstainCost[i];
    if (Number.isNaN(a) || a === -Infinity || typeof a !== 'number') {
      throw new UsageError(`assignWithAbstention: abstention cost ${i} is ${a}; it must be finite or +Infinity`);
    }
    if (cost[i].length !== m) throw new UsageError(`assignWithAbstention: row ${i} has ${cost[i].length} entries, expected ${m}`);
  }
  const augmented: number[][] = [];
  for (let i = 0; i < n; i++) {
    const row = new Array<number>(m + n).fill(Infinity);
    for (let j = 0; j < m; j++) row[j] = cost[i][j];
    row[m + i] = abstainCost[i];
    augmented.push(row);
  }
  let solved: Assignment;
  try {
    solved = solveAssignment(augmented);
  } catch (e) {
    if (e instanceof FitError) {
      throw new FitError(
        `assignWithAbstention: the ${n} x ${m} problem is infeasible: some rows can neither take a finite column nor abstain`,
      );
    }
    throw e;
  }
  const rowToColumn = solved.rowToColumn.map((j) => (j >= m ? -1 : j));
  const columnToRow = solved.columnToRow.slice(0, m);
  const abstentions = rowToColumn.filter((j) => j < 0).length;
  return { rowToColumn, columnToRow, total: solved.total, abstentions };
}

/**
 * Core of Crouse (2016) Algorithm 1 on a row-major nr x nc Float64Array with
 * nr <= nc. Returns the column of each row, or null when infeasible.
 */
function lapRectangular(c: Float64Array, nr: number, nc: number): Int32Array | null {
  const u = new Float64Array(nr);
  const v = new Float64Array(nc);
  const shortest = new Float64Array(nc);
  const path = new Int32Array(nc).fill(-1);
  const col4row = new Int32Array(nr).fill(-1);
  const row4col = new Int32Array(nc).fill(-1);
  const visitedRow = new Uint8Array(nr);
  const visitedCol = new Uint8Array(nc);
  const remaining = new Int32Array(nc);

  if (nr === nc) {
    // Column reduction (Jonker & Volgenant 1987, Sec. 4.1), square case only:
    // v[j] = min_i c[i][j] keeps every reduced cost >= 0, and a column's minimum
    // row takes it when that row is still free (reduced cost 0 = tight).
    // In the rectangular case unassigned columns must keep v[j] = 0, so it is skipped.
    for (let j = nc - 1; j >= 0; j--) {
      let best = Infinity;
      let arg = -1;
      for (let r = 0; r < nr; r++) {
        const value = c[r * nc + j];
        if (value < best) {
          best = value;
          arg = r;
        }
      }
      if (arg < 0) return null; // a column with only forbidden entries: no complete matching
      v[j] = best;
      if (col4row[arg] === -1) {
        col4row[arg] = j;
        row4col[j] = arg;
      }
    }
  }

  for (let curRow = 0; curRow < nr; curRow++) {
    if (col4row[curRow] !== -1) continue; // already matched by the column reduction
    // Dijkstra from curRow over reduced costs until an unassigned column (the sink) is reached.
    let minVal = 0;
    let numRemaining = nc;
    for (let it = 0; it < nc; it++) remaining[it] = nc - it - 1;
    visitedRow.fill(0);
    visitedCol.fill(0);
    shortest.fill(Infinity);
    let sink = -1;
    let i = curRow;
    while (sink === -1) {
      let index = -1;
      let lowest = Infinity;
      visitedRow[i] = 1;
      const base = i * nc;
      const offset = minVal - u[i];
      for (let it = 0; it < numRemaining; it++) {
        const j = remaining[it];
        const r = offset + c[base + j] - v[j];
        let sj = shortest[j];
        if (r < sj) {
          path[j] = i;
          shortest[j] = r;
          sj = r;
        }
        // Among equal minima prefer an unassigned column: it ends the search (Crouse 2016, Sec. IV).
        if (sj < lowest || (sj === lowest && row4col[j] === -1)) {
          lowest = sj;
          index = it;
        }
      }
      minVal = lowest;
      if (minVal === Infinity) return null;
      const j = remaining[index];
      if (row4col[j] === -1) sink = j;
      else i = row4col[j];
      visitedCol[j] = 1;
      remaining[index] = remaining[--numRemaining];
    }

    // Dual update (keeps reduced costs non-negative and tight along the matching).
    u[curRow] += minVal;
    for (let r = 0; r < nr; r++) {
      if (visitedRow[r] && r !== curRow) u[r] += minVal - shortest[col4row[r]];
    }
    for (let j = 0; j < nc; j++) {
      if (visitedCol[j]) v[j] -= minVal - shortest[j];
    }

    // Augment along the path back to curRow.
    let j = sink;
    for (;;) {
      const r = path[j];
      row4col[j] = r;
      const previous = col4row[r];
      col4row[r] = j;
      j = previous;
      if (r === curRow) break;
    }
  }
  return col4row;
}
