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
 * Square matrices first get Jonker & Volgenant's initialisation (1987, Sec. 4):
 * column reduction, and, when every entry is finite, reduction transfer and two
 * rounds of augmenting row reduction. These leave duals with every reduced cost
 * >= 0, each assigned row on a column of least reduced cost, and usually few
 * free rows for the shortest-path phase; they change speed, not the optimum.
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
  // Orient so that nr <= nc (rows are the smaller side); validate while copying.
  const transpose = n > m;
  const nr = transpose ? m : n;
  const nc = transpose ? n : m;
  const c = new Float64Array(nr * nc);
  let allFinite = true;
  for (let i = 0; i < n; i++) {
    const row = cost[i];
    if (row.length !== m) throw new UsageError(`solveAssignment: row ${i} has ${row.length} entries, expected ${m}`);
    let k = transpose ? i : i * nc;
    const step = transpose ? nc : 1;
    for (let j = 0; j < m; j++, k += step) {
      const value = row[j];
      // Finite numbers pass the first test; everything else is checked here.
      if (typeof value !== 'number' || !(value - value === 0)) {
        if (value !== Infinity) {
          throw new UsageError(`solveAssignment: entry [${i}][${j}] is ${value}; costs must be finite or +Infinity (forbidden)`);
        }
        allFinite = false;
      }
      c[k] = value;
    }
  }
  const rowToColumn = new Array<number>(n).fill(-1);
  const columnToRow = new Array<number>(m).fill(-1);
  if (n === 0 || m === 0) return { rowToColumn, columnToRow, total: 0 };

  const col4row = lapRectangular(c, nr, nc, allFinite);
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
 * nr <= nc, after Jonker & Volgenant's (1987) initialisation when square.
 * Returns the column of each row, or null when infeasible.
 *
 * Invariant entering the shortest-path phase (what makes Crouse's dual update
 * valid): c[i][j] - u[i] - v[j] >= 0 for every pair and = 0 on every assigned
 * pair. Column reduction sets v[j] = min_i c[i][j] (u = 0 on its rows); the
 * reduction transfer and the augmenting row reductions only lower v on a
 * row's least-reduced-cost column, so each assigned row stays on a column of
 * least c[i][j] - v[j], and u[i] is then set to that least value.
 */
