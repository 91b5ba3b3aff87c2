/**
 * Per-cell summary of a template: how variable each cell is and how well it
 * is separated from its neighbours. Pure computation on a Template; the CLI
 * and the HTML report render the result.
 */
import { FitError, UsageError } from '../errors.js';
import { logDeterminant, mahalanobisSquared, precisionMatrix } from '../geometry/covariance.js';
import { squaredDistance, symmetricEigen } from '../geometry/linear-algebra.js';
import type { Template } from '../types.js';

/** The other cell nearest to a cell, by Euclidean distance between means. */
export interface NearestCell {
  readonly label: string;
  /** Euclidean distance between the two means, um. */
  readonly distance: number;
  /** Mahalanobis distance (not squared) of the other mean under THIS cell's covariance. */
  readonly mahalanobisUnderThis: number;
  /** Mahalanobis distance (not squared) of this mean under the OTHER cell's covariance. */
  readonly mahalanobisUnderOther: number;
}

/** The other cell that is hardest to tell apart from this one, in Mahalanobis units. */
export interface LeastSeparatedCell {
  readonly label: string;
  /** min(D_this(other mean), D_other(this mean)), Mahalanobis distance, not squared. */
  readonly separation: number;
}

export interface CellSummary {
  readonly label: string;
  readonly count: number;
  readonly sparse: boolean;
  /** Mean position, um, template frame. */
  readonly mean: readonly number[];
  /** Standard deviations along the principal axes of the covariance, sqrt(eigenvalues), descending, um. */
  readonly principalSds: readonly number[];
  /** Generalised standard deviation det(Sigma)^(1/(2d)), um: the geometric mean of the principal sds. */
  readonly generalisedSd: number;
  /** Nearest other cell by Euclidean distance; null when the template has one cell. */
  readonly nearest: NearestCell | null;
  /** Smallest Mahalanobis separation to any other cell; null when the template has one cell. */
  readonly leastSeparated: LeastSeparatedCell | null;
  /** Hand labels of this cell flagged as improbable when the template was built. */
  readonly flagged: number;
}

export type CellSortKey = 'label' | 'variability' | 'separability';

/**
 * Summarise every cell of a template, in the template's cell order.
 *
 * For cell i with mean mu_i and covariance Sigma_i (d x d, um^2, the template's
 * stored, shrunk covariance):
 * - principal sds: sqrt(lambda_k) for the eigenvalues lambda_1 >= ... >= lambda_d
 *   of Sigma_i (the spread along the principal axes; Jolliffe, Principal
 *   Component Analysis, 2nd ed., 2002, section 1.1);
 * - generalised sd: det(Sigma_i)^(1/(2d)), the d-th root of the square root of
 *   Wilks' (1932) generalised variance;
 * - nearest cell: the j != i minimising ||mu_j - mu_i||, with the Mahalanobis
 *   distances D_i(mu_j) = sqrt((mu_j - mu_i)^T Sigma_i^-1 (mu_j - mu_i)) and
 *   D_j(mu_i) (Mahalanobis 1936);
 * - least separated: the j minimising min(D_i(mu_j), D_j(mu_i)) over all j != i.
 *   A separation below about 2 means the other cell's mean lies within two of
 *   this cell's standard deviations (common practice reading, not a test).
 * - flagged: the number of entries of template.flagged with this label.
 *
 * Cost O(n^2 d^2) for n cells. Ties are broken by template order.
 * Throws FitError naming the cell when a covariance is not positive definite,
 * and UsageError when a mean or covariance does not match the template's dim.
 */
