import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';
import { serializeTemplate } from '../../src/io/template-file.js';
import { formatCsv } from '../../src/io/write.js';
import { createRng } from '../../src/random.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { templateFromTraining } from '../match/support.js';

async function run(...args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const code = await main(['node', 'cairn', ...args], { stdout: (t) => (stdout += t), stderr: (t) => (stderr += t) });
  return { code, stdout, stderr };
}

describe('cairn match', () => {
  let dir = '';
  let templateFile = '';
  const sampleFiles: string[] = [];
  const truths: (string | null)[][] = [];

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'cairn-match-'));
    const rng = createRng(777);
    const layout = generateLayout(rng, { cells: 40, dim: 3 });
    const template = templateFromTraining(layout, rng, { members: 10, animal: { jitterScale: 0.3 } });
    templateFile = join(dir, 'template.json');
    writeFileSync(templateFile, serializeTemplate(template));
    for (let s = 0; s < 3; s++) {
      const a = generateAnimal(layout, rng, `probe${s}`, { outlierFraction: 0.1, missingFraction: 0.1, jitterScale: 0.3 });
      const file = join(dir, `probe${s}.csv`);
      writeFileSync(file, formatCsv(['x', 'y', 'z', 'label', 'gfp'], a.sample.coords.map((p, i) => [...p, '', i / 10])));
      sampleFiles.push(file);
      truths.push(a.truth);
    }
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('writes one CSV per sample with the input rows in order plus label, confidence and distance, and summary.json', async () => {
    const out = join(dir, 'out1');
    const r = await run('match', templateFile, ...sampleFiles, '-o', out, '--seed', '5', '--max-trials', '200');
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout).toContain('Labels are proposals to verify');
    const lines = readFileSync(join(out, 'probe0.csv'), 'utf8').trim().split('\n');
    expect(lines[0]).toBe('row,x,y,z,gfp,label,confidence,distance');
    const input = readFileSync(sampleFiles[0], 'utf8').trim().split('\n');
    expect(lines).toHaveLength(input.length);
    // Input order kept: row numbers 2..n+1 and the feature column carried along.
    lines.slice(1).forEach((line, i) => {
      const f = line.split(',');
      expect(Number(f[0])).toBe(i + 2);
      expect(Number(f[4])).toBeCloseTo(i / 10, 12);
    });
    // Most true cells get their true label (easy setting: jitter sd 0.3-0.9 um).
    let correct = 0, total = 0;
    lines.slice(1).forEach((line, i) => {
      const label = line.split(',')[5];
      if (truths[0][i] === null) return;
      total++;
      if (label === truths[0][i]) correct++;
    });
    expect(correct / total).toBeGreaterThanOrEqual(0.8);
    const summary = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    expect(summary.format).toBe('cairn-match');
    expect(summary.samples.map((s: { id: string }) => s.id)).toEqual(['probe0', 'probe1', 'probe2']);
    expect(summary.samples[0].transform.linear).toHaveLength(3);
    for (const e of summary.samples) expect(typeof e.bend).toBe('boolean');
  });

  it('leaves the bend correction out under --no-bend', async () => {
    const out = join(dir, 'out-nobend');
    const r = await run('match', templateFile, ...sampleFiles, '-o', out, '--seed', '5', '--max-trials', '100', '--no-bend');
    expect(r.code).toBe(0);
    const summary = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    expect(summary.samples.map((e: { bend: boolean }) => e.bend)).toEqual([false, false, false]);
  });

  it('records the labelling rule in summary.json: map by default, mea under --assign mea; refuses another', async () => {
    const outMap = join(dir, 'out-map');
    const outMea = join(dir, 'out-mea');
    expect((await run('match', templateFile, sampleFiles[0], '-o', outMap, '--seed', '5', '--max-trials', '100')).code).toBe(0);
    expect((await run('match', templateFile, sampleFiles[0], '-o', outMea, '--seed', '5', '--max-trials', '100', '--assign', 'mea')).code).toBe(0);
    expect(JSON.parse(readFileSync(join(outMap, 'summary.json'), 'utf8')).assignment).toBe('map');
    expect(JSON.parse(readFileSync(join(outMea, 'summary.json'), 'utf8')).assignment).toBe('mea');
    // Same pose search (same seed): the 'mea' labels' summed confidence is at least the default's.
    const sum = (out: string) =>
      readFileSync(join(out, 'probe0.csv'), 'utf8')
        .trim()
        .split('\n')
        .slice(1)
        .map((l) => l.split(','))
        .reduce((a, f) => a + (f[5] === '' ? 0 : Number(f[6])), 0);
    expect(sum(outMea)).toBeGreaterThanOrEqual(sum(outMap) - 1e-9);
    expect((await run('match', templateFile, sampleFiles[0], '-o', join(dir, 'x'), '--assign', 'best')).code).toBe(2);
  });

  it('reports crowded points (a dense clump beside the head) in summary.json and on stdout', async () => {
    const rng = createRng(778);
    const layout = generateLayout(rng, { cells: 40, dim: 3 });
    const template = templateFromTraining(layout, rng, { members: 10, animal: { jitterScale: 0.3 } });
    const tfile = join(dir, 'template-crowd.json');
    writeFileSync(tfile, serializeTemplate(template));
    const a = generateAnimal(layout, rng, 'clumped', { outlierFraction: 0.4, clusteredOutlierShare: 1, missingFraction: 0.1, jitterScale: 0.3 });
    const file = join(dir, 'clumped.csv');
    writeFileSync(file, formatCsv(['x', 'y', 'z'], a.sample.coords.map((p) => [...p])));
    const out = join(dir, 'out-crowd');
    const r = await run('match', tfile, file, sampleFiles[0], '-o', out, '--seed', '5', '--max-trials', '100');
    expect(r.code).toBe(0);
    const summary = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8'));
    const [clumped, plain] = summary.samples as { crowded: number }[];
    expect(clumped.crowded).toBeGreaterThanOrEqual(5);
    expect(plain.crowded).toBe(0);
    expect(r.stdout).toContain(`crowded points left out of the pose search`);
    expect(r.stdout).toContain(`clumped ${clumped.crowded}`);
    expect(r.stdout).not.toContain('probe0 0');
  });

  it('reports the pose margin in summary.json and names samples whose orientation is not settled', async () => {
    // A uniformly packed 190-cell head at full jitter (sd 1-3 um): its roll is not settled by the
    // positions (the same head as in test/match/match-sample.test.ts, "pose margin").
    const rng = createRng(32);
    const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement: 'uniform' });
    const template = templateFromTraining(layout, rng, { members: 25 });
    const tfile = join(dir, 'template-uniform.json');
    writeFileSync(tfile, serializeTemplate(template));
    const a = generateAnimal(layout, rng, 'round-head', { outlierFraction: 0.2, missingFraction: 0.15 });
    const file = join(dir, 'round-head.csv');
    writeFileSync(file, formatCsv(['x', 'y', 'z'], a.sample.coords.map((p) => [...p])));
    const out = join(dir, 'out-margin');
    const r = await run('match', tfile, file, '-o', out, '--seed', '1');
    expect(r.code).toBe(0);
    const [entry] = JSON.parse(readFileSync(join(out, 'summary.json'), 'utf8')).samples as { poseMargin: number }[];
    expect(typeof entry.poseMargin).toBe('number');
    expect(entry.poseMargin).toBeLessThan(10);
    expect(r.stdout).toContain('orientation not settled');
    expect(r.stdout).toContain(`round-head ${entry.poseMargin.toFixed(1)}`);
  });

  it('gives byte-identical CSVs with --jobs 2 and --jobs 1', async () => {
    const a = join(dir, 'serial');
    const b = join(dir, 'parallel');
    expect((await run('match', templateFile, ...sampleFiles, '-o', a, '--seed', '9', '--max-trials', '150')).code).toBe(0);
    expect((await run('match', templateFile, ...sampleFiles, '-o', b, '--seed', '9', '--max-trials', '150', '--jobs', '2')).code).toBe(0);
    for (const id of ['probe0', 'probe1', 'probe2']) {
      expect(readFileSync(join(b, `${id}.csv`), 'utf8')).toBe(readFileSync(join(a, `${id}.csv`), 'utf8'));
    }
  });

  it('refuses to overwrite existing outputs without --force and writes nothing', async () => {
    const out = join(dir, 'again');
    expect((await run('match', templateFile, sampleFiles[0], '-o', out, '--max-trials', '100')).code).toBe(0);
    const before = readFileSync(join(out, 'probe0.csv'), 'utf8');
    const r = await run('match', templateFile, sampleFiles[0], sampleFiles[1], '-o', out, '--max-trials', '100');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('exists; use --force to overwrite');
    expect(existsSync(join(out, 'probe1.csv'))).toBe(false);
    expect(readFileSync(join(out, 'probe0.csv'), 'utf8')).toBe(before);
    expect((await run('match', templateFile, sampleFiles[0], '-o', out, '--max-trials', '100', '--force')).code).toBe(0);
  });

  it('lists the most probable other labels per point with --alternatives 2, and refuses more than 2', async () => {
    const out = join(dir, 'alternatives');
    const r = await run('match', templateFile, sampleFiles[0], '-o', out, '--seed', '5', '--max-trials', '100', '--alternatives', '2');
    expect(r.code).toBe(0);
    const rows = readFileSync(join(out, 'probe0.csv'), 'utf8').trim().split('\n').map((l) => l.split(','));
    expect(rows[0]).toEqual(['row', 'x', 'y', 'z', 'gfp', 'label', 'confidence', 'distance', 'alternative_1', 'alternative_1_probability', 'alternative_2', 'alternative_2_probability']);
    let listed = 0;
    for (const f of rows.slice(1)) {
      const [label, confidence, alt1, p1, alt2, p2] = [f[5], Number(f[6]), f[8], f[9], f[10], f[11]];
      for (const [alt, p] of [[alt1, p1], [alt2, p2]]) {
        if (alt === '') continue;
        listed++;
        expect(alt).not.toBe(label);
        expect(Number(p)).toBeGreaterThanOrEqual(0);
      }
      if (alt1 !== '' && alt2 !== '') {
        expect(alt1).not.toBe(alt2);
        expect(Number(p1)).toBeGreaterThanOrEqual(Number(p2));
      }
      // Posterior probabilities of different labels for one point sum to at most 1.
      if (label !== '') expect(confidence + Number(p1 || 0) + Number(p2 || 0)).toBeLessThanOrEqual(1 + 1e-9);
    }
    expect(listed).toBeGreaterThan(0);
    // The proposals themselves are those of a run without the option.
    const plainOut = join(dir, 'alternatives-plain');
    expect((await run('match', templateFile, sampleFiles[0], '-o', plainOut, '--seed', '5', '--max-trials', '100')).code).toBe(0);
    const plain = readFileSync(join(plainOut, 'probe0.csv'), 'utf8').trim().split('\n');
    expect(rows.map((f) => f.slice(0, 8).join(','))).toEqual(plain);
    const refused = await run('match', templateFile, sampleFiles[0], '-o', join(dir, 'alternatives3'), '--alternatives', '3');
    expect(refused.code).toBe(2);
    expect(refused.stderr).toContain('--alternatives must be from 0 to 2');
    expect(existsSync(join(dir, 'alternatives3'))).toBe(false);
  });

  it('exits 2 on an unknown method and on a bad hit radius', async () => {
    expect((await run('match', templateFile, sampleFiles[0], '-o', join(dir, 'x'), '--method', 'guess')).code).toBe(2);
    const r = await run('match', templateFile, sampleFiles[0], '-o', join(dir, 'x'), '--hit-radius', '-1');
    expect(r.code).toBe(2);
  });

  it('prints the summary as JSON under --json', async () => {
    const r = await run('match', templateFile, sampleFiles[1], '-o', join(dir, 'json'), '--json', '--max-trials', '100');
    expect(r.code).toBe(0);
    const s = JSON.parse(r.stdout);
    expect(s.samples[0].id).toBe('probe1');
    expect(s.samples[0].proposed).toBeGreaterThan(0);
  });
});
