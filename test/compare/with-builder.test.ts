/**
 * End to end with the real template builder: two groups of seeded synthetic
 * animals (test/support/animals.ts: invented elongated layout, per-animal
 * rotation, scale, bend and jitter of 1-3 um), 5 of 60 cells moved by 4 um
 * along the long axis in group B, 20 animals per group, built by buildTemplate,
 * then compared.
 */
import { describe, expect, it } from 'vitest';
import { compareTemplates } from '../../src/compare/compare.js';
import { createRng } from '../../src/random.js';
import { buildTemplate } from '../../src/template/build.js';
import { generateAnimal, generateLayout } from '../support/animals.js';

describe('compareTemplates on templates made by buildTemplate', () => {
  it('calls the 5 moved cells (q < 0.05) with at most one false call, and the permutation test rejects', () => {
    const rng = createRng(12);
    const layout = generateLayout(rng, { cells: 60, nearestSpacing: 6 });
    const moved = new Set([0, 11, 22, 33, 44].map((i) => layout.labels[i]));
    const layoutB = { ...layout, positions: layout.positions.map((p, i) => (moved.has(layout.labels[i]) ? [p[0] + 4, p[1], p[2]] : p)) };
    const options = { labelledFraction: 1, outlierFraction: 0, missingFraction: 0.1 };
    const a = buildTemplate(Array.from({ length: 20 }, (_, k) => generateAnimal(layout, rng, `a${k}`, options).sample)).template;
    const b = buildTemplate(Array.from({ length: 20 }, (_, k) => generateAnimal(layoutB, rng, `b${k}`, options).sample)).template;
    const r = compareTemplates(a, b, { rng: createRng(1), permutations: 49 });
    const called = r.cells.filter((c) => c.qValue < 0.05).map((c) => c.label);
    expect(called.filter((l) => moved.has(l)).length).toBe(5);
    expect(called.filter((l) => !moved.has(l)).length).toBeLessThanOrEqual(1);
    for (const c of r.cells.filter((x) => moved.has(x.label))) {
      expect(c.lengthInterval[0]).toBeLessThan(4);
      expect(c.lengthInterval[1]).toBeGreaterThan(4);
    }
    expect(r.shape.permutation!.pValue).toBeLessThanOrEqual(0.05);
  });
});
