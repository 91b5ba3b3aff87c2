/**
 * Power and false discovery rate of `compareTemplates` on synthetic templates
 * with known displaced cells. Shared by test/compare/validation.test.ts (few
 * replicates) and test/bench/compare-power.ts (many).
 */
import { compareTemplates, type CompareOptions } from '../../src/compare/compare.js';
import { createRng, randomNormal } from '../../src/random.js';
import { randomSimilarity, simulateTemplate, syntheticLayout } from './synthetic.js';

export interface PowerSettings {
  readonly replicates: number;
  readonly cells: number;
  readonly displacedCells: number;
  /** Displacement length (um), in a random direction per cell. */
  readonly displacement: number;
  readonly animals: number;
  /** Jitter standard deviations along the principal axes (um), scaled per cell by [0.8, 1.2]. */
  readonly sd: readonly number[];
  readonly alpha: number;
  readonly seed: number;
  readonly options?: CompareOptions;
}

export interface PowerResult {
  /** Displaced cells found (q < alpha) over all displaced cells. */
  readonly power: number;
  /** Mean over replicates of false discoveries / max(1, discoveries). */
  readonly fdr: number;
  /** Fraction of replicates with at least one false discovery. */
  readonly familywiseError: number;
  /** Mean of p-values of undisplaced cells (about 0.5 when calibrated). */
  readonly nullMeanP: number;
  /** Fraction of undisplaced cells with p < 0.05 (about 0.05 when calibrated). */
  readonly nullRejectionAt05: number;
  /** Replicates where the robust alignment gave zero weight to a displaced cell, over displaced cells. */
  readonly displacedExcludedFraction: number;
  readonly discoveries: number;
}

export function simulatePower(s: PowerSettings): PowerResult {
  const rng = createRng(s.seed);
  let found = 0;
  let fdpSum = 0;
  let anyFalse = 0;
  let nullP = 0;
  let nullCount = 0;
  let nullReject = 0;
  let excluded = 0;
  let discoveries = 0;
  for (let r = 0; r < s.replicates; r++) {
    const layout = syntheticLayout(rng, s.cells, 3, s.sd);
    const displaced = new Map<string, number[]>();
    for (const label of layout.labels.slice(0, s.displacedCells)) {
      const v = [randomNormal(rng), randomNormal(rng), randomNormal(rng)];
      const n = Math.hypot(...v);
      displaced.set(label, v.map((x) => (x / n) * s.displacement));
    }
    const a = simulateTemplate(rng, layout, { animals: s.animals, keepPositions: false });
    const b = simulateTemplate(rng, layout, { animals: s.animals, displaced, frame: randomSimilarity(rng, 3, 0.9 + 0.2 * rng()), keepPositions: false });
    const result = compareTemplates(a, b, { permutations: 0, alpha: s.alpha, ...s.options });
    let falseHits = 0;
    let hits = 0;
    for (const c of result.cells) {
      const isDisplaced = displaced.has(c.label);
      const hit = c.qValue < s.alpha;
      if (hit) hits++;
      if (hit && isDisplaced) found++;
      if (hit && !isDisplaced) falseHits++;
      if (!isDisplaced) {
        nullP += c.pValue;
        nullCount++;
        if (c.pValue < 0.05) nullReject++;
      }
    }
    excluded += result.alignment.excluded.filter((l) => displaced.has(l)).length;
    discoveries += hits;
    fdpSum += falseHits / Math.max(1, hits);
    if (falseHits > 0) anyFalse++;
  }
  return {
    power: found / (s.replicates * s.displacedCells),
    fdr: fdpSum / s.replicates,
    familywiseError: anyFalse / s.replicates,
    nullMeanP: nullP / nullCount,
    nullRejectionAt05: nullReject / nullCount,
    displacedExcludedFraction: excluded / (s.replicates * s.displacedCells),
    discoveries,
  };
}
