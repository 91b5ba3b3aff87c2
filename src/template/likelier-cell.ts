/**
 * The likelier cell for a flagged hand label: the cell k != label maximising the
 * Gaussian predictive log density log N(y; m_k, (1 + 1/n_k) Sigma_k), reported
 * when it beats the labelled cell's own predictive density.
 */
import { logDeterminant, mahalanobisSquared, precisionMatrix } from '../geometry/index.js';
import type { TemplateCell } from '../types.js';
import { predictiveCovariance } from './cell-statistics.js';

type LikelierCell = { likelierLabel: string | null; likelierDistance: number | null };

/** The likelier cell for a point y labelled `label` (distance under its predictive covariance), or nulls when the label's own cell is the likeliest. */
export function likelierCell(y: readonly number[], label: string, cells: readonly TemplateCell[]): LikelierCell {
  return likelierCellFinder(cells)(y, label);
}

/**
 * likelierCell for many points against the same cells: each cell's predictive
 * covariance, its log determinant and its inverse are computed once (on first
 * use) and reused, so a point's densities are the numbers gaussianLogDensity
 * gives, -0.5 (d log 2 pi + log det Sigma + (y - m)^T Sigma^-1 (y - m)), in the
 * same order. Throws FitError (from cholesky) when a predictive covariance is not
 * positive definite.
 */
export function likelierCellFinder(cells: readonly TemplateCell[]): (y: readonly number[], label: string) => LikelierCell {
  const logDet: (number | undefined)[] = new Array(cells.length);
  const precision: (number[][] | undefined)[] = new Array(cells.length);
  const prepare = (k: number): void => {
    if (precision[k] !== undefined) return;
    const cov = predictiveCovariance(cells[k]);
    logDet[k] = logDeterminant(cov);
    precision[k] = precisionMatrix(cov);
  };
  const logDensity = (y: readonly number[], k: number): number => {
    prepare(k);
    return -0.5 * (y.length * Math.log(2 * Math.PI) + (logDet[k] as number) + mahalanobisSquared(y, cells[k].mean, precision[k] as number[][]));
  };
  return (y, label) => {
    const own = cells.findIndex((c) => c.label === label);
    let best = -1, bestLog = -Infinity;
    for (let k = 0; k < cells.length; k++) {
      if (cells[k].label === label) continue;
      const lp = logDensity(y, k);
      if (lp > bestLog) {
        bestLog = lp;
        best = k;
      }
    }
    const ownLog = own >= 0 ? logDensity(y, own) : -Infinity;
    if (best < 0 || !(bestLog > ownLog)) return { likelierLabel: null, likelierDistance: null };
    const d2 = mahalanobisSquared(y, cells[best].mean, precision[best] as number[][]);
    return { likelierLabel: cells[best].label, likelierDistance: Math.sqrt(d2) };
  };
}