export function describeCells(template: Template): CellSummary[] {
  const d = template.dim;
  const cells = template.cells;
  const precisions = cells.map((cell) => {
    if (cell.mean.length !== d || cell.covariance.length !== d || cell.covariance.some((row) => row.length !== d)) {
      throw new UsageError(`describeCells: cell "${cell.label}" does not have a ${d}-vector mean and ${d}x${d} covariance`);
    }
    try {
      return precisionMatrix(cell.covariance);
    } catch (e) {
      if (e instanceof FitError) {
        throw new FitError(`describeCells: covariance of cell "${cell.label}" is not positive definite (${e.message})`);
      }
      throw e;
    }
  });
  const flaggedCounts = new Map<string, number>();
  for (const f of template.flagged) flaggedCounts.set(f.label, (flaggedCounts.get(f.label) ?? 0) + 1);

  return cells.map((cell, i) => {
    const eigen = symmetricEigen(cell.covariance);
    const principalSds = eigen.values.map((v) => Math.sqrt(Math.max(0, v)));
    const generalisedSd = Math.exp(logDeterminant(cell.covariance) / (2 * d));
    let nearestIndex = -1;
    let nearestSq = Infinity;
    let leastIndex = -1;
    let leastSeparation = Infinity;
    for (let j = 0; j < cells.length; j++) {
      if (j === i) continue;
      const sq = squaredDistance(cell.mean, cells[j].mean);
      if (sq < nearestSq) {
        nearestSq = sq;
        nearestIndex = j;
      }
      const sep = Math.sqrt(
        Math.min(
          mahalanobisSquared(cells[j].mean, cell.mean, precisions[i]),
          mahalanobisSquared(cell.mean, cells[j].mean, precisions[j]),
        ),
      );
      if (sep < leastSeparation) {
        leastSeparation = sep;
        leastIndex = j;
      }
    }
    const nearest: NearestCell | null =
      nearestIndex < 0
        ? null
        : {
            label: cells[nearestIndex].label,
            distance: Math.sqrt(nearestSq),
            mahalanobisUnderThis: Math.sqrt(mahalanobisSquared(cells[nearestIndex].mean, cell.mean, precisions[i])),
            mahalanobisUnderOther: Math.sqrt(
              mahalanobisSquared(cell.mean, cells[nearestIndex].mean, precisions[nearestIndex]),
            ),
          };
    return {
      label: cell.label,
      count: cell.count,
      sparse: cell.sparse,
      mean: cell.mean.slice(),
      principalSds,
      generalisedSd,
      nearest,
      leastSeparated: leastIndex < 0 ? null : { label: cells[leastIndex].label, separation: leastSeparation },
      flagged: flaggedCounts.get(cell.label) ?? 0,
    };
  });
}

