import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';
import { formatCsv } from '../../src/io/write.js';
import { parseTemplate } from '../../src/io/template-file.js';
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

function writeSampleCsv(dir: string, s: Sample): string {
  const file = join(dir, `${s.id}.csv`);
  writeFileSync(file, formatCsv(['x', 'y', 'z', 'label'], s.coords.map((p, i) => [...p, s.labels[i] ?? ''])));
  return file;
}

describe('cairn add', () => {
  let dir = '';
  let files: string[] = [];
  let base = '';

  beforeAll(async () => {
    dir = mkdtempSync(join(tmpdir(), 'cairn-add-'));
    const rng = createRng(51);
    const layout = generateLayout(rng, { cells: 30, dim: 3 });
    files = Array.from({ length: 10 }, (_, i) =>
      writeSampleCsv(dir, generateAnimal(layout, rng, `pup${i + 1}`, { labelledFraction: 0.8, outlierFraction: 0.1, wrongLabelFraction: 0.03 }).sample),
    );
    base = join(dir, 'base.json');
    const r = await run('build', ...files.slice(0, 7), '-o', base);
    expect(r.code).toBe(0);
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('writes a byte-identical template (creation time included) when every sample is already a member', async () => {
    const out = join(dir, 'same.json');
    const r = await run('add', base, files[0], files[3], '-o', out);
    expect(r.code).toBe(0);
    expect(readFileSync(out, 'utf8')).toBe(readFileSync(base, 'utf8'));
    expect(r.stdout).toContain('0 added, 2 already members (pup1, pup4); template unchanged');
  });

  it('folds new samples in, keeps the old members and their transforms, and validates against the schema', async () => {
    const out = join(dir, 'grown.json');
    const r = await run('add', base, ...files.slice(5), '-o', out, '--json');
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.added).toEqual(['pup8', 'pup9', 'pup10']);
    expect(doc.alreadyMembers).toEqual(['pup6', 'pup7']);
    const before = parseTemplate(readFileSync(base, 'utf8'), base);
    const after = parseTemplate(readFileSync(out, 'utf8'), out);
    expectSchemaValid(after);
    expect(after.members.slice(0, 7)).toEqual(before.members);
    expect(after.members.map((m) => m.id).slice(7)).toEqual(['pup8', 'pup9', 'pup10']);
    const total = (t: typeof after) => t.cells.reduce((n, c) => n + c.count, 0);
    expect(total(after)).toBeGreaterThan(total(before));
  });

  it('with --refit re-runs co-registration and gives the cells of a fresh build of all samples', async () => {
    const out = join(dir, 'refit.json');
    const fresh = join(dir, 'fresh.json');
    expect((await run('add', base, ...files.slice(7), '-o', out, '--refit', '--no-timestamp')).code).toBe(0);
    expect((await run('build', ...files, '-o', fresh, '--no-timestamp')).code).toBe(0);
    const a = parseTemplate(readFileSync(out, 'utf8'), out);
    const b = parseTemplate(readFileSync(fresh, 'utf8'), fresh);
    expect(a.cells).toEqual(b.cells);
    expect(a.flagged).toEqual(b.flagged);
  });

  it('refuses to write over the input template (exit 1)', async () => {
    const before = readFileSync(base, 'utf8');
    const r = await run('add', base, files[8], '-o', base, '--force');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/refusing to overwrite an input/);
    expect(readFileSync(base, 'utf8')).toBe(before);
  });

  it('exits 1 naming the file when the template is not a template', async () => {
    const bad = join(dir, 'bad.json');
    writeFileSync(bad, '{"format": "something-else"}');
    const r = await run('add', bad, files[8], '-o', join(dir, 'never.json'));
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(bad);
  });
});
