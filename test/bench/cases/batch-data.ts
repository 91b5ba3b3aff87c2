/** The batch case's seeded data: a 190-cell template and `count` unlabelled animals of 190 points. */
import type { Animal } from '../../support/animals.js';
import { matchData, type MatchData } from './data.js';

const CELLS = 190;
const MISSING = 0.15;

export function batchData(count: number, seed: number): MatchData {
  return matchData(CELLS, CELLS, MISSING, count, seed);
}

/** The animals of batchData(count, seed) (same seeds, so the same animals; the template is rebuilt and dropped). */
export function batchAnimals(count: number, seed: number): Animal[] {
  return batchData(count, seed).animals;
}
