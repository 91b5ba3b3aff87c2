import { describe, expect, it } from 'vitest';
import { buildCellGrid, voxelOf } from '../../src/match/cell-grid.js';
import { buildCellModel, cellMahalanobisSquared } from '../../src/match/cell-model.js';
import { createRng } from '../../src/random.js';
import { generateLayout } from '../support/animals.js';
import { templateFromLayout } from './support.js';

describe('buildCellGrid', () => {
  it('lists, for any point, every cell within the radius (brute-force check on 3000 random points)', () => {
    const rng = createRng(8);
    const layout = generateLayout(rng, { cells: 60, dim: 3 });
    const model = buildCellModel(templateFromLayout(layout, 10));
    const radius = 2.5;
    const grid = buildCellGrid(model, radius);
    let checked = 0;
    for (let t = 0; t < 3000; t++) {
      const y = [(rng() - 0.5) * 50, (rng() - 0.5) * 20, (rng() - 0.5) * 20];
      const v = voxelOf(grid, y);
      const listed = v < 0 ? new Set<number>() : new Set(Array.from(grid.cells.subarray(grid.offsets[v], grid.offsets[v + 1])));
      for (let k = 0; k < model.size; k++) {
        if (cellMahalanobisSquared(model, k, y) < radius * radius) {
          expect(listed.has(k)).toBe(true);
          checked++;
        }
      }
    }
    expect(checked).toBeGreaterThan(100);
  });
});

describe('buildCellModel', () => {
  it('uses the predictive covariance (1 + 1/n) Sigma', () => {
    const layout = generateLayout(createRng(2), { cells: 5, dim: 2 });
    const model = buildCellModel(templateFromLayout(layout, 3));
    model.covariances[0].forEach((row, a) => row.forEach((v, b) => expect(v).toBeCloseTo((4 / 3) * layout.jitter[0][a][b], 12)));
  });
});
