/**
 * Validation on synthetic data with known displaced cells (issue 9 item 5).
 * Per replicate: 40 invented cells, 5 displaced in B by a fixed length in random
 * directions, 20 animals per group, jitter standard deviations (2.5, 1.75, 1) um
 * along random axes (x a per-cell factor in [0.8, 1.2]), B in a randomly rotated,
 * translated and scaled frame; templates built directly from simulated aligned
 * positions (test/compare/synthetic.ts). The larger run is test/bench/compare-power.ts.
 */
import { describe, expect, it } from 'vitest';
import { simulatePower } from './power.js';

const base = { cells: 40, displacedCells: 5, animals: 20, sd: [2.5, 1.75, 1], alpha: 0.05 } as const;

describe('compareTemplates on synthetic templates (20 animals per group, q < 0.05)', () => {
  it('controls the false discovery rate near its nominal 0.05 and detects about half of the 2 um displacements', () => {
    const r = simulatePower({ ...base, replicates: 24, displacement: 2, seed: 90210 });
    // Measured with this seed: see the report; bounds allow for 24 replicates of sampling noise.
    expect(r.fdr).toBeLessThan(0.1);
    expect(r.power).toBeGreaterThan(0.35);
    expect(r.power).toBeLessThan(0.85);
  });
  it('gives null cells p-values that are close to uniform: 2-8 % below 0.05, mean 0.45-0.6', () => {
    const r = simulatePower({ ...base, replicates: 20, displacement: 2, seed: 4242 });
    expect(r.nullRejectionAt05).toBeGreaterThan(0.02);
    expect(r.nullRejectionAt05).toBeLessThan(0.08);
    expect(r.nullMeanP).toBeGreaterThan(0.45);
    expect(r.nullMeanP).toBeLessThan(0.6);
  });
  it('finds nearly every 4 um displacement, and the robust alignment leaves those cells out', () => {
    const r = simulatePower({ ...base, replicates: 10, displacement: 4, seed: 77 });
    expect(r.power).toBeGreaterThan(0.95);
    expect(r.displacedExcludedFraction).toBeGreaterThan(0.9);
    expect(r.fdr).toBeLessThan(0.1);
  });
  it('makes no discovery in most replicates when nothing is displaced (family-wise error below 0.15)', () => {
    const r = simulatePower({ ...base, displacedCells: 0, replicates: 15, displacement: 0, seed: 5 });
    expect(r.familywiseError).toBeLessThan(0.15);
  });
});
