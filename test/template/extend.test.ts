import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { addToTemplate } from '../../src/template/extend.js';
import { buildTemplate } from '../../src/template/build.js';
import { applyTransform, fitSimilarity } from '../../src/geometry/index.js';
import { serializeTemplate, parseTemplate } from '../../src/io/template-file.js';
import { createRng } from '../../src/random.js';
import type { Sample } from '../../src/types.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { expectSchemaValid } from './helpers.js';

function animals(n: number, seed: number, cells = 40): Sample[] {
  const rng = createRng(seed);
  const layout = generateLayout(rng, { cells, dim: 3 });
  return Array.from({ length: n }, (_, i) => generateAnimal(layout, rng, `a${String(i).padStart(2, '0')}`, { labelledFraction: 0.8, outlierFraction: 0.1, wrongLabelFraction: 0.02 }).sample);
}

const all = animals(24, 31);
const A = all.slice(0, 16);
const B = all.slice(16);
const built = buildTemplate(A).template;

describe('addToTemplate', () => {
  it('returns the very same template when every sample is already a member (hash match), so it serialises to the same bytes', () => {
    const renamed = A.slice(0, 3).map((s) => ({ ...s, id: `renamed-${s.id}`, source: 'elsewhere.csv' }));
    const r = addToTemplate(built, renamed);
    expect(r.template).toBe(built);
    expect(r.added).toEqual([]);
    expect(r.alreadyMembers).toEqual(renamed.map((s) => s.id));
    expect(serializeTemplate(r.template)).toBe(serializeTemplate(built));
  });

  it('is a no-op for a known member after a round trip through the file format (fast-check, seed 7)', () => {
    const reread = parseTemplate(serializeTemplate(built), 't.json');
    fc.assert(
      fc.property(fc.integer({ min: 0, max: A.length - 1 }), (i) => {
        expect(serializeTemplate(addToTemplate(reread, [A[i]]).template)).toBe(serializeTemplate(built));
      }),
      { seed: 7, numRuns: 5 },
    );
  });

  it('folds new samples into the sufficient statistics exactly: sums = old sums + new kept positions under their transforms', () => {
    const r = addToTemplate(built, B);
    expect(r.added).toEqual(B.map((s) => s.id));
    const t = r.template;
    const flagged = new Set(t.flagged.map((f) => `${f.sample}:${f.row}`));
    for (const c of t.cells) {
      const old = built.cells.find((o) => o.label === c.label);
      const sum = old ? old.sum.slice() : [0, 0, 0];
      let n = old ? old.count : 0;
      for (const m of t.members.slice(built.members.length)) {
        const y = applyTransform(m.transform, m.positions.map((p) => p.coords));
        m.positions.forEach((p, j) => {
          if (p.label !== c.label || flagged.has(`${m.id}:${p.row}`)) return;
          n++;
          y[j].forEach((v, a) => (sum[a] += v));
        });
      }
      expect(c.count).toBe(n);
      c.sum.forEach((v, a) => expect(v).toBeCloseTo(sum[a], 9));
    }
    expectSchemaValid(t);
  });

  it("gives cell means within one standard error of building from all samples at once (same cells, counts within 1)", () => {
    // Tolerance: the fold-in aligns B to A's template held fixed (its frame and means carry A's estimation noise),
    // while a joint build lets B move the consensus; the difference is a fraction of a mean's standard error
    // sqrt(Sigma_aa / n). Compared after the least-squares similarity between the two sets of means.
    const once = buildTemplate(all).template;
    const added = addToTemplate(built, B).template;
    expect(added.cells.map((c) => c.label)).toEqual(once.cells.map((c) => c.label));
    const fit = fitSimilarity(added.cells.map((c) => c.mean), once.cells.map((c) => c.mean));
    const moved = applyTransform(fit.transform, added.cells.map((c) => c.mean));
    let worst = 0;
    moved.forEach((m, k) =>
      m.forEach((v, a) => {
        const se = Math.sqrt(once.cells[k].covariance[a][a] / once.cells[k].count);
        worst = Math.max(worst, Math.abs(v - once.cells[k].mean[a]) / se);
      }),
    );
    expect(worst).toBeLessThan(1);
    added.cells.forEach((c, k) => expect(Math.abs(c.count - once.cells[k].count)).toBeLessThanOrEqual(1));
  });

  it('with refit, equals building from all samples at once (cells identical)', () => {
    const r = addToTemplate(built, B, { refit: true });
    const once = buildTemplate(all).template;
    expect(r.template.cells).toEqual(once.cells);
    expect(r.template.members.map((m) => m.id)).toEqual(all.map((s) => s.id));
    expect(r.template.flagged).toEqual(once.flagged);
  });

  it('starts a sparse cell for a label the template has not seen', () => {
    const s = B[0];
    const i = s.labels.findIndex((l) => l === null);
    const labels = s.labels.slice();
    labels[i] = 'Zzz-new';
    const r = addToTemplate(built, [{ ...s, labels }]);
    const cell = r.template.cells.find((c) => c.label === 'Zzz-new')!;
    expect(cell.count).toBe(1);
    expect(cell.sparse).toBe(true);
  });

  it('skips a sample sharing too few cells with the template, and one whose id is a member with other content', () => {
    const few = { ...B[0], id: 'few', labels: B[0].labels.map((l, i) => (i < 2 ? l : null)) };
    const clash = { ...B[1], id: A[0].id };
    const r = addToTemplate(built, [few, clash]);
    expect(r.template.members.length).toBe(built.members.length);
    expect(r.skipped).toEqual([
      { sample: A[0].id, reason: 'a sample with this id and different content is already a member or given twice' },
      { sample: 'few', reason: expect.stringMatching(/^shares [0-2] labelled cells? with the template; similarity alignment needs at least 3$/) },
    ]);
  });

  it('flags a new sample\'s swapped labels against the template and leaves them out', () => {
    const s = B[2];
    const idx = s.labels.map((l, i) => (l === null ? -1 : i)).filter((i) => i >= 0);
    const byLabel = new Map(built.cells.map((c) => [c.label, c]));
    // Swap the two labelled cells farthest apart along the template's first axis.
    const sorted = idx.filter((i) => byLabel.has(s.labels[i]!)).sort((a, b) => byLabel.get(s.labels[a]!)!.mean[0] - byLabel.get(s.labels[b]!)!.mean[0]);
    const [lo, hi] = [sorted[0], sorted[sorted.length - 1]];
    const labels = s.labels.slice();
    [labels[lo], labels[hi]] = [labels[hi], labels[lo]];
    const r = addToTemplate(built, [{ ...s, labels }]);
    const rows = r.flagged.map((f) => f.row);
    expect(rows).toContain(s.rows[lo]);
    expect(rows).toContain(s.rows[hi]);
    const f = r.flagged.find((x) => x.row === s.rows[lo])!;
    // Cells sit about 2 um apart with 1-3 um spread, so the likelier cell is a cell near the true one, not always it.
    expect(f.likelierLabel).not.toBeNull();
    expect(f.likelierDistance!).toBeLessThan(f.distance);
  });
});
