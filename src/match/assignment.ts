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
 *
 * Implementation notes (speed only; every comparison, order and tie rule is
 * unchanged, so the matching is the same): costs live in one row-major
 * Float64Array, written straight from the input (also for the abstention
 * matrix); a square matrix's column minima are found while it is copied, row
 * by row; a search whose first step already reaches a free column augments at
 * once, without setting up the list of unscanned columns; each phase is a
 * small function taking its typed arrays as arguments, which V8 optimises
 * within the first calls and keeps optimised (one large function was
 * re-optimised and deoptimised again and again while it warmed up).
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
  const c = costStorage(nr * nc);
  const v = new Float64Array(nc);
  const argMin = new Int32Array(nc);
  if (n === m) {
    // Starting values of the column minima found while copying (set here, outside the copy's hot function).
    v.fill(Infinity);
    argMin.fill(-1);
  }
  // A square matrix also gets its column minima (for the column reduction) while it is copied.
  const allFinite = transpose
    ? copyCosts(cost, n, m, 1, nc, c)
    : n === m
      ? copySquareCostsWithColumnMinima(cost, n, c, v, argMin)
      : copyCosts(cost, n, m, nc, 1, c);
  const rowToColumn = new Array<number>(n).fill(-1);
  const columnToRow = new Array<number>(m).fill(-1);
  if (n === 0 || m === 0) return { rowToColumn, columnToRow, total: 0 };

  const col4row = lapRectangular(c, nr, nc, allFinite, v, argMin, n === m);
  if (col4row === null) {
    throw new FitError(
      `solveAssignment: the ${n} x ${m} cost matrix is infeasible: no assignment of ${nr} pairs avoids the forbidden (Infinity) entries`,
    );
  }
  const total = collectMatching(cost, col4row, nr, transpose, rowToColumn, columnToRow);
  return { rowToColumn, columnToRow, total };
}

/**
 * Fills rowToColumn / columnToRow from the solver's column of each row (of the
 * oriented matrix) and returns the total cost, summed over the input's rows
 * in order.
 */
function collectMatching(
  cost: readonly (readonly number[])[],
  col4row: Int32Array,
  nr: number,
  transpose: boolean,
  rowToColumn: number[],
  columnToRow: number[],
): number {
  for (let r = 0; r < nr; r++) {
    const i = transpose ? col4row[r] : r;
    const j = transpose ? r : col4row[r];
    rowToColumn[i] = j;
    columnToRow[j] = i;
  }
  let total = 0;
  for (let i = 0; i < cost.length; i++) if (rowToColumn[i] >= 0) total += cost[i][rowToColumn[i]];
  return total;
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
  // The augmented matrix [C | D] is written straight into the solver's storage
  // (entries checked as solveAssignment checks them, with its messages).
  const width = m + n;
  const c = costStorage(n * width).fill(Infinity);
  let allFinite = copyCosts(cost, n, m, width, 1, c);
  for (let i = 0; i < n; i++) c[i * width + m + i] = abstainCost[i];
  if (n > 1 || (n === 1 && abstainCost[0] === Infinity)) allFinite = false;
  const rowToColumn = new Array<number>(n).fill(-1);
  const columnToRow = new Array<number>(m).fill(-1);
  if (n === 0) return { rowToColumn, columnToRow, total: 0, abstentions: 0 };
  const col4row = lapRectangular(c, n, width, allFinite, new Float64Array(width), new Int32Array(width), false);
  if (col4row === null) {
    throw new FitError(
      `assignWithAbstention: the ${n} x ${m} problem is infeasible: some rows can neither take a finite column nor abstain`,
    );
  }
  let total = 0;
  let abstentions = 0;
  for (let i = 0; i < n; i++) {
    const j = col4row[i];
    if (j < m) {
      rowToColumn[i] = j;
      columnToRow[j] = i;
      total += cost[i][j];
    } else {
      abstentions++;
      total += abstainCost[i];
    }
  }
  return { rowToColumn, columnToRow, total, abstentions };
}

/**
 * Row-major storage for `size` costs: a view of one buffer kept between calls
 * (this module is single-threaded per worker, and no call keeps the view),
 * so that repeated solves neither allocate nor zero a new matrix each time.
 * Buffers above COST_STORAGE_KEPT entries are not kept.
 */
