import { describe, expect, it } from 'vitest';
import { cholesky } from '../../src/geometry/index.js';
import { buildCellModel, drawPseudoAnimal } from '../../src/match/cell-model.js';
import { EXCESS_ALLOWANCE_Z, EXCESS_RADIUS_SPACINGS, outlierExcess } from '../../src/match/excess-density.js';
import { createRng, randomNormal } from '../../src/random.js';
import { generateLayout, median, nearestNeighbourDistances } from '../support/animals.js';
import { templateFromLayout } from './support.js';

describe('outlierExcess (excess-density.ts)', () => {
  it('matches the module formula on a hand-computable case: ten points stacked far from a one-cell template', () => {
    const layout = { dim: 3 as const, labels: ['Aa'], positions: [[0, 0, 0]], jitter: [[[1, 0, 0], [0, 1, 0], [0, 0, 1]]] };
    const model = buildCellModel(templateFromLayout(layout, 1000));
    const points = Array.from({ length: 10 }, () => [100, 0, 0]);
    const params = { detection: 0.85, outliers: 10, outlierDensity: 1e-4 };
    const delta = outlierExcess(model, 1, points, 1, params);
    // By hand: r = 2 (two spacings of 1 um), V = 4/3 pi 8 = 33.5103 um^3; the cell adds nothing 100 um away,
    // so e = Lambda u V / J = 1e-3 * 33.5103 = 0.0335103; each point sees 9 others within r:
    // x = 9 - 0.0335103 - 3 sqrt(1.0335103) = 5.916662; delta = log(1 + x / (V Lambda u)) = log(177.5600).
    expect(EXCESS_RADIUS_SPACINGS).toBe(2);
    expect(EXCESS_ALLOWANCE_Z).toBe(3);
    for (const v of delta) expect(v).toBeCloseTo(Math.log(177.56), 3);
  });

  it('leaves points drawn from the template itself (8 pseudo-animals) almost all at zero', () => {
    const rng = createRng(11);
    const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement: 'ganglia' });
    const model = buildCellModel(templateFromLayout(layout, 25));
    const spacing = median(nearestNeighbourDistances(layout.positions));
    const factors = model.covariances.map((s) => cholesky(s));
    let flagged = 0, total = 0;
    for (let rep = 0; rep < 8; rep++) {
      const { points } = drawPseudoAnimal(model, factors, rng);
      const params = { detection: 0.85, outliers: 1, outlierDensity: 1e-5 };
      for (const v of outlierExcess(model, spacing, points, 1, params)) {
        total++;
        if (v > 0) flagged++;
      }
    }
    expect(flagged / total).toBeLessThan(0.01);
  });

  it('flags a dense clump of 20 points just outside the head and no cell beside it', () => {
    const rng = createRng(12);
    const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement: 'ganglia' });
    const model = buildCellModel(templateFromLayout(layout, 25));
    const spacing = median(nearestNeighbourDistances(layout.positions));
    const cells = layout.positions.map((p) => p.slice());
    const farthest = cells.reduce((a, p) => (Math.abs(p[1]) > Math.abs(a[1]) ? p : a));
    const centre = farthest.map((v, a) => (a === 1 ? v + Math.sign(v) * 4 : v));
    const clump = Array.from({ length: 20 }, () => centre.map((v) => v + 1.3 * randomNormal(rng)));
    const points = cells.concat(clump);
    const delta = outlierExcess(model, spacing, points, 1, { detection: 0.85, outliers: 20, outlierDensity: 1e-5 });
    const clumpFlagged = Array.from(delta.slice(cells.length)).filter((v) => v > 0).length;
    const cellsFlagged = Array.from(delta.slice(0, cells.length)).filter((v) => v > 0).length;
    expect(clumpFlagged).toBeGreaterThanOrEqual(16);
    expect(cellsFlagged).toBeLessThanOrEqual(2);
  });
});
