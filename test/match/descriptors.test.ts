import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { descriptorSpec, rankNormalize, rawDescriptors } from '../../src/match/descriptors.js';
import { createRng, randomRotation } from '../../src/random.js';
import { generateLayout } from '../support/animals.js';

describe('rankNormalize', () => {
  it('gives (rank - 1/2) / n, ties sharing their mean rank', () => {
    // R 4.2.2: rank(c(10, 20, 20, 30, 5)) = 2, 3.5, 3.5, 5, 1 (ties.method = "average", the default).
    const z = rankNormalize([[10], [20], [20], [30], [5]]);
    [2, 3.5, 3.5, 5, 1].forEach((r, i) => expect(z[i][0]).toBeCloseTo((r - 0.5) / 5, 12));
  });
});

describe('rawDescriptors', () => {
  const layout = generateLayout(createRng(3), { cells: 40, dim: 3 });
  const spec = descriptorSpec(layout.positions);

  it('uses radii growing geometrically from twice the median nearest-neighbour distance', () => {
    expect(spec.radii[0]).toBeCloseTo(4, 6); // the generator fixes the median nearest-neighbour distance at 2 um
    for (let r = 1; r < spec.radii.length; r++) expect(spec.radii[r] / spec.radii[r - 1]).toBeCloseTo(spec.radii[1] / spec.radii[0], 9);
  });

  it('counts neighbours within each radius (hand count on a line of points 1 um apart)', () => {
    const line = [0, 1, 2, 3, 4, 5].map((x) => [x, 0, 0]);
    const d = rawDescriptors(line, { radii: [1, 2.5], quantiles: [0.5] });
    // Point 0: within 1 um one neighbour (x = 1), within 2.5 um two; distances 1..5, median index floor(0.5 * 4) = 2 -> 3.
    expect(d[0]).toEqual([1, 2, 3]);
    // Point 2: neighbours at 1, 1, 2, 2, 3 -> counts 2 and 4; sorted distances [1,1,2,2,3], index 2 -> 2.
    expect(d[2]).toEqual([2, 4, 2]);
  });

  it('does not change under rotation, translation and re-ordering of the points (property, fixed seed)', () => {
    const base = rawDescriptors(layout.positions, spec);
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 1e6 }), (seed) => {
        const rng = createRng(seed);
        const r = randomRotation(rng, 3);
        const t = [rng() * 100, rng() * 100, rng() * 100];
        const order = layout.positions.map((_, i) => i).reverse();
        const moved = order.map((i) => r.map((row, a) => row[0] * layout.positions[i][0] + row[1] * layout.positions[i][1] + row[2] * layout.positions[i][2] + t[a]));
        const d = rawDescriptors(moved, spec);
        order.forEach((i, j) => d[j].forEach((v, f) => expect(v).toBeCloseTo(base[i][f], 6)));
      }),
      { seed: 5, numRuns: 5 },
    );
  });
});
