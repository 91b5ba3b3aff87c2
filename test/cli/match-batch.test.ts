/**
 * `cairn match` on a batch: streaming with bounded work in flight, the same
 * bytes for --jobs 1 and --jobs 2 under --no-timestamp, a bad file met
 * mid-run reported as that sample's error, checks made before any work, the
 * --html page, and SIGINT leaving every output complete or absent (the built
 * CLI in a child process).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { spawn, spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { main } from '../../src/cli/main.js';
import { parseCsvRecords } from '../../src/io/csv.js';
import { serializeTemplate } from '../../src/io/template-file.js';
import { createRng } from '../../src/random.js';
import { generateAnimal, generateLayout, writeSampleCsv, type Layout } from '../support/animals.js';
import { templateFromTraining } from '../match/support.js';

async function run(...args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const code = await main(['node', 'cairn', ...args], { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t) });
  return { code, stdout, stderr };
}

/** Every file of a folder, name -> bytes. */
function folderBytes(dir: string): Map<string, string> {
  return new Map(readdirSync(dir).sort().map((f) => [f, readFileSync(join(dir, f), 'latin1')]));
}

describe('cairn match on a batch', { timeout: 180_000 }, () => {
  let dir = '';
  let templateFile = '';
  let layout: Layout;
  const files: string[] = [];

  /** Write `count` unlabelled animals as s<k>.csv under `sub`. */
  function writeAnimals(sub: string, count: number, seed: number): string[] {
    const rng = createRng(seed);
    mkdirSync(join(dir, sub), { recursive: true });
    const out: string[] = [];
    for (let k = 0; k < count; k++) {
      const a = generateAnimal(layout, rng, `s${k}`, { missingFraction: 0.1, outlierFraction: 0.1, jitterScale: 0.4 }).sample;
      const file = join(dir, sub, `s${String(k).padStart(2, '0')}.csv`);
      writeFileSync(file, writeSampleCsv({ ...a, labels: a.labels.map(() => null) }));
      out.push(file);
    }
    return out;
  }

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'cairn-match-batch-'));
    const rng = createRng(4242);
    layout = generateLayout(rng, { cells: 30, dim: 3 });
    templateFile = join(dir, 'template.json');
    writeFileSync(templateFile, serializeTemplate(templateFromTraining(layout, rng, { members: 8, animal: { jitterScale: 0.4 } })));
    files.push(...writeAnimals('in', 5, 99));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('gives byte-identical folders (CSVs and summary.json) for --jobs 1 and --jobs 2 under --no-timestamp', async () => {
    const a = join(dir, 'det1');
    const b = join(dir, 'det2');
    const common = ['--seed', '3', '--max-trials', '40', '--no-timestamp'];
    expect((await run('match', templateFile, ...files, '-o', a, ...common, '--jobs', '1')).code).toBe(0);
    expect((await run('match', templateFile, ...files, '-o', b, ...common, '--jobs', '2')).code).toBe(0);
    const fa = folderBytes(a);
    const fb = folderBytes(b);
    expect([...fa.keys()]).toEqual(['s00.csv', 's01.csv', 's02.csv', 's03.csv', 's04.csv', 'summary.json']);
    expect([...fb.keys()]).toEqual([...fa.keys()]);
    for (const [name, bytes] of fa) expect(fb.get(name), name).toBe(bytes);
    const summary = JSON.parse(fa.get('summary.json') as string);
    expect(summary.created).toBeUndefined();
    expect(summary.samples.every((s: Record<string, unknown>) => !('seconds' in s))).toBe(true);
    // Outputs are named relative to the folder, so the folder can move.
    expect(summary.samples.map((s: { output: string }) => s.output)).toEqual(['s00.csv', 's01.csv', 's02.csv', 's03.csv', 's04.csv']);
  });

  it('stamps the creation time and per-sample seconds without --no-timestamp', async () => {
    const out = join(dir, 'stamped');
    expect((await run('match', templateFile, files[0], '-o', out, '--max-trials', '20')).code).toBe(0);
    const summary = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    expect(Number.isNaN(Date.parse(summary.created))).toBe(false);
    expect(typeof summary.samples[0].seconds).toBe('number');
  });

  it('reports a file that turns out bad mid-run as that sample’s error with file, row and column, matches the rest and exits 1', async () => {
    const bad = join(dir, 'in', 'zz-bad.csv');
    writeFileSync(bad, 'x,y,z,label\n1,2,3,\n4,abc,6,\n7,8,9,\n');
    const out = join(dir, 'badrun');
    const r = await run('match', templateFile, files[0], bad, files[1], '-o', out, '--max-trials', '20', '--no-timestamp');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`zz-bad (${bad}:3: column "y": `);
    const summary = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    expect(summary.samples.map((s: { id: string }) => s.id)).toEqual(['s00', 'zz-bad', 's01']);
    expect(summary.samples[1].output).toBeNull();
    expect(summary.samples[1].error).toContain(`${bad}:3: column "y"`);
    expect(summary.samples[0].error).toBeNull();
    expect(summary.samples[2].error).toBeNull();
    expect(readdirSync(out).sort()).toEqual(['s00.csv', 's01.csv', 'summary.json']);
    rmSync(bad);
  });

  it('refuses two files with the same sample id before any work, writing nothing', async () => {
    mkdirSync(join(dir, 'other'), { recursive: true });
    const twin = join(dir, 'other', 's00.csv');
    writeFileSync(twin, readFileSync(files[0]));
    const out = join(dir, 'dup');
    const r = await run('match', templateFile, files[0], files[1], twin, '-o', out);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain('two samples are named "s00"');
    expect(existsSync(out)).toBe(false);
  });

  it('refuses a sample whose header gives another dimension than the template before any work', async () => {
    const flat = join(dir, 'flat.csv');
    writeFileSync(flat, 'x,y,label\n1,2,\n3,4,\n5,6,\n');
    const out = join(dir, 'dim');
    const r = await run('match', templateFile, files[0], flat, '-o', out);
    expect(r.code).toBe(2);
    expect(r.stderr).toContain(`sample flat (${flat}) is 2-D but the template is 3-D`);
    expect(existsSync(out)).toBe(false);
  });

  it('refuses an existing output in a long batch before matching any sample', async () => {
    const out = join(dir, 'exists');
    mkdirSync(out);
    writeFileSync(join(out, 's03.csv'), 'keep me\n');
    const r = await run('match', templateFile, ...files, '-o', out, '--max-trials', '20');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('s03.csv: exists; use --force to overwrite');
    expect(readdirSync(out)).toEqual(['s03.csv']);
    expect(readFileSync(join(out, 's03.csv'), 'utf8')).toBe('keep me\n');
  });

  it('writes a self-contained --html page: cautions, summary, a table row per sample, one figure per sample up to 12, and says when more were matched', async () => {
    const many = writeAnimals('many', 13, 7);
    const out = join(dir, 'html');
    const page = join(dir, 'match.html');
    const r = await run('match', templateFile, ...many, '-o', out, '--max-trials', '15', '--jobs', '2', '--html', page, '--no-timestamp');
    expect(r.code).toBe(0);
    const html = readFileSync(page, 'utf8');
    expect(html).toContain('a person must check every proposed label');
    expect(html).toContain('has not been measured on this lab');
    expect(html.indexOf('a person must check')).toBeLessThan(html.indexOf('<figure'));
    expect((html.match(/<figure>/g) ?? []).length).toBe(12);
    expect(html).toContain('Figures are shown for the first 12 of 13 matched samples');
    expect(html).toContain('>s12<');
    expect(html).not.toMatch(/(src|href)="https?:/);
    const summary = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    const proposed = summary.samples.reduce((a: number, s: { proposed: number }) => a + s.proposed, 0);
    expect(html).toContain(`<dd>${proposed} (`);
  });

  it('quotes the accuracy measured by `cairn evaluate --json` on the --html page with --accuracy-from', async () => {
    // Labelled samples for evaluate (2 folds, few trials: the figure only has to be quoted, not to be good).
    const rng = createRng(31);
    mkdirSync(join(dir, 'lab'), { recursive: true });
    const labelled = Array.from({ length: 4 }, (_, k) => {
      const file = join(dir, 'lab', `l${k}.csv`);
      writeFileSync(file, writeSampleCsv(generateAnimal(layout, rng, `l${k}`, { jitterScale: 0.4, labelledFraction: 1 }).sample));
      return file;
    });
    const ev = await run('evaluate', ...labelled, '--folds', '2', '--max-trials', '20', '--json');
    expect(ev.stderr).toBe('');
    expect(ev.code).toBe(0);
    const evalFile = join(dir, 'eval.json');
    writeFileSync(evalFile, ev.stdout);
    const report = JSON.parse(ev.stdout).report;
    const page = join(dir, 'match-acc.html');
    const r = await run('match', templateFile, files[0], '-o', join(dir, 'acc'), '--max-trials', '15', '--html', page, '--accuracy-from', evalFile);
    expect(r.code).toBe(0);
    const html = readFileSync(page, 'utf8');
    expect(html).toContain(`gave the right label to ${(100 * report.accuracy).toFixed(1)}% of labelled points`);
    expect(html).toContain(`2-fold, 4 samples, ${report.points} labelled points`);
    expect(html).not.toContain('has not been measured on this lab');
  });

  it('refuses --accuracy-from without --html, and a file that is not evaluate output, naming it', async () => {
    expect((await run('match', templateFile, files[0], '-o', join(dir, 'x1'), '--accuracy-from', templateFile)).code).toBe(2);
    const r = await run('match', templateFile, files[0], '-o', join(dir, 'x2'), '--html', join(dir, 'x2.html'), '--accuracy-from', templateFile);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`${templateFile}: has no "report" object`);
    expect(existsSync(join(dir, 'x2'))).toBe(false);
  });
});

