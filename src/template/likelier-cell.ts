/**
 * The likelier cell for a flagged hand label: the cell k != label maximising the
 * Gaussian predictive log density log N(y; m_k, (1 + 1/n_k) Sigma_k), reported
 * when it beats the labelled cell's own predictive density.
 */
import { gaussianLogDensity, mahalanobisSquared, precisionMatrix } from '../geometry/index.js';
import type { TemplateCell } from '../types.js';
import { predictiveCovariance } from './cell-statistics.js';

/** The likelier cell for a point y labelled `label` (distance under its predictive covariance), or nulls when the label's own cell is the likeliest. */
export function likelierCell(
  y: readonly number[],
  label: string,
  cells: readonly TemplateCell[],
): { likelierLabel: string | null; likelierDistance: number | null } {
  const own = cells.find((c) => c.label === label);
  let bestLabel: string | null = null, bestLog = -Infinity, bestCov: number[][] | null = null, bestMean: readonly number[] = [];
  for (const c of cells) {
    if (c.label === label) continue;
    const cov = predictiveCovariance(c);
    const lp = gaussianLogDensity(y, c.mean, cov);
    if (lp > bestLog) {
      bestLog = lp;
      bestLabel = c.label;
      bestCov = cov;
      bestMean = c.mean;
    }
  }
  const ownLog = own ? gaussianLogDensity(y, own.mean, predictiveCovariance(own)) : -Infinity;
  if (bestLabel === null || bestCov === null || !(bestLog > ownLog)) return { likelierLabel: null, likelierDistance: null };
  const d2 = mahalanobisSquared(y, bestMean, precisionMatrix(bestCov));
  return { likelierLabel: bestLabel, likelierDistance: Math.sqrt(d2) };
}

