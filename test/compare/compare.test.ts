import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { compareTemplates, sampleCovarianceFromSums } from '../../src/compare/compare.js';
import { composeTransforms, invertTransform, applyToPoint } from '../../src/geometry/transform.js';
import { multiply, multiplyVector, transpose } from '../../src/geometry/linear-algebra.js';
import { createRng } from '../../src/random.js';
import type { Template, Transform } from '../../src/types.js';
import { FitError } from '../../src/errors.js';
import { randomSimilarity, simulateTemplate, syntheticLayout } from './synthetic.js';

/** The same template expressed in another frame: means, covariances, sums and member transforms mapped by t. */
function transformTemplate(template: Template, t: Transform): Template {
  const a = t.linear;
  return {
    ...template,
    cells: template.cells.map((c) => {
      const as = multiplyVector(a, c.sum);
      const n = c.count;
      const ss = multiply(multiply(a, c.sumOfSquares), transpose(a)).map((row, i) =>
        row.map((v, j) => v + as[i] * t.translation[j] + t.translation[i] * as[j] + n * t.translation[i] * t.translation[j]),
      );
      return {
        ...c,
        mean: applyToPoint(t, c.mean),
        covariance: multiply(multiply(a, c.covariance), transpose(a)),
        sum: as.map((v, i) => v + n * t.translation[i]),
        sumOfSquares: ss,
      };
    }),
    members: template.members.map((m) => ({ ...m, transform: composeTransforms(t, m.transform) })),
  };
}

function pair(seed: number, options: { displaced?: number; shift?: number; animals?: number } = {}) {
  const rng = createRng(seed);
  const layout = syntheticLayout(rng, 24);
  const displaced = new Map(layout.labels.slice(0, options.displaced ?? 0).map((l) => [l, [options.shift ?? 6, 0, 0]]));
  const a = simulateTemplate(rng, layout, { animals: options.animals ?? 12 });
  const b = simulateTemplate(rng, layout, { animals: options.animals ?? 12, displaced, frame: randomSimilarity(rng, 3, 1.05) });
  return { a, b, layout, rng };
}

describe('compareTemplates: properties (issue 9 item 4)', () => {
  it('comparing a template with itself gives zero displacement, T^2 = 0, p = q = 1 and no significant cell', () => {
    const { a } = pair(1);
    const r = compareTemplates(a, a, { rng: createRng(1), permutations: 19 });
    expect(r.cells.length).toBe(24);
    for (const c of r.cells) {
      expect(c.length).toBeCloseTo(0, 9);
      expect(c.pValue).toBeCloseTo(1, 9);
      expect(c.qValue).toBeCloseTo(1, 9);
    }
    expect(r.significant).toBe(0);
    expect(r.shape.distances.full).toBeCloseTo(0, 9);
  });
  it('comparing with a rotated, translated (and scaled) copy likewise gives zero displacement and no significant cell (property)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), fc.boolean(), (seed, scaled) => {
        const { a, rng } = pair(seed % 97);
        const t = randomSimilarity(rng, 3, scaled ? 0.8 + 0.4 * createRng(seed)() : 1);
        const r = compareTemplates(a, transformTemplate(a, t), { permutations: 0, scale: scaled });
        for (const c of r.cells) {
          expect(c.length).toBeCloseTo(0, 6);
          expect(c.pValue).toBeGreaterThan(1 - 1e-6);
        }
        expect(r.significant).toBe(0);
        expect(r.alignment.excluded).toEqual([]);
      }),
      { seed: 11, numRuns: 6 },
    );
  });
  it('swapping A and B reverses every displacement and keeps every p-value (rigid: 9 digits)', () => {
    const { a, b } = pair(5, { displaced: 3 });
    const ab = compareTemplates(a, b, { permutations: 0, scale: false });
    const ba = compareTemplates(b, a, { permutations: 0, scale: false });
    const byLabel = new Map(ba.cells.map((c) => [c.label, c]));
    // d_AB lives in A's frame, d_BA in B's: map d_AB into B's frame with the linear part of the
    // inverse of the transform the cell was measured with.
    for (const c of ab.cells) {
      const other = byLabel.get(c.label)!;
      const mapped = multiplyVector(invertTransform(c.transform).linear, c.displacement);
      mapped.forEach((v, j) => expect(other.displacement[j]).toBeCloseTo(-v, 8));
      expect(other.pValue).toBeCloseTo(c.pValue, 9);
      expect(other.length).toBeCloseTo(c.length, 8);
    }
  });
  it('swapping A and B under the similarity fit keeps every p-value (9 digits) and reverses every displacement', () => {
    const { a, b } = pair(6, { displaced: 3 });
    const ab = compareTemplates(a, b, { permutations: 0 });
    const ba = compareTemplates(b, a, { permutations: 0 });
    const byLabel = new Map(ba.cells.map((c) => [c.label, c]));
    expect(ba.alignment.scale).toBeCloseTo(1 / ab.alignment.scale, 10);
    for (const c of ab.cells) {
      const other = byLabel.get(c.label)!;
      expect(other.pValue).toBeCloseTo(c.pValue, 9);
      multiplyVector(invertTransform(c.transform).linear, c.displacement).forEach((v, j) => expect(other.displacement[j]).toBeCloseTo(-v, 8));
    }
  });
  it('in 2-D, a rotated and translated copy gives zero displacement, and swapping keeps p-values (9 digits)', () => {
    const rng = createRng(44);
    const layout = syntheticLayout(rng, 15, 2, [2, 1.2]);
    const a = simulateTemplate(rng, layout, { animals: 10 });
    const b = simulateTemplate(rng, layout, { animals: 10, displaced: new Map([[layout.labels[0], [5, 0]]]), frame: randomSimilarity(rng, 2, 1.1) });
    const copy = compareTemplates(a, transformTemplate(a, randomSimilarity(rng, 2, 1)), { permutations: 0 });
    for (const c of copy.cells) expect(c.length).toBeCloseTo(0, 6);
    const ab = compareTemplates(a, b, { permutations: 0 });
    const ba = new Map(compareTemplates(b, a, { permutations: 0 }).cells.map((c) => [c.label, c]));
    for (const c of ab.cells) expect(ba.get(c.label)!.pValue).toBeCloseTo(c.pValue, 9);
  });
  it('does not mutate its inputs', () => {
    const { a, b } = pair(7);
    const freeze = <T>(x: T): T => {
      if (x && typeof x === 'object') {
        Object.values(x as object).forEach(freeze);
        Object.freeze(x);
      }
      return x;
    };
    expect(() => compareTemplates(freeze(a), freeze(b), { rng: createRng(3), permutations: 9 })).not.toThrow();
  });
});

