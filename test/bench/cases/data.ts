/**
 * Seeded synthetic data for the benchmarks (test/support/animals.ts): the
 * same seed gives the same animals in every run, for ours and for the peers.
 */
import { createRng } from '../../../src/random.js';
import { buildTemplate } from '../../../src/template/index.js';
import type { Sample, Template } from '../../../src/types.js';
import { generateAnimal, generateLayout, type Animal, type AnimalOptions, type Layout } from '../../support/animals.js';

/** Complete labels: every cell detected and labelled, no outliers (what procGPA needs). */
export const COMPLETE: AnimalOptions = { missingFraction: 0, outlierFraction: 0, labelledFraction: 1 };
/** Partial labels as a lab has them: 15% missing, 20% outliers, 60% of the cells labelled, 1% labels swapped. */
export const PARTIAL: AnimalOptions = { missingFraction: 0.15, outlierFraction: 0.2, labelledFraction: 0.6, wrongLabelFraction: 0.01 };

export interface BuildData {
  readonly layout: Layout;
  readonly samples: Sample[];
}

/** `members` animals of one `cells`-cell 3-D layout. */
export function buildData(cells: number, members: number, labels: 'complete' | 'partial', seed: number): BuildData {
  const rng = createRng(seed);
  const layout = generateLayout(rng, { cells, dim: 3 });
  const options = labels === 'complete' ? COMPLETE : PARTIAL;
  const samples = Array.from({ length: members }, (_, i) => generateAnimal(layout, rng, `m${String(i + 1).padStart(4, '0')}`, options).sample);
  return { layout, samples };
}

export interface MatchData {
  readonly layout: Layout;
  readonly template: Template;
  /** Unlabelled animals with their truth. */
  readonly animals: Animal[];
}

/**
 * A template of `cells` cells from `training` animals labelled at 60% (15% missing,
 * 20% outliers), and `count` unlabelled test animals of `points` points each:
 * `missing` of the cells dropped and outliers added up to `points`. Cells are
 * grouped in ganglia with gaps between them (as real heads group their
 * nuclei; test/support/animals.ts) unless `arrangement` is 'uniform'.
 */
export function matchData(
  cells: number,
  points: number,
  missing: number,
  count: number,
  seed: number,
  training = 30,
  arrangement: 'ganglia' | 'uniform' = 'ganglia',
): MatchData {
  const rng = createRng(seed);
  const layout = generateLayout(rng, { cells, dim: 3, arrangement });
  const train = Array.from({ length: training }, (_, i) => generateAnimal(layout, rng, `t${i + 1}`, PARTIAL).sample);
  const template = buildTemplate(train).template;
  const kept = cells - Math.round(missing * cells);
  const outlierFraction = (points - kept) / points;
  const animals = Array.from({ length: count }, (_, i) =>
    generateAnimal(layout, rng, `u${String(i + 1).padStart(4, '0')}`, { missingFraction: missing, outlierFraction, labelledFraction: 0 }),
  );
  for (const a of animals) {
    if (a.sample.coords.length !== points) throw new Error(`matchData: animal ${a.sample.id} has ${a.sample.coords.length} points, wanted ${points}`);
  }
  return { layout, template, animals };
}

/** Share of an animal's true cell points whose proposed label is their true cell. */
export function accuracyOf(animal: Animal, labels: readonly (string | null)[]): number {
  let right = 0, total = 0;
  animal.truth.forEach((t, i) => {
    if (t === null) return;
    total++;
    if (labels[i] === t) right++;
  });
  return total ? right / total : Number.NaN;
}

/** Share of an animal's outliers that received a label (lower is better). */
export function outliersLabelled(animal: Animal, labels: readonly (string | null)[]): number {
  let n = 0, total = 0;
  animal.truth.forEach((t, i) => {
    if (t !== null) return;
    total++;
    if (labels[i] !== null) n++;
  });
  return total ? n / total : Number.NaN;
}