function costStorage(size: number): Float64Array {
  if (size > COST_STORAGE_KEPT) return new Float64Array(size);
  if (costBuffer.length < size) costBuffer = new Float64Array(Math.max(size, Math.min(COST_STORAGE_KEPT, 2 * costBuffer.length)));
  return costBuffer.subarray(0, size);
}

/** Largest cost matrix whose storage is kept between calls (8 MB). */
const COST_STORAGE_KEPT = 1 << 20;
let costBuffer = new Float64Array(0);

/**
 * Copies the n x m matrix `cost` into `out` (entry [i][j] at i * rowStride +
 * j * columnStride), checking it as solveAssignment documents. Returns whether
 * every entry is finite.
 */
function copyCosts(
  cost: readonly (readonly number[])[],
  n: number,
  m: number,
  rowStride: number,
  columnStride: number,
  out: Float64Array,
): boolean {
  let allFinite = true;
  for (let i = 0; i < n; i++) {
    const row = cost[i];
    if (row.length !== m) throw new UsageError(`solveAssignment: row ${i} has ${row.length} entries, expected ${m}`);
    for (let j = 0, k = i * rowStride; j < m; j++, k += columnStride) {
      const value = row[j];
      // Finite numbers pass the first test; everything else is checked here.
      if (typeof value !== 'number' || !(value - value === 0)) {
        if (value !== Infinity) {
          throw new UsageError(`solveAssignment: entry [${i}][${j}] is ${value}; costs must be finite or +Infinity (forbidden)`);
        }
        allFinite = false;
      }
      out[k] = value;
    }
  }
  return allFinite;
}

/**
 * copyCosts for a square n x n matrix without transposition that also sets
 * v[j] = min_i cost[i][j] and argMin[j] = the lowest such row (-1 for a
 * column of +Infinity only), as columnMinima does, in the same sweep; v and
 * argMin must come filled with +Infinity and -1.
 */
function copySquareCostsWithColumnMinima(
  cost: readonly (readonly number[])[],
  n: number,
  out: Float64Array,
  v: Float64Array,
  argMin: Int32Array,
): boolean {
  let allFinite = true;
  for (let i = 0, k = 0; i < n; i++) {
    const row = cost[i];
    if (row.length !== n) throw new UsageError(`solveAssignment: row ${i} has ${row.length} entries, expected ${n}`);
    for (let j = 0; j < n; j++, k++) {
      const value = row[j];
      if (typeof value !== 'number' || !(value - value === 0)) {
        if (value !== Infinity) {
          throw new UsageError(`solveAssignment: entry [${i}][${j}] is ${value}; costs must be finite or +Infinity (forbidden)`);
        }
        allFinite = false;
      }
      out[k] = value;
      if (value < v[j]) {
        v[j] = value;
        argMin[j] = i;
      }
    }
  }
  return allFinite;
}

/**
 * Core of Crouse (2016) Algorithm 1 on a row-major nr x nc Float64Array with
 * nr <= nc, after Jonker & Volgenant's (1987) initialisation when square.
 * `v` (length nc) becomes the column duals; `argMin` (length nc) is scratch,
 * holding on entry the column minima and their rows when `columnMinimaKnown`
 * (square matrices only; see columnMinima). Returns the column of each row,
 * or null when infeasible.
 *
 * Invariant entering the shortest-path phase (what makes Crouse's dual update
 * valid): c[i][j] - u[i] - v[j] >= 0 for every pair and = 0 on every assigned
 * pair. Column reduction sets v[j] = min_i c[i][j] (u = 0 on its rows); the
 * reduction transfer and the augmenting row reductions only lower v on a
 * row's least-reduced-cost column, so each assigned row stays on a column of
 * least c[i][j] - v[j], and u[i] is then set to that least value.
 *
 * The phases are separate functions taking their arrays as arguments (no
 * state object), each holding its own hot loop: V8 then optimises each
 * within the first calls and keeps it optimised.
 */
