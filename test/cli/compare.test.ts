import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'csv-parse/sync';
import { main } from '../../src/cli/main.js';
import { compareTemplates } from '../../src/compare/compare.js';
import { serializeTemplate } from '../../src/io/template-file.js';
import { createRng } from '../../src/random.js';
import { randomSimilarity, simulateTemplate, syntheticLayout } from '../compare/synthetic.js';

async function run(...args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const code = await main(['node', 'cairn', ...args], {
    stdout: (t) => (stdout += t),
    stderr: (t) => (stderr += t),
  });
  return { code, stdout, stderr };
}

describe('cairn compare', () => {
  const rng = createRng(2026);
  const layout = syntheticLayout(rng, 20);
  const displaced = new Map(layout.labels.slice(0, 2).map((l) => [l, [9, 0, 0]]));
  const a = simulateTemplate(rng, layout, { animals: 12 });
  const full = simulateTemplate(rng, layout, { animals: 12, displaced, frame: randomSimilarity(rng, 3, 1.08) });
  const b = { ...full, cells: full.cells.slice(0, 19) }; // the last cell only in A
  let dir = '';
  let fileA = '';
  let fileB = '';

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'cairn-compare-'));
    fileA = join(dir, 'strain-a.json');
    fileB = join(dir, 'strain-b.json');
    writeFileSync(fileA, serializeTemplate(a));
    writeFileSync(fileB, serializeTemplate(b));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('prints the table sorted by q-value with the displaced cells first, the cell only in A, and the permutation test', async () => {
    const r = await run('compare', fileA, fileB, '--permutations', '49');
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    const lines = r.stdout.split('\n');
    const header = lines.findIndex((l) => l.startsWith('cell '));
    const firstTwo = lines.slice(header + 1, header + 3).map((l) => l.split(/\s+/)[0]).sort();
    expect(firstTwo).toEqual(layout.labels.slice(0, 2).sort());
    expect(r.stdout).toContain(`only in A: ${layout.labels[19]}`);
    expect(r.stdout).toContain('permutation test on members\' positions: p = ');
    expect(r.stdout).toContain('(49 permutations, seed 1)');
    expect(r.stdout).toContain('note: A cell called different is a proposal to look at in the images');
  });

  it('prints CSV whose rows read back to the library values at full precision', async () => {
    const r = await run('compare', fileA, fileB, '--csv', '--permutations', '0');
    expect(r.code).toBe(0);
    const rows = parse(r.stdout, { columns: true }) as Record<string, string>[];
    const expected = compareTemplates(a, b, { permutations: 0 });
    expect(rows.length).toBe(expected.cells.length);
    rows.forEach((row, i) => {
      expect(row.label).toBe(expected.cells[i].label);
      expect(Number(row.q_value)).toBe(expected.cells[i].qValue);
      expect(Number(row.length_um)).toBe(expected.cells[i].length);
      expect(Number(row.dx_um)).toBe(expected.cells[i].displacement[0]);
    });
  });

  it('prints JSON with the seed; the same seed gives the same permutation p-value', async () => {
    const r1 = await run('compare', fileA, fileB, '--json', '--permutations', '29', '--seed', '7');
    const r2 = await run('compare', fileA, fileB, '--json', '--permutations', '29', '--seed', '7');
    expect(r1.code).toBe(0);
    const doc = JSON.parse(r1.stdout);
    expect(doc.seed).toBe(7);
    expect(doc.onlyInA).toEqual([layout.labels[19]]);
    expect(doc.shape.permutation.permutations).toBe(29);
    expect(JSON.parse(r2.stdout).shape.permutation.pValue).toBe(doc.shape.permutation.pValue);
  });

  it('aligns without scale under --no-scale', async () => {
    const r = await run('compare', fileA, fileB, '--json', '--no-scale', '--permutations', '0');
    const doc = JSON.parse(r.stdout);
    expect(doc.alignment.kind).toBe('rigid');
    expect(doc.alignment.scale).toBeCloseTo(1, 12);
  });

  it('writes the SVG figure and the HTML report, and refuses to overwrite them without --force', async () => {
    const svg = join(dir, 'fig.svg');
    const html = join(dir, 'report.html');
    const r = await run('compare', fileA, fileB, '--svg', svg, '--html', html, '--permutations', '0');
    expect(r.code).toBe(0);
    expect(r.stderr).toBe(`cairn compare: wrote ${svg}\ncairn compare: wrote ${html}\n`);
    expect(readFileSync(svg, 'utf8')).toMatch(/^<svg /);
    expect(readFileSync(html, 'utf8')).toContain('<!DOCTYPE html>');
    const again = await run('compare', fileA, fileB, '--svg', svg, '--permutations', '0');
    expect(again.code).toBe(1);
    expect(again.stderr).toContain('exists');
  });

  it('refuses to write the figure over an input file, leaving it unchanged', async () => {
    const before = readFileSync(fileA, 'utf8');
    const r = await run('compare', fileA, fileB, '--svg', fileA, '--force', '--permutations', '0');
    expect(r.code).toBe(1);
    expect(readFileSync(fileA, 'utf8')).toBe(before);
  });

  it('exits 2 on bad usage: --csv with --json, or an unknown test form', async () => {
    expect((await run('compare', fileA, fileB, '--csv', '--json')).code).toBe(2);
    expect((await run('compare', fileA, fileB, '--test', 'welch')).code).toBe(2);
    expect((await run('compare', fileA, fileB, '--level', '1.5')).code).toBe(2);
  });

  it('exits 1 naming the file when a template is missing', async () => {
    const missing = join(dir, 'nope.json');
    const r = await run('compare', fileA, missing);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(missing);
    expect(existsSync(missing)).toBe(false);
  });
});
