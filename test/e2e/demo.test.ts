import { describe, expect, it } from 'vitest';
import { spawnSync } from 'node:child_process';
import { cpSync, mkdtempSync, readdirSync, readFileSync, rmSync, symlinkSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parseTemplate } from '../../src/io/template-file.js';
import { parseCsvRecords } from '../../src/io/csv.js';

const root = fileURLToPath(new URL('../..', import.meta.url));

/** Rows of a CSV as objects keyed by header (our own RFC 4180 reader). */
function readCsv(path: string): Record<string, string>[] {
  const records = parseCsvRecords(readFileSync(path, 'utf8'), path);
  const [header, ...rows] = records.map((r) => r.fields);
  return rows.map((f) => Object.fromEntries(header.map((h, i) => [h, f[i] ?? ''])));
}

describe('npm run demo (the README quick start), end to end on a temporary copy', () => {
  // Runs the built CLI (npm test builds first) the way `npm run demo` does, in a copy of the
  // project so that the working tree's out/ is left alone.
  const work = mkdtempSync(join(tmpdir(), 'cairn-demo-'));
  for (const part of ['dist', 'scripts', 'demo-data', 'package.json']) cpSync(join(root, part), join(work, part), { recursive: true });
  symlinkSync(join(root, 'node_modules'), join(work, 'node_modules'), 'dir');
  const run = spawnSync(process.execPath, ['scripts/demo.mjs'], { cwd: work, encoding: 'utf8', timeout: 600_000 });

  it('exits 0 and says where to look and that proposals must be verified', () => {
    expect(run.stderr).not.toMatch(/internal error/);
    expect(run.status).toBe(0);
    expect(run.stdout).toContain('out/template.html');
    expect(run.stdout).toContain('a person must verify them');
    expect(run.stdout).toMatch(/accuracy\s+\d+\.\d%/);
  });

  it('writes a template that parses and the three HTML reports (inspect, match, evaluate)', () => {
    const template = parseTemplate(readFileSync(join(work, 'out', 'template.json'), 'utf8'), 'template.json');
    expect(template.cells.length).toBe(150);
    expect(template.members.length).toBe(12);
    for (const page of ['template.html', 'proposals.html', 'evaluation.html']) {
      const html = readFileSync(join(work, 'out', page), 'utf8');
      expect(html).toMatch(/^<!DOCTYPE html>/i);
      expect(html).toContain('<svg');
    }
    // The template and proposal pages quote the accuracy the demo's cross-validation measured.
    const accuracy = /accuracy\s+(\d+\.\d)%/.exec(run.stdout)?.[1];
    expect(accuracy).toBeDefined();
    for (const page of ['template.html', 'proposals.html']) {
      expect(readFileSync(join(work, 'out', page), 'utf8')).toContain(`gave the right label to ${accuracy}% of labelled points`);
    }
    expect(JSON.parse(readFileSync(join(work, 'out', 'evaluation.json'), 'utf8')).report.points).toBeGreaterThan(900);
  });

  it('labels the four unlabelled demo animals with at least 85% of their true cells right', () => {
    // Truth: test/fixtures/demo-truth (made by scripts/make-demo-data.ts with the demo data; never shipped in demo-data/).
    // The matcher reached 92.2% on these animals when this floor was set and 91.2% after the December 2026 speed work
    // (docs/algorithms.md); the oracle ceiling is about 97%.
    const dir = join(work, 'out', 'proposals');
    const files = readdirSync(dir).filter((f) => f.endsWith('.csv')).sort();
    expect(files).toEqual(['gk-13.csv', 'gk-14.csv', 'gk-15.csv', 'gk-16.csv']);
    let cells = 0, correct = 0;
    for (const f of files) {
      const proposals = readCsv(join(dir, f));
      const truth = readCsv(join(root, 'test', 'fixtures', 'demo-truth', f));
      expect(proposals.length).toBe(truth.length);
      proposals.forEach((p, i) => {
        expect(Number(p.x)).toBeCloseTo(Number(truth[i].x), 3);
        const confidence = Number(p.confidence);
        expect(confidence >= 0 && confidence <= 1).toBe(true);
        // The demo lists the two next most probable labels (--alternatives 2).
        expect(Object.keys(p)).toContain('alternative_2_probability');
        if (truth[i].true_label === '') return;
        cells++;
        if (p.label === truth[i].true_label) correct++;
      });
    }
    expect(cells).toBeGreaterThan(400);
    expect(correct / cells).toBeGreaterThan(0.85);
  });

  it('leaves the demo inputs byte-identical (nothing written over an input)', () => {
    for (const sub of ['labelled', 'unlabelled']) {
      const names = readdirSync(join(root, 'demo-data', sub));
      expect(readdirSync(join(work, 'demo-data', sub))).toEqual(names);
      for (const n of names) expect(readFileSync(join(work, 'demo-data', sub, n))).toEqual(readFileSync(join(root, 'demo-data', sub, n)));
    }
    rmSync(work, { recursive: true, force: true });
  });
});