describe('cairn match interrupted by SIGINT (built CLI)', () => {
  const root = resolve(import.meta.dirname, '../..');
  let dir = '';

  beforeAll(() => {
    // The child runs the compiled CLI; build it (type errors elsewhere do not stop tsc from emitting).
    spawnSync(process.execPath, [join(root, 'node_modules/typescript/bin/tsc'), '-p', root], { encoding: 'utf8' });
    dir = mkdtempSync(join(tmpdir(), 'cairn-match-sigint-'));
  }, 240_000);
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('leaves each CSV complete (equal to a clean run’s) or absent, no temporary files and no summary.json', async () => {
    expect(existsSync(join(root, 'dist/cli/main.js'))).toBe(true);
    const rng = createRng(555);
    const layout = generateLayout(rng, { cells: 40, dim: 3 });
    const templateFile = join(dir, 'template.json');
    writeFileSync(templateFile, serializeTemplate(templateFromTraining(layout, rng, { members: 8 })));
    mkdirSync(join(dir, 'in'));
    const files = Array.from({ length: 30 }, (_, k) => {
      const a = generateAnimal(layout, rng, `d${k}`, { missingFraction: 0.1, outlierFraction: 0.1 }).sample;
      const file = join(dir, 'in', `d${String(k).padStart(2, '0')}.csv`);
      writeFileSync(file, writeSampleCsv({ ...a, labels: a.labels.map(() => null) }));
      return file;
    });
    const args = ['match', templateFile, ...files, '--seed', '8', '--max-trials', '100', '--no-timestamp'];
    const out = join(dir, 'interrupted');
    const child = spawn(process.execPath, [join(root, 'bin/cairn.js'), ...args, '-o', out, '--jobs', '2'], { stdio: ['ignore', 'pipe', 'pipe'] });
    let stderr = '';
    child.stderr.on('data', (d) => (stderr += String(d)));
    const exit = new Promise<number | null>((done) => child.on('exit', (code) => done(code)));
    let sent = false;
    while (!sent && child.exitCode === null) {
      if (existsSync(out) && readdirSync(out).some((f) => f.endsWith('.csv'))) {
        child.kill('SIGINT');
        sent = true;
      } else await new Promise((r) => setTimeout(r, 10));
    }
    const code = await exit;
    expect(sent).toBe(true);
    expect(code).toBe(1);
    expect(stderr).toContain('interrupted;');
    const present = readdirSync(out);
    expect(present.filter((f) => f.startsWith('.cairn-tmp'))).toEqual([]);
    expect(present).not.toContain('summary.json');
    const csvs = present.filter((f) => f.endsWith('.csv'));
    expect(csvs.length).toBeGreaterThan(0);
    expect(csvs.length).toBeLessThan(30);

    const clean = join(dir, 'clean');
    expect((await run(...args, '-o', clean)).code).toBe(0);
    for (const f of csvs) {
      const text = readFileSync(join(out, f), 'utf8');
      expect(text, f).toBe(readFileSync(join(clean, f), 'utf8'));
      // Complete: parses, one row per input point plus the header.
      const records = parseCsvRecords(text, f);
      expect(records.length).toBe(readFileSync(join(dir, 'in', f), 'utf8').trim().split('\n').length);
    }
  }, 240_000);
});
