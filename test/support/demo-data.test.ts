import { describe, it, expect } from 'vitest';
import { readFileSync, readdirSync } from 'node:fs';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { buildDemoData, type ManifestEntry } from '../../scripts/make-demo-data.js';

const root = resolve(dirname(fileURLToPath(import.meta.url)), '..', '..');
const read = (path: string): string => readFileSync(join(root, path), 'utf8');

/** Splits a committed demo CSV (no quoting in these files) into header and rows. */
function table(path: string): { header: string[]; rows: string[][] } {
  const lines = read(path).trimEnd().split('\n');
  return { header: lines[0].split(','), rows: lines.slice(1).map((l) => l.split(',')) };
}

const manifest = JSON.parse(read('test/fixtures/demo-truth/manifest.json')) as { animals: ManifestEntry[] };
const layout = JSON.parse(read('test/fixtures/demo-truth/layout.json')) as { cells: { label: string }[] };

describe('demo data (scripts/make-demo-data.ts)', () => {
  it('is exactly what the generator script produces from its fixed seed', () => {
    const { files } = buildDemoData();
    expect(files).toHaveLength(12 + 4 + 16 + 2);
    for (const f of files) expect(read(f.path), f.path).toBe(f.content);
    expect(readdirSync(join(root, 'demo-data', 'labelled')).filter((n) => n.endsWith('.csv'))).toHaveLength(12);
    expect(readdirSync(join(root, 'demo-data', 'unlabelled')).filter((n) => n.endsWith('.csv'))).toHaveLength(4);
  });

  it('has 12 animals with 40-80% of true cells hand labelled and 4 with an empty label column', () => {
    const labelled = manifest.animals.filter((a) => a.file.includes('/labelled/'));
    const unlabelled = manifest.animals.filter((a) => a.file.includes('/unlabelled/'));
    expect(labelled).toHaveLength(12);
    expect(unlabelled).toHaveLength(4);
    for (const a of labelled) {
      const { header, rows } = table(a.file);
      expect(header).toEqual(['x', 'y', 'z', 'label', 'nuclear_intensity', 'nuclear_volume']);
      const share = rows.filter((r) => r[3] !== '').length / a.cellsPresent;
      expect(share).toBeGreaterThanOrEqual(0.39);
      expect(share).toBeLessThanOrEqual(0.81);
    }
    for (const a of unlabelled) expect(table(a.file).rows.every((r) => r[3] === '')).toBe(true);
  });

  it('keeps truth row by row beside each demo file: same coordinates, hand labels true except the listed wrong ones', () => {
    const names = new Set(layout.cells.map((c) => c.label));
    expect(names.size).toBe(150);
    let wrongTotal = 0;
    for (const a of manifest.animals) {
      const demo = table(a.file).rows;
      const truth = table(`test/fixtures/demo-truth/${a.id}.csv`);
      expect(truth.header).toEqual(['x', 'y', 'z', 'true_label']);
      expect(truth.rows).toHaveLength(demo.length);
      const wrongRows = new Map(a.wrongHandLabels.map((w) => [w.row, w]));
      wrongTotal += wrongRows.size;
      demo.forEach((r, i) => {
        const t = truth.rows[i];
        expect(t.slice(0, 3)).toEqual(r.slice(0, 3));
        if (t[3] !== '') expect(names.has(t[3])).toBe(true);
        for (const v of [...r.slice(0, 3), r[4], r[5]]) expect(Number.isFinite(Number(v))).toBe(true);
        if (r[3] === '') return;
        const wrong = wrongRows.get(i + 2);
        if (wrong) {
          expect(r[3]).toBe(wrong.label);
          expect(t[3]).toBe(wrong.trueLabel);
          expect(r[3]).not.toBe(t[3]);
        } else expect(r[3]).toBe(t[3]);
      });
      expect(truth.rows.filter((r) => r[3] === '')).toHaveLength(a.outliers);
      expect(a.cellsMissing).toBeGreaterThan(0);
      expect(a.outliers).toBeGreaterThan(0);
    }
    // "A few" wrong hand labels: 1-5% of all hand labels.
    const hand = manifest.animals.reduce((s, a) => s + a.handLabels, 0);
    expect(wrongTotal / hand).toBeGreaterThan(0.01);
    expect(wrongTotal / hand).toBeLessThan(0.05);
  });
});