function lapRectangular(
  c: Float64Array,
  nr: number,
  nc: number,
  allFinite: boolean,
  v: Float64Array,
  argMin: Int32Array,
  columnMinimaKnown: boolean,
): Int32Array | null {
  const u = new Float64Array(nr);
  const col4row = new Int32Array(nr).fill(-1);
  const row4col = new Int32Array(nc).fill(-1);
  const free = new Int32Array(nr);
  let numFree = 0;
  if (nr === nc) {
    if (!columnMinimaKnown) columnMinima(c, nc, v, argMin);
    const matches = new Int32Array(nr);
    if (!takeColumnMinima(nc, v, argMin, col4row, row4col, matches)) return null; // a column with only forbidden entries
    if (allFinite) {
      numFree = reductionTransfer(c, nc, v, col4row, matches, free);
      numFree = augmentingRowReduction(c, nc, v, col4row, row4col, free, numFree, 2 * nc);
      rowDuals(c, nc, u, v, col4row);
    } else {
      for (let i = 0; i < nr; i++) if (col4row[i] === -1) free[numFree++] = i;
    }
  } else {
    for (let i = 0; i < nr; i++) free[numFree++] = i;
  }
  if (numFree === 0) return col4row;
  const shortest = new Float64Array(nc);
  const path = argMin; // every search sets path[j] for all columns in its first step
  const remaining = new Int32Array(nc);
  const visitedRows = new Int32Array(nr);
  const visitedCols = new Int32Array(nc);
  for (let f = 0; f < numFree; f++) {
    const curRow = free[f];
    const first = firstStep(c, nc, u, v, shortest, path, row4col, curRow);
    if (first < 0) return null;
    if (row4col[first] === -1) {
      // The search ends at once: u[curRow] += shortest[first]; the column's v
      // changes by minVal - shortest[first] = 0; the path is the single pair.
      u[curRow] += shortest[first];
      row4col[first] = curRow;
      col4row[curRow] = first;
    } else if (!continueSearch(c, nc, u, v, shortest, path, col4row, row4col, remaining, visitedRows, visitedCols, curRow, first)) {
      return null;
    }
  }
  return col4row;
}

/**
 * v[j] = min_i c[i][j] and argMin[j] = the lowest such row (-1 when the
 * column is all +Infinity), row by row for sequential memory access (strict <
 * keeps the lowest row on ties).
 */
function columnMinima(c: Float64Array, n: number, v: Float64Array, argMin: Int32Array): void {
  v.fill(Infinity);
  argMin.fill(-1);
  for (let r = 0, k = 0; r < n; r++) {
    for (let j = 0; j < n; j++, k++) {
      const value = c[k];
      if (value < v[j]) {
        v[j] = value;
        argMin[j] = r;
      }
    }
  }
}

/**
 * Column reduction (Jonker & Volgenant 1987, Sec. 4.1), given the column
 * minima v[j] = min_i c[i][j] and their lowest rows argMin[j]: going through
 * the columns from the last to the first, a column's minimum row takes it
 * when still free, or when the column it holds has a larger minimum. In the
 * rectangular case unassigned columns must keep v[j] = 0, so all of the
 * initialisation is for square matrices only. Counts in `matches` the columns
 * of which each row is the minimum. Returns false when some column has only
 * forbidden entries.
 */
function takeColumnMinima(
  n: number,
  v: Float64Array,
  argMin: Int32Array,
  col4row: Int32Array,
  row4col: Int32Array,
  matches: Int32Array,
): boolean {
  for (let j = n - 1; j >= 0; j--) {
    const arg = argMin[j];
    if (arg < 0) return false;
    if (++matches[arg] === 1) {
      col4row[arg] = j;
      row4col[j] = arg;
    } else if (v[j] < v[col4row[arg]]) {
      const j1 = col4row[arg];
      row4col[j1] = -1;
      col4row[arg] = j;
      row4col[j] = arg;
    }
  }
  return true;
}

/**
 * Reduction transfer (Jonker & Volgenant 1987, Sec. 4.1): a row holding
 * exactly one column passes its slack to it,
 * v[j1] -= min_{j != j1} (c[i][j] - v[j]) (>= 0). Rows holding no column are
 * listed in `free`; returns their number.
 */
function reductionTransfer(
  c: Float64Array,
  n: number,
  v: Float64Array,
  col4row: Int32Array,
  matches: Int32Array,
  free: Int32Array,
): number {
  let numFree = 0;
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
  return numFree;
}

/**
 * Augmenting row reduction (Jonker & Volgenant 1987, Sec. 4.2), two rounds:
 * each free row takes its column of least reduced cost, lowering that
 * column's v to tie with its second least, and the row it displaces becomes
 * free in turn (at once when the least was strictly least; listed for the
 * next round on a tie, when the row takes its second column instead if that
 * displaces no row for nothing). Work cap (this implementation's choice):
 * `budget` = 2n row scans (passed in). Unbounded rounds converge like an
 * auction with tiny bids; on 1000 x 1000 uniform costs they took up to 80n
 * scans and saved nothing over leaving the last free rows to the
 * shortest-path phase, whose total work was least near this cap (re-checked
 * on 300 x 300 and 1000 x 1000 uniform costs: a cap of n gave about as many
 * element visits in all, more of them in the costlier search steps; 3n gave
 * more).
 * Returns the number of rows left in `free`.
 */
