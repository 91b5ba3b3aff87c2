/**
 * Choosing the hit radius nu (Mahalanobis units) by cross-validation: run the
 * same cross-validation as `cairn evaluate` for each candidate radius and keep
 * the one with the highest accuracy (ties: the smaller radius, the stricter gate).
 */
import { UsageError } from '../errors.js';
import type { Sample } from '../types.js';
import { crossValidate, type CrossValidationOptions } from './cross-validate.js';

/** Candidate radii tried by `--hit-radius auto` (Mahalanobis units). */
export const HIT_RADIUS_CANDIDATES: readonly number[] = [1.5, 2, 2.5, 3, 3.5];

export interface HitRadiusChoice {
  readonly hitRadius: number;
  /** Accuracy measured for each candidate, in candidate order. */
  readonly trials: readonly { readonly hitRadius: number; readonly accuracy: number }[];
}

export function chooseHitRadius(
  samples: readonly Sample[],
  options: CrossValidationOptions = {},
  candidates: readonly number[] = HIT_RADIUS_CANDIDATES,
): HitRadiusChoice {
  if (candidates.length === 0) throw new UsageError('chooseHitRadius: no candidate radii');
  const trials = candidates.map((hitRadius) => {
    if (!(hitRadius > 0)) throw new UsageError(`chooseHitRadius: radius must be positive, got ${hitRadius}`);
    const r = crossValidate(samples, { ...options, match: { ...options.match, hitRadius } });
    return { hitRadius, accuracy: r.report.accuracy };
  });
  let best = trials[0];
  for (const t of trials) if (t.accuracy > best.accuracy || (t.accuracy === best.accuracy && t.hitRadius < best.hitRadius)) best = t;
  return { hitRadius: best.hitRadius, trials };
}
