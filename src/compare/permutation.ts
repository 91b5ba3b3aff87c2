/**
 * Permutation test for an overall shape difference between two groups of
 * animals, from the members' aligned positions kept in each template.
 */
import { FitError, UsageError } from '../errors.js';
import { shuffle, type Rng } from '../random.js';
import { procrustesDistances } from './procrustes-distance.js';

/** One animal's positions by cell label, already in the common frame. */
export type AnimalPositions = ReadonlyMap<string, readonly number[]>;

export interface PermutationTestResult {
  /** Full Procrustes distance between the two groups' mean configurations (observed grouping). */
  readonly statistic: number;
  readonly permutations: number;
  /** Permutations in which some cell had no observation in one group (not counted). */
  readonly skipped: number;
  /** (1 + #{D* >= D}) / (1 + valid permutations) (Phipson & Smyth 2010). */
  readonly pValue: number;
}

/**
 * Mean configuration of a group over the given cells: per cell, the mean of the
 * animals that have it; null when some cell has no observation.
 */
export function groupMeanConfiguration(animals: readonly AnimalPositions[], cells: readonly string[]): number[][] | null {
  const out: number[][] = [];
  for (const cell of cells) {
    let n = 0;
    let sum: number[] | null = null;
    for (const a of animals) {
      const x = a.get(cell);
      if (!x) continue;
      if (!sum) sum = x.map(() => 0);
      for (let j = 0; j < x.length; j++) sum[j] += x[j];
      n++;
    }
    if (!sum || n === 0) return null;
    out.push(sum.map((v) => v / n));
  }
  return out;
}

/**
 * Two-group permutation test of "no shape difference": the statistic is the full
 * Procrustes distance d_F between the groups' mean configurations over `cells`
 * (positions taken as given in a common frame; the distance removes location,
 * scale and rotation between the two means). Group labels are shuffled
 * `permutations` times with group sizes kept (Good 2005, Permutation, Parametric
 * and Bootstrap Tests of Hypotheses, ch. 3); p = (1 + #{D* >= D}) / (1 + B)
 * (Phipson & Smyth 2010, Stat. Appl. Genet. Mol. Biol. 9(1):39), so p is never 0.
 * Permutations leaving a cell unobserved in one group are skipped and counted.
 *
 * @throws UsageError when permutations is not a positive integer; FitError when a
 *   group has fewer than 2 animals, fewer than 3 cells are given, or the observed
 *   grouping leaves a cell unobserved.
 */
export function permutationShapeTest(
  groupA: readonly AnimalPositions[],
  groupB: readonly AnimalPositions[],
  cells: readonly string[],
  permutations: number,
  rng: Rng,
): PermutationTestResult {
  if (!Number.isInteger(permutations) || permutations < 1) {
    throw new UsageError(`permutationShapeTest: permutations must be a positive integer, got ${permutations}`);
  }
  if (groupA.length < 2 || groupB.length < 2) {
    throw new FitError(`permutation test needs at least 2 animals per template with kept positions, got ${groupA.length} and ${groupB.length}`);
  }
  if (cells.length < 3) throw new FitError(`permutation test needs at least 3 shared cells, got ${cells.length}`);
  const statisticOf = (a: readonly AnimalPositions[], b: readonly AnimalPositions[]): number | null => {
    const ma = groupMeanConfiguration(a, cells);
    const mb = groupMeanConfiguration(b, cells);
    if (!ma || !mb) return null;
    return procrustesDistances(ma, mb).full;
  };
  const observed = statisticOf(groupA, groupB);
  if (observed === null) throw new FitError('permutation test: a shared cell has no kept position in one template');
  const pooled = [...groupA, ...groupB];
  const nA = groupA.length;
  let atLeast = 0;
  let skipped = 0;
  for (let i = 0; i < permutations; i++) {
    const order = shuffle(pooled, rng);
    const value = statisticOf(order.slice(0, nA), order.slice(nA));
    if (value === null) {
      skipped++;
      continue;
    }
    // A relative tolerance keeps ties (e.g. the identity permutation) counted despite rounding.
    if (value >= observed * (1 - 1e-12)) atLeast++;
  }
  const valid = permutations - skipped;
  return { statistic: observed, permutations, skipped, pValue: (1 + atLeast) / (1 + valid) };
}
