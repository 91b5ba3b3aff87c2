/**
 * Hand-label checks: a hand label whose aligned position is improbable under
 * its cell's distribution, the cell's statistics computed without that sample.
 *
 * A label is flagged when its leave-one-out squared Mahalanobis distance
 * (co-register.ts, step 5) exceeds the radius r^2(n') beyond which the cell's
 * predictive distribution has tail probability flagProbability
 * (cell-statistics.ts, predictiveCutoff): the multivariate Student-t of the
 * conjugate model by default, or the chi-square quantile chi2_d^-1(1 - p) with
 * flagReference 'chi-square' (Mahalanobis 1936: for a known covariance, D^2 of a
 * Gaussian residual is chi-square with d degrees of freedom). With the chi-square
 * reference and cells seen 10-20 times, about eight times flagProbability of the
 * correct labels were flagged on synthetic animals, because each cell's
 * covariance is itself estimated; the Student-t reference accounts for that. The
 * sample's own alignment is the robust one of the whole co-registration (not
 * refitted without the sample): its wrong labels carry weight 0 in its own fit.
 *
 * The likelier cell is the cell k != label maximising the Gaussian predictive
 * log density log N(y; m_k, (1 + 1/n_k) Sigma_k), reported when it beats the
 * labelled cell's own predictive density.
 */
import type { FlaggedLabel, Sample } from '../types.js';
import { entryFromSample, registerAndSummarise } from './build.js';
import type { SkippedSample } from './co-register.js';
import { resolveSettings, type BuildOptions } from './settings.js';

export { likelierCell } from './likelier-cell.js';

/**
 * List suspicious hand labels of `samples` without building a template file:
 * co-registers them with the robust consensus (robust is always 'trimmed' here)
 * and returns the flagged labels (sample, row, label, leave-one-out Mahalanobis
 * distance, likelier cell) and the samples that could not be aligned, with reasons.
 * Throws FitError when fewer than two samples can be aligned.
 */
export function checkHandLabels(
  samples: readonly Sample[],
  options: BuildOptions = {},
): { flagged: FlaggedLabel[]; skipped: SkippedSample[] } {
  const settings = resolveSettings({ ...options, robust: 'trimmed' });
  const summary = registerAndSummarise(samples.map(entryFromSample), settings, samples.map((s) => s.id));
  return { flagged: summary.flagged, skipped: summary.skipped.slice() };
}
