import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';
import { handLabelCheckSection } from '../../src/cli/build.js';
import { formatCsv } from '../../src/io/write.js';
import { parseTemplate } from '../../src/io/template-file.js';
import { buildTemplate } from '../../src/template/index.js';
import { createRng } from '../../src/random.js';
import type { Sample } from '../../src/types.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { expectSchemaValid } from '../template/helpers.js';

async function run(...args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const code = await main(['node', 'cairn', ...args], { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t) });
  return { code, stdout, stderr };
}

/** Write a sample as the CSV the readers accept: x, y, z, label. */
export function writeSampleCsv(dir: string, s: Sample): string {
  const file = join(dir, `${s.id}.csv`);
  writeFileSync(file, formatCsv(['x', 'y', 'z', 'label'], s.coords.map((p, i) => [...p, s.labels[i] ?? ''])));
  return file;
}

export function makeAnimals(n: number, seed: number, wrong = 0): Sample[] {
  const rng = createRng(seed);
  const layout = generateLayout(rng, { cells: 30, dim: 3 });
  return Array.from({ length: n }, (_, i) => generateAnimal(layout, rng, `worm${String(i + 1).padStart(2, '0')}`, { labelledFraction: 0.8, outlierFraction: 0.1, wrongLabelFraction: wrong }).sample);
}

describe('cairn build', () => {
  let dir = '';
  let files: string[] = [];
  const animals = makeAnimals(8, 41, 0.05);

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'cairn-build-'));
    files = animals.map((a) => writeSampleCsv(dir, a));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('writes a schema-valid template equal to the library result and prints members, cells, sparse cells and flags', async () => {
    const out = join(dir, 't.json');
    const r = await run('build', ...files, '-o', out, '--no-timestamp');
    expect(r.code).toBe(0);
    const t = parseTemplate(readFileSync(out, 'utf8'), out);
    expectSchemaValid(t);
    expect(t.created).toBeUndefined();
    expect(t.members.map((m) => m.id)).toEqual(animals.map((a) => a.id));
    const lib = buildTemplate(animals.map((a) => ({ ...a, source: join(dir, `${a.id}.csv`) }))).template;
    expect(t.cells.map((c) => c.count)).toEqual(lib.cells.map((c) => c.count));
    expect(r.stdout).toContain(`cairn build: wrote ${out}`);
    expect(r.stdout).toContain(`8 members, ${t.cells.length} cells (${t.cells.filter((c) => c.sparse).length} sparse: seen by fewer than 5 members)`);
    for (const f of t.flagged) expect(r.stdout).toContain(`${f.sample}:${f.row}  ${f.label}`);
  });

  it('stamps the creation time unless --no-timestamp, and gives identical bytes for identical runs without it', async () => {
    const a = join(dir, 'a.json'), b = join(dir, 'b.json'), c = join(dir, 'c.json');
    expect((await run('build', ...files, '-o', a, '--no-timestamp')).code).toBe(0);
    expect((await run('build', ...files.slice().reverse(), '-o', b, '--no-timestamp')).code).toBe(0);
    expect((await run('build', ...files, '-o', c)).code).toBe(0);
    const ta = parseTemplate(readFileSync(a, 'utf8'), a), tb = parseTemplate(readFileSync(b, 'utf8'), b);
    expect(tb.cells).toEqual(ta.cells);
    const tc = parseTemplate(readFileSync(c, 'utf8'), c);
    expect(tc.created).toMatch(/^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d/);
    expectSchemaValid(tc);
    const again = join(dir, 'again.json');
    await run('build', ...files, '-o', again, '--no-timestamp');
    expect(readFileSync(again, 'utf8')).toBe(readFileSync(a, 'utf8'));
  });

  it('prints nothing under --quiet and still writes the template', async () => {
    const out = join(dir, 'q.json');
    const r = await run('build', ...files, '-o', out, '--quiet');
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    expect(existsSync(out)).toBe(true);
  });

  it('prints a JSON summary under --json', async () => {
    const out = join(dir, 'j.json');
    const r = await run('build', ...files, '-o', out, '--json', '--min-count', '7', '--alignment', 'rigid');
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.members).toBe(8);
    expect(doc.minCount).toBe(7);
    expect(doc.converged).toBe(true);
    expect(Array.isArray(doc.iterations)).toBe(true);
    expect(parseTemplate(readFileSync(out, 'utf8'), out).settings.alignment).toBe('rigid');
  });

  it('lists a sample with too few labelled points as skipped, with the reason', async () => {
    const poor = { ...animals[0], id: 'poor', labels: animals[0].labels.map((l, i) => (i === animals[0].labels.findIndex((x) => x !== null) ? l : null)) };
    const file = writeSampleCsv(dir, poor);
    const r = await run('build', ...files, file, '-o', join(dir, 'p.json'));
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('1 skipped sample:\n  poor: has 1 labelled point; similarity alignment needs at least 3\n');
  });

  it('refuses to overwrite an input or an existing file without --force (exit 1), and writes nothing', async () => {
    const r = await run('build', ...files, '-o', files[0]);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/refusing to overwrite an input/);
    const out = join(dir, 'exists.json');
    writeFileSync(out, 'keep');
    const r2 = await run('build', ...files, '-o', out);
    expect(r2.code).toBe(1);
    expect(readFileSync(out, 'utf8')).toBe('keep');
    expect((await run('build', ...files, '-o', out, '--force')).code).toBe(0);
  });

  it('exits 1 naming the problem when fewer than two samples can be aligned', async () => {
    const out = join(dir, 'one.json');
    const r = await run('build', files[0], '-o', out);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('a template needs at least 2 samples that can be aligned, got 1');
    expect(existsSync(out)).toBe(false);
  });

  it('exits 2 on bad usage: missing -o, unknown alignment, non-numeric tolerance', async () => {
    expect((await run('build', ...files)).code).toBe(2);
    expect((await run('build', ...files, '-o', join(dir, 'x.json'), '--alignment', 'warp')).code).toBe(2);
    expect((await run('build', ...files, '-o', join(dir, 'x.json'), '--tolerance', 'small')).code).toBe(2);
  });
});

describe('handLabelCheckSection (for cairn check)', () => {
  it('lists flagged labels as sample:row lines and returns them as data', () => {
    const animals = makeAnimals(10, 43, 0.05);
    const section = handLabelCheckSection(animals);
    expect(section.key).toBe('handLabels');
    const data = section.data as { flagged: { sample: string; row: number }[] };
    expect(section.lines.length).toBeGreaterThan(0);
    for (const f of data.flagged) expect(section.lines.some((l) => l.startsWith(`${f.sample}:${f.row}  `))).toBe(true);
  });
  it('says why it did not check a single sample', () => {
    expect(handLabelCheckSection(makeAnimals(1, 44)).lines).toEqual(['not checked: needs at least 2 samples']);
  });
});