function augmentingRowReduction(
  c: Float64Array,
  n: number,
  v: Float64Array,
  col4row: Int32Array,
  row4col: Int32Array,
  free: Int32Array,
  numFree: number,
  budget: number,
): number {
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
      // Least and second least reduced cost of row i (u[i] = 0 here).
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
  return numFree;
}

/** Row duals after the initialisation: each assigned row's reduced cost is least on its column. */
function rowDuals(c: Float64Array, n: number, u: Float64Array, v: Float64Array, col4row: Int32Array): void {
  for (let i = 0; i < n; i++) {
    const j = col4row[i];
    if (j >= 0) u[i] = c[i * n + j] - v[j];
  }
}

/**
 * First step of the Dijkstra search from free row curRow (Crouse 2016,
 * Algorithm 1, at minVal = 0): every column's distance is its reduced cost,
 * shortest[j] = c[curRow][j] - u[curRow] - v[j], reached from curRow. Columns
 * are taken in the order nc - 1, ..., 0 (the initial order of the list of
 * unscanned columns); among equal minima an unassigned column is preferred (it
 * ends the search, Crouse 2016, Sec. IV). Returns the closest column, or -1
 * when every column is at +Infinity (infeasible).
 */
function firstStep(
  c: Float64Array,
  nc: number,
  u: Float64Array,
  v: Float64Array,
  shortest: Float64Array,
  path: Int32Array,
  row4col: Int32Array,
  curRow: number,
): number {
  const base = curRow * nc;
  const offset = 0 - u[curRow];
  let lowest = Infinity;
  let first = -1;
  for (let j = nc - 1; j >= 0; j--) {
    const r = offset + c[base + j] - v[j];
    shortest[j] = r;
    path[j] = curRow;
    if (r < lowest || (r === lowest && row4col[j] === -1)) {
      lowest = r;
      first = j;
    }
  }
  return lowest === Infinity ? -1 : first;
}

/**
 * The rest of the search from curRow (Crouse 2016, Algorithm 1) after a
 * first step that reached the assigned column `first`: Dijkstra steps until
 * an unassigned column (the sink) is reached, the dual update of Sec. IV and
 * the augmentation along the path. Returns false when every remaining column
 * is at distance +Infinity (infeasible).
 */
function continueSearch(
  c: Float64Array,
  nc: number,
  u: Float64Array,
  v: Float64Array,
  shortest: Float64Array,
  path: Int32Array,
  col4row: Int32Array,
  row4col: Int32Array,
  remaining: Int32Array,
  visitedRows: Int32Array,
  visitedCols: Int32Array,
  curRow: number,
  first: number,
): boolean {
  // Unscanned columns in the order the first step left them: nc - 1, ..., 0
  // with the column taken replaced by the last one.
  for (let it = 0; it < nc; it++) remaining[it] = nc - it - 1;
  remaining[nc - 1 - first] = remaining[nc - 1];
  let numRemaining = nc - 1;
  visitedRows[0] = curRow;
  visitedCols[0] = first;
  let nVisitedRows = 1;
  let nVisitedCols = 1;
  let minVal = shortest[first];
  let i = row4col[first];
  let sink = -1;
  while (sink === -1) {
    visitedRows[nVisitedRows++] = i;
    // Dijkstra step from row i at distance minVal: relax every unscanned column,
    // shortest[j] = min(shortest[j], minVal + c[i][j] - u[i] - v[j]), and take the
    // closest (an unassigned one on ties: it ends the search, Crouse 2016, Sec. IV).
    const base = i * nc;
    const offset = minVal - u[i];
    let lowest = Infinity;
    let index = -1;
    for (let it = 0; it < numRemaining; it++) {
      const jr = remaining[it];
      const r = offset + c[base + jr] - v[jr];
      let sj = shortest[jr];
      if (r < sj) {
        path[jr] = i;
        shortest[jr] = r;
        sj = r;
      }
      if (sj < lowest || (sj === lowest && row4col[jr] === -1)) {
        lowest = sj;
        index = it;
      }
    }
    minVal = lowest;
    if (minVal === Infinity) return false;
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
  return true;
}
