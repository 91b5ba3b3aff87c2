import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { buildTemplate } from '../../src/template/build.js';
import { applyTransform, fitSimilarity } from '../../src/geometry/index.js';
import { createRng, randomRotation, shuffle } from '../../src/random.js';
import { VERSION } from '../../src/version.js';
import type { Sample, Template } from '../../src/types.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { expectSchemaValid, readGpaFixture, sampleFromConfiguration, moved } from './helpers.js';

/** A 3-D set with missing labels: the procGPA fixture's configurations, each missing two cells. */
function partialSet(): Sample[] {
  const fx = readGpaFixture('gpa-3d');
  return fx.configurations.map((c, i) =>
    sampleFromConfiguration(`c${i + 1}`, c, c.map((_, j) => (j === i % c.length || j === (i + 5) % c.length ? null : `L${String(j + 1).padStart(2, '0')}`))),
  );
}

function expectCellsClose(a: Template, b: Template, digits: number, factor = 1): void {
  expect(b.cells.map((c) => c.label)).toEqual(a.cells.map((c) => c.label));
  a.cells.forEach((c, k) => {
    const o = b.cells[k];
    expect(o.count).toBe(c.count);
    c.mean.forEach((v, j) => expect(o.mean[j]).toBeCloseTo(v * factor, digits));
    c.covariance.forEach((row, i) => row.forEach((v, j) => expect(o.covariance[i][j]).toBeCloseTo(v * factor * factor, digits)));
  });
}

const tight = { tolerance: 1e-11, maxIterations: 500 } as const;

describe('buildTemplate', () => {
  it('records the format, the units, the settings and the tool version, and no creation time', () => {
    const { template, converged } = buildTemplate(partialSet(), tight);
    expect(converged).toBe(true);
    expect(template.format).toBe('cairn-template');
    expect(template.version).toBe(1);
    expect(template.units).toBe('um');
    expect(template.dim).toBe(3);
    expect(template.tool).toEqual({ name: 'cairn', version: VERSION });
    expect(template.created).toBeUndefined();
    expect(template.settings).toEqual({ tolerance: 1e-11, maxIterations: 500, alignment: 'similarity', minCount: 5, priorStrength: 10, flagProbability: 0.001, robust: 'trimmed', memberFit: 'template-to-sample', flagReference: 'student-t' });
    expect(template.members.map((m) => m.id)).toEqual(partialSet().map((s) => s.id));
  });

  it('writes templates that validate against docs/template.schema.json (ajv, draft 2020-12)', () => {
    expectSchemaValid(buildTemplate(partialSet(), tight).template);
    const rng = createRng(11);
    const layout = generateLayout(rng, { cells: 40, dim: 2 });
    const samples = Array.from({ length: 8 }, (_, i) => generateAnimal(layout, rng, `w${i}`, { labelledFraction: 0.7, wrongLabelFraction: 0.05 }).sample);
    for (const alignment of ['similarity', 'rigid', 'affine'] as const) expectSchemaValid(buildTemplate(samples, { alignment }).template);
  });

  it('keeps exact sufficient statistics: each cell sum equals the sum of members\' kept positions mapped by their stored transforms', () => {
    const rng = createRng(5);
    const layout = generateLayout(rng, { cells: 30, dim: 3 });
    const samples = Array.from({ length: 10 }, (_, i) => generateAnimal(layout, rng, `m${i}`, { labelledFraction: 0.8, wrongLabelFraction: 0.05 }).sample);
    const { template } = buildTemplate(samples);
    const flagged = new Set(template.flagged.map((f) => `${f.sample}:${f.row}`));
    const sums = new Map<string, { n: number; s: number[] }>();
    for (const m of template.members) {
      const y = applyTransform(m.transform, m.positions.map((p) => p.coords));
      m.positions.forEach((p, j) => {
        if (flagged.has(`${m.id}:${p.row}`)) return;
        const e = sums.get(p.label) ?? { n: 0, s: [0, 0, 0] };
        e.n++;
        y[j].forEach((v, a) => (e.s[a] += v));
        sums.set(p.label, e);
      });
    }
    for (const c of template.cells) {
      expect(sums.get(c.label)!.n).toBe(c.count);
      c.sum.forEach((v, a) => expect(sums.get(c.label)!.s[a]).toBeCloseTo(v, 9));
      c.mean.forEach((v, a) => expect(v).toBeCloseTo(c.sum[a] / c.count, 12));
    }
  });

  it('marks cells seen by fewer than minCount members as sparse and keeps them', () => {
    const samples = partialSet();
    // L16 exists only in two samples.
    const extra = samples.map((s, i) => (i < 2 ? { ...s, coords: [...s.coords, [0, 0, 0]], labels: [...s.labels, 'L16'], rows: [...s.rows, 99], features: { names: [], values: [...s.features.values, []] } } : s));
    const { template } = buildTemplate(extra, { minCount: 3 });
    const cell = template.cells.find((c) => c.label === 'L16')!;
    expect(cell.count).toBe(2);
    expect(cell.sparse).toBe(true);
    expect(template.cells.filter((c) => c.sparse).map((c) => c.label)).toEqual(['L16']);
  });

  it('skips samples it cannot align and says why', () => {
    const samples = partialSet();
    const none = sampleFromConfiguration('unlabelled', [[0, 0, 0], [1, 2, 3], [4, 0, 1]], [null, null, null]);
    const copy = { ...samples[0], id: 'copy-of-c1' };
    const r = buildTemplate([...samples, none, copy]);
    expect(r.skipped).toEqual(
      expect.arrayContaining([
        { sample: 'unlabelled', reason: 'has 0 labelled points; similarity alignment needs at least 3' },
        expect.objectContaining({ sample: expect.stringMatching(/^(c1|copy-of-c1)$/), reason: expect.stringMatching(/^same content as sample (c1|copy-of-c1)$/) }),
      ]),
    );
    expect(r.template.members.length).toBe(samples.length);
  });

  it('does not modify its input samples (frozen arrays)', () => {
    const samples = partialSet().map((s) => Object.freeze({ ...s, coords: Object.freeze(s.coords.map((p) => Object.freeze(p.slice()))), labels: Object.freeze(s.labels.slice()) }));
    expect(() => buildTemplate(samples as Sample[])).not.toThrow();
  });
});