function compareLabels(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/**
 * A sorted copy of the summaries (the input is not changed):
 * - 'label': by label, code-point order;
 * - 'variability': most variable first, by the largest principal sd, then the
 *   generalised sd, both descending;
 * - 'separability': least separable first, by the smallest Mahalanobis
 *   separation ascending (cells with no neighbour last).
 * Remaining ties are broken by label.
 */
export function sortCellSummaries(summaries: readonly CellSummary[], key: CellSortKey): CellSummary[] {
  const out = summaries.slice();
  if (key === 'label') out.sort((a, b) => compareLabels(a.label, b.label));
  else if (key === 'variability') {
    out.sort(
      (a, b) =>
        (b.principalSds[0] ?? 0) - (a.principalSds[0] ?? 0) ||
        b.generalisedSd - a.generalisedSd ||
        compareLabels(a.label, b.label),
    );
  } else if (key === 'separability') {
    out.sort(
      (a, b) =>
        (a.leastSeparated?.separation ?? Infinity) - (b.leastSeparated?.separation ?? Infinity) ||
        compareLabels(a.label, b.label),
    );
  } else {
    throw new UsageError(`sortCellSummaries: unknown sort key "${String(key)}" (use label, variability or separability)`);
  }
  return out;
}

/** The k most variable cells (see sortCellSummaries 'variability'). */
export function mostVariableCells(summaries: readonly CellSummary[], k: number): CellSummary[] {
  return sortCellSummaries(summaries, 'variability').slice(0, Math.max(0, k));
}

/** The k least separable cells (see sortCellSummaries 'separability'). */
export function leastSeparableCells(summaries: readonly CellSummary[], k: number): CellSummary[] {
  return sortCellSummaries(summaries, 'separability').slice(0, Math.max(0, k));
}

/** One column of a rendered cell table. */
export interface CellTableColumn {
  /** Machine name, used as the CSV header and JSON key. */
  readonly key: string;
  /** Short human heading. */
  readonly heading: string;
  /** What the column means, with units. */
  readonly description: string;
  readonly numeric: boolean;
  /** Decimal places for text and HTML display (CSV and JSON keep full precision). */
  readonly digits?: number;
}

export type CellTableValue = string | number | null;

const AXES = ['x', 'y', 'z'];

/**
 * The summaries as a flat table (columns + one row per summary, in the given
 * order), shared by the text, CSV and HTML renderings so that they agree.
 * Missing values (no neighbour) are null.
 */
export function cellTable(
  summaries: readonly CellSummary[],
  dim: number,
): { columns: CellTableColumn[]; rows: CellTableValue[][] } {
  const columns: CellTableColumn[] = [
    { key: 'label', heading: 'cell', description: 'cell label', numeric: false },
    { key: 'count', heading: 'n', description: 'member observations in the statistics', numeric: true, digits: 0 },
    { key: 'sparse', heading: 'sparse', description: 'yes when n is below the template minimum count', numeric: false },
  ];
  for (let k = 0; k < dim; k++) {
    columns.push({ key: `mean_${AXES[k]}`, heading: `mean ${AXES[k]}`, description: `mean ${AXES[k]}, µm`, numeric: true, digits: 1 });
  }
  for (let k = 0; k < dim; k++) {
    columns.push({ key: `sd_${k + 1}`, heading: `sd ${k + 1}`, description: `standard deviation along principal axis ${k + 1} (descending), µm`, numeric: true, digits: 2 });
  }
  columns.push(
    { key: 'sd_generalised', heading: 'gen. sd', description: 'generalised sd det(Σ)^(1/2d), µm', numeric: true, digits: 2 },
    { key: 'nearest', heading: 'nearest', description: 'nearest other cell (Euclidean, between means)', numeric: false },
    { key: 'nearest_distance_um', heading: 'dist µm', description: 'distance to the nearest cell, µm', numeric: true, digits: 1 },
    { key: 'nearest_mahalanobis_this', heading: 'D this', description: "Mahalanobis distance of the nearest cell's mean under this cell's covariance", numeric: true, digits: 2 },
    { key: 'nearest_mahalanobis_other', heading: 'D other', description: "Mahalanobis distance of this cell's mean under the nearest cell's covariance", numeric: true, digits: 2 },
    { key: 'least_separable', heading: 'least sep.', description: 'other cell with the smallest Mahalanobis separation', numeric: false },
    { key: 'separation_mahalanobis', heading: 'sep. D', description: 'smallest Mahalanobis separation min(D this, D other) over all other cells', numeric: true, digits: 2 },
    { key: 'flagged', heading: 'flagged', description: 'hand labels of this cell flagged as improbable', numeric: true, digits: 0 },
  );
  const rows = summaries.map((s) => {
    const row: CellTableValue[] = [s.label, s.count, s.sparse ? 'yes' : 'no'];
    for (let k = 0; k < dim; k++) row.push(s.mean[k]);
    for (let k = 0; k < dim; k++) row.push(s.principalSds[k]);
    row.push(
      s.generalisedSd,
      s.nearest?.label ?? null,
      s.nearest?.distance ?? null,
      s.nearest?.mahalanobisUnderThis ?? null,
      s.nearest?.mahalanobisUnderOther ?? null,
      s.leastSeparated?.label ?? null,
      s.leastSeparated?.separation ?? null,
      s.flagged,
    );
    return row;
  });
  return { columns, rows };
}
