import { readFileSync } from 'node:fs';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { buildCellModel } from '../../src/match/cell-model.js';
import { crowdedPoints, crowding, crowdingLimit } from '../../src/match/crowding.js';
import { matchSample } from '../../src/match/match-sample.js';
import { createRng, randomNormal, randomRotation } from '../../src/random.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { templateFromTraining } from './support.js';

const reference = JSON.parse(readFileSync(new URL('../fixtures/reference/crowding-scipy.json', import.meta.url), 'utf8')) as {
  cases: { name: string; points: number[][]; spacing: number; counts: number[] }[];
};

describe('crowding', () => {
  it('counts lattice neighbours closer than twice the spacing (worked by hand)', () => {
    // 5 x 5 x 5 unit lattice: spacing 1, radius 2 (strict). Interior points see the 6 face, 12 edge
    // and 8 corner neighbours (squared distances 1, 2, 3) = 26; a lattice corner sees 3 + 3 + 1 = 7.
    const pts: number[][] = [];
    for (let x = 0; x < 5; x++) for (let y = 0; y < 5; y++) for (let z = 0; z < 5; z++) pts.push([x, y, z]);
    const c = crowding(pts);
    expect(c[pts.findIndex((p) => p.join() === '2,2,2')]).toBe(26);
    expect(c[pts.findIndex((p) => p.join() === '0,0,0')]).toBe(7);
    expect(c[pts.findIndex((p) => p.join() === '0,2,2')]).toBe(17); // a face point: 26 minus the 9 beyond the face
  });

  it('agrees with scipy.spatial.cKDTree counts (fixture from scripts/fixtures/crowding.py)', () => {
    expect(reference.cases.length).toBeGreaterThanOrEqual(3);
    for (const c of reference.cases) expect(Array.from(crowding(c.points)), c.name).toEqual(c.counts);
  });

  it('does not change under rotation, scaling and translation of the set', () => {
    const rng = createRng(5);
    const pts = Array.from({ length: 60 }, () => [0, 0, 0].map(() => 10 * randomNormal(rng)));
    const base = Array.from(crowding(pts));
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), fc.double({ min: 0.2, max: 5, noNaN: true }), (seed, scale) => {
        const r = randomRotation(createRng(seed), 3);
        const moved = pts.map((p) => r.map((row, a) => scale * (row[0] * p[0] + row[1] * p[1] + row[2] * p[2]) + 7 * a));
        expect(Array.from(crowding(moved))).toEqual(base);
      }),
      { seed: 42, numRuns: 25 },
    );
  });

  it('handles sets too small to have neighbours', () => {
    expect(Array.from(crowding([]))).toEqual([]);
    expect(Array.from(crowding([[1, 2, 3]]))).toEqual([0]);
  });
});

describe('crowded points on synthetic animals', () => {
  const rng = createRng(20261202);
  const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement: 'ganglia' });
  const template = templateFromTraining(layout, rng, { members: 20 });
  const limit = crowdingLimit(buildCellModel(template), createRng(3));

  it('is deterministic for a seed', () => {
    expect(crowdingLimit(buildCellModel(template), createRng(3))).toBe(limit);
  });

  it('flags the core of a dense clump of outliers and almost no cells', () => {
    let cellsFlagged = 0, cells = 0, clumpFlagged = 0, clump = 0;
    for (let a = 0; a < 4; a++) {
      // 40% outliers, all of them in one clump beside the head (about 100 points, sd about 3 um; its
      // thinner rim is as crowded as a ganglion and stays unflagged: the rule is conservative).
      const animal = generateAnimal(layout, rng, `clump${a}`, { outlierFraction: 0.4, clusteredOutlierShare: 1, missingFraction: 0.2 });
      const flags = crowdedPoints(animal.sample.coords, limit);
      animal.truth.forEach((t, i) => {
        if (t === null) {
          clump++;
          if (flags[i]) clumpFlagged++;
        } else {
          cells++;
          if (flags[i]) cellsFlagged++;
        }
      });
    }
    expect(clumpFlagged / clump).toBeGreaterThan(0.3);
    expect(cellsFlagged / cells).toBeLessThan(0.01);
  });

  it('matchSample leaves a clump out of the search, still labels every point, and reports none for a clean sample', () => {
    const clumped = generateAnimal(layout, rng, 'clumped', { outlierFraction: 0.4, clusteredOutlierShare: 1, missingFraction: 0.2 });
    const r = matchSample(template, clumped.sample, { rng: createRng(1), maxTrials: 60 });
    expect(r.crowded).toBeGreaterThan(10);
    expect(r.proposals).toHaveLength(clumped.sample.coords.length);
    const clean = generateAnimal(layout, rng, 'clean', { outlierFraction: 0.05, clusteredOutlierShare: 0, missingFraction: 0.1 });
    expect(matchSample(template, clean.sample, { rng: createRng(1), maxTrials: 60 }).crowded).toBe(0);
  });
});