describe('buildTemplate properties (fast-check, seed 20261201)', () => {
  const base = partialSet();
  const reference = buildTemplate(base, tight).template;

  it('gives the same template when any one sample is rotated and translated (means and covariances to 1e-6 um)', () => {
    fc.assert(
      fc.property(fc.integer({ min: 0, max: base.length - 1 }), fc.integer({ min: 1, max: 1e6 }), fc.double({ min: -500, max: 500, noNaN: true }), (i, seed, shift) => {
        const r = randomRotation(createRng(seed), 3);
        const changed = base.map((s, k) => (k === i ? { ...s, coords: moved(s.coords, r, 1, [shift, -shift / 2, 7]) } : s));
        expectCellsClose(reference, buildTemplate(changed, tight).template, 6);
      }),
      { seed: 20261201, numRuns: 6 },
    );
  });

  it('changes only the size when one sample is scaled by s: means by 1 + (s - 1) rho_j / N, covariances by its square (to 1e-6)', () => {
    // rho_j = scale of the similarity taking the template's cells onto sample j: the size rule of co-register.ts
    // (mean over members of rho_i is 1; scaling sample j by s scales rho_j by s and nothing else).
    const ordinary = { ...tight, robust: 'none' as const };
    const ref = buildTemplate(base, ordinary).template;
    fc.assert(
      fc.property(fc.integer({ min: 0, max: base.length - 1 }), fc.double({ min: 0.5, max: 2, noNaN: true }), (j, s) => {
        const member = ref.members.find((m) => m.id === base[j].id)!;
        const own = member.positions.map((p) => p.coords);
        const cons = member.positions.map((p) => ref.cells.find((c) => c.label === p.label)!.mean);
        const rho = fitSimilarity(cons, own).scale;
        const lambda = 1 + ((s - 1) * rho) / base.length;
        const changed = base.map((x, k) => (k === j ? { ...x, coords: x.coords.map((p) => p.map((v) => v * s)) } : x));
        expectCellsClose(ref, buildTemplate(changed, ordinary).template, 6, lambda);
      }),
      { seed: 20261201, numRuns: 5 },
    );
  });

  it('gives bit-identical cell statistics whatever the order of the samples; members follow the input order', () => {
    fc.assert(
      fc.property(fc.integer({ min: 1, max: 1e6 }), (seed) => {
        const order = shuffle(base, createRng(seed));
        const t = buildTemplate(order, tight).template;
        expect(t.cells).toEqual(reference.cells);
        expect(t.pooledCovariance).toEqual(reference.pooledCovariance);
        expect(t.members.map((m) => m.id)).toEqual(order.map((s) => s.id));
      }),
      { seed: 20261201, numRuns: 5 },
    );
  });
});

describe('buildTemplate with hand-label errors', () => {
  it('flags a swap of two distant cells in one sample, names the likelier cells and leaves both out of the statistics', () => {
    const fx = readGpaFixture('gpa-3d');
    const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
    const labels = samples[3].labels.slice();
    [labels[0], labels[9]] = [labels[9], labels[0]];
    samples[3] = { ...samples[3], labels };
    const { template, flagged } = buildTemplate(samples);
    // On the clean fixture nothing is flagged with the default Student-t reference; with the chi-square
    // reference one label (c7 row 14, D = 5.16, D^2 = 26.6 > 16.27) is flagged by chance.
    const cleanSamples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
    expect(buildTemplate(cleanSamples).flagged).toEqual([]);
    expect(buildTemplate(cleanSamples, { flagReference: 'chi-square' }).flagged.map((f) => `${f.sample}:${f.row}`)).toEqual(['c7:14']);
    expect(flagged.filter((f) => f.sample === 'c4').map((f) => [f.sample, f.row, f.label, f.likelierLabel])).toEqual([
      ['c4', 2, 'L10', 'L01'],
      ['c4', 11, 'L01', 'L10'],
    ]);
    for (const f of flagged.filter((x) => x.sample === 'c4')) {
      expect(f.distance).toBeGreaterThan(Math.sqrt(16.266)); // chi2_3 0.999 quantile (scipy 1.10.1)
      expect(f.likelierDistance!).toBeLessThan(f.distance);
    }
    expect(flagged.length).toBe(2);
    expect(template.flagged).toEqual(flagged);
    expect(template.cells.find((c) => c.label === 'L01')!.count).toBe(samples.length - 1);
  });
});