function lapRectangular(c: Float64Array, nr: number, nc: number, allFinite: boolean): Int32Array | null {
  const u = new Float64Array(nr);
  const v = new Float64Array(nc);
  const shortest = new Float64Array(nc);
  const path = new Int32Array(nc).fill(-1);
  const col4row = new Int32Array(nr).fill(-1);
  const row4col = new Int32Array(nc).fill(-1);
  const visitedRows = new Int32Array(nr);
  const visitedCols = new Int32Array(nc);
  const remaining = new Int32Array(nc);
  const free = new Int32Array(nr);
  let numFree = 0;

  if (nr === nc) {
    const n = nr;
    // Column reduction (Jonker & Volgenant 1987, Sec. 4.1): v[j] = min_i c[i][j];
    // a column's minimum row takes it when still free, or when the column it
    // holds has a larger minimum. In the rectangular case unassigned columns must
    // keep v[j] = 0, so all of the initialisation is for square matrices only.
    const matches = new Int32Array(n);
    for (let j = n - 1; j >= 0; j--) {
      let best = Infinity;
      let arg = -1;
      for (let r = 0, k = j; r < n; r++, k += n) {
        const value = c[k];
        if (value < best) {
          best = value;
          arg = r;
        }
      }
      if (arg < 0) return null; // a column with only forbidden entries: no complete matching
      v[j] = best;
      if (++matches[arg] === 1) {
        col4row[arg] = j;
        row4col[j] = arg;
      } else if (best < v[col4row[arg]]) {
        const j1 = col4row[arg];
        row4col[j1] = -1;
        col4row[arg] = j;
        row4col[j] = arg;
      }
    }
    if (allFinite) {
      // Reduction transfer (Sec. 4.1): a row holding exactly one column passes
      // its slack to it: v[j1] -= min_{j != j1} (c[i][j] - v[j]) (>= 0).
      for (let i = 0; i < n; i++) {
        if (matches[i] === 0) free[numFree++] = i;
        else if (matches[i] === 1) {
          const j1 = col4row[i];
          const base = i * n;
          let least = Infinity;
          for (let j = 0; j < n; j++) {
            if (j === j1) continue;
            const h = c[base + j] - v[j];
            if (h < least) least = h;
          }
          v[j1] -= least;
        }
      }
      // Augmenting row reduction (Sec. 4.2), two rounds: each free row takes
      // its column of least reduced cost, lowering that column's v to tie with
      // its second least, and the row it displaces becomes free in turn.
      // Work cap (this implementation's choice): 2n row scans. Unbounded rounds
      // converge like an auction with tiny bids; on 1000 x 1000 uniform costs they
      // took up to 80n scans and saved nothing over leaving the last free rows to
      // the shortest-path phase, whose total work was least near this cap.
      let budget = 2 * n;
      for (let round = 0; round < 2 && numFree > 0; round++) {
        let k = 0;
        const previousFree = numFree;
        numFree = 0;
        while (k < previousFree) {
          if (--budget < 0) {
            while (k < previousFree) free[numFree++] = free[k++];
            break;
          }
          const i = free[k++];
          const base = i * n;
          let uMin = c[base] - v[0];
          let j1 = 0;
          let j2 = -1;
          let uSubMin = Infinity;
          for (let j = 1; j < n; j++) {
            const h = c[base + j] - v[j];
            if (h < uSubMin) {
              if (h >= uMin) {
                uSubMin = h;
                j2 = j;
              } else {
                uSubMin = uMin;
                uMin = h;
                j2 = j1;
                j1 = j;
              }
            }
          }
          let i0 = row4col[j1];
          const strict = uMin < uSubMin;
          if (strict) v[j1] -= uSubMin - uMin;
          else if (i0 >= 0 && j2 >= 0) {
            // A tie: take the second column instead, so as not to displace a row for nothing.
            j1 = j2;
            i0 = row4col[j2];
          }
          if (i0 >= 0) col4row[i0] = -1;
          col4row[i] = j1;
          row4col[j1] = i;
          if (i0 >= 0) {
            if (strict) free[--k] = i0; // reassign the displaced row at once
            else free[numFree++] = i0;
          }
        }
      }
      // Row duals: each assigned row's reduced cost is least on its column.
      for (let i = 0; i < n; i++) {
        const j = col4row[i];
        if (j >= 0) u[i] = c[i * n + j] - v[j];
      }
    } else {
      for (let i = 0; i < n; i++) if (col4row[i] === -1) free[numFree++] = i;
    }
  } else {
    for (let i = 0; i < nr; i++) free[numFree++] = i;
  }

  for (let f = 0; f < numFree; f++) {
    const curRow = free[f];
    // Dijkstra from curRow over reduced costs until an unassigned column (the sink) is reached.
    let minVal = 0;
    let numRemaining = nc;
    for (let it = 0; it < nc; it++) remaining[it] = nc - it - 1;
    shortest.fill(Infinity);
    let nVisitedRows = 0;
    let nVisitedCols = 0;
    let sink = -1;
    let i = curRow;
    while (sink === -1) {
      let index = -1;
      let lowest = Infinity;
      visitedRows[nVisitedRows++] = i;
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
      visitedCols[nVisitedCols++] = j;
      remaining[index] = remaining[--numRemaining];
    }

    // Dual update (keeps reduced costs non-negative and tight along the matching).
    u[curRow] += minVal;
    for (let k = 1; k < nVisitedRows; k++) {
      const r = visitedRows[k];
      u[r] += minVal - shortest[col4row[r]];
    }
    for (let k = 0; k < nVisitedCols; k++) {
      const j = visitedCols[k];
      v[j] -= minVal - shortest[j];
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