describe('compareTemplates', () => {
  it('finds 3 cells displaced by 6 um with 12 animals per group, top of the table, with length intervals covering 6 um', () => {
    const { a, b, layout } = pair(9, { displaced: 3, shift: 6 });
    const r = compareTemplates(a, b, { permutations: 0 });
    const top = r.cells.slice(0, 3).map((c) => c.label).sort();
    expect(top).toEqual(layout.labels.slice(0, 3).sort());
    for (const c of r.cells.slice(0, 3)) {
      expect(c.qValue).toBeLessThan(0.05);
      expect(c.lengthInterval[0]).toBeLessThan(6);
      expect(c.lengthInterval[1]).toBeGreaterThan(6);
      expect(c.alignmentWeight).toBe(0);
    }
    expect(r.alignment.excluded.sort()).toEqual(layout.labels.slice(0, 3).sort());
  });
  it('sorts the table by q-value, then p-value', () => {
    const { a, b } = pair(10, { displaced: 4, shift: 3 });
    const r = compareTemplates(a, b, { permutations: 0 });
    for (let i = 1; i < r.cells.length; i++) {
      expect(r.cells[i].qValue).toBeGreaterThanOrEqual(r.cells[i - 1].qValue);
      if (r.cells[i].qValue === r.cells[i - 1].qValue) expect(r.cells[i].pValue).toBeGreaterThanOrEqual(r.cells[i - 1].pValue);
    }
  });
  it('lists cells present in only one template apart, and shared cells with one observation as untested', () => {
    const { a, b } = pair(12);
    const a2: Template = { ...a, cells: [...a.cells.slice(1), { ...a.cells[1], label: 'Zefa9' }] };
    const b2: Template = { ...b, cells: b.cells.map((c, i) => (i === 5 ? { ...c, count: 1 } : c)) };
    const r = compareTemplates(a2, b2, { permutations: 0 });
    expect(r.onlyInA).toEqual(['Zefa9']);
    expect(r.onlyInB).toEqual([a.cells[0].label]);
    expect(r.untested.map((u) => u.label)).toEqual([b.cells[5].label]);
    expect(r.untested[0].reason).toBe('needs at least 2 observations in each template');
    expect(r.cells.length).toBe(22);
  });
  it('recomputes the sample covariance from the sums under covariance = "sample"', () => {
    const { a } = pair(13);
    const c = a.cells[0];
    // with nu_0 = 5: template covariance = (5 pooled + (n - 1) S) / (5 + n - 1), so S differs from it
    const s = sampleCovarianceFromSums(c);
    expect(s[0][0]).not.toBeCloseTo(c.covariance[0][0], 6);
    const r = compareTemplates(a, a, { permutations: 0, covariance: 'sample' });
    expect(r.covariance).toBe('sample');
    expect(r.cells.find((x) => x.label === c.label)!.covarianceA[0][0]).toBeCloseTo(s[0][0], 10);
  });
  it('runs a seeded permutation test: same seed, same p-value; a 6 um shift of 3 cells gives p <= 0.05', () => {
    const { a, b } = pair(14, { displaced: 3, shift: 6 });
    const r1 = compareTemplates(a, b, { rng: createRng(5), permutations: 99 });
    const r2 = compareTemplates(a, b, { rng: createRng(5), permutations: 99 });
    expect(r1.shape.permutation).not.toBeNull();
    expect(r1.shape.permutation!.pValue).toBe(r2.shape.permutation!.pValue);
    expect(r1.shape.permutation!.pValue).toBeLessThanOrEqual(0.05);
  });
  it('skips the permutation test, saying why, when members\' positions are not kept', () => {
    const rng = createRng(15);
    const layout = syntheticLayout(rng, 10);
    const a = simulateTemplate(rng, layout, { animals: 6, keepPositions: false });
    const r = compareTemplates(a, a, { rng, permutations: 99 });
    expect(r.shape.permutation).toBeNull();
    expect(r.shape.permutationNote).toBe("not run: members' positions kept for 0 animal(s) of A and 0 of B (need 2 each)");
  });
  it('rejects templates of different dimensions', () => {
    const { a } = pair(16);
    expect(() => compareTemplates(a, { ...a, dim: 2 }, { permutations: 0 })).toThrow(new FitError('the templates have different dimensions (3 vs 2)'));
  });
});
