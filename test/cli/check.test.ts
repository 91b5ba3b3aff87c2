import { describe, it, expect } from 'vitest';
import * as fs from 'node:fs';
import * as path from 'node:path';
import { fileURLToPath } from 'node:url';
import { main, type CliIo } from '../../src/cli/main.js';
import { buildCheckReport, checkFailed, renderCheckJson, renderCheckText, type CheckReport } from '../../src/cli/check.js';
import { readSamplesCollect } from '../../src/io/sample-reader.js';

const samplesDir = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'samples');
const rel = (f: string) => path.relative(process.cwd(), path.join(samplesDir, f));
const A = rel('animal-a.csv');
const B = rel('animal-b.csv');
const LONG = rel('long-table.csv');

async function run(...args: string[]): Promise<{ code: number; out: string; err: string }> {
  const io: CliIo & { out: string; err: string } = {
    out: '',
    err: '',
    stdout: (t) => {
      io.out += t;
    },
    stderr: (t) => {
      io.err += t;
    },
  };
  const code = await main(['node', 'cairn', ...args], io);
  return { code, out: io.out, err: io.err };
}

describe('cairn check', () => {
  it('prints points, labelled points and dimension per sample and exits 0 on valid input', async () => {
    const r = await run('check', A, B, LONG);
    expect(r.code).toBe(0);
    expect(r.err).toBe('');
    const w = Math.max(4, A.length, LONG.length);
    const row = (id: string, file: string, points: number, labelled: number) =>
      `${id.padEnd(8)}  ${file.padEnd(w)}  ${String(points).padStart(6)}  ${String(labelled).padStart(8)}  3-D  gfp\n`;
    // Counts read off the fixture files by hand: animal-a 8 rows, 6 labels; animal-b 7 rows, 4 labels;
    // long-table animal-c 4 rows, 3 labels and animal-d 4 rows, 3 labels.
    const table =
      `${'sample'.padEnd(8)}  ${'file'.padEnd(w)}  points  labelled  dim  features\n` +
      row('animal-a', A, 8, 6) +
      row('animal-b', B, 7, 4) +
      row('animal-c', LONG, 4, 3) +
      row('animal-d', LONG, 4, 3);
    expect(r.out.startsWith(table)).toBe(true);
    // Then the hand-label section (src/cli/build.ts handLabelCheckSection) and the closing line.
    expect(r.out).toContain('\nsuspicious hand labels');
    expect(r.out.endsWith('4 samples in 3 files: no errors\n')).toBe(true);
  });

  it('reads the invented demo set in demo-data/ (16 animals, 2538 points, 958 hand labels) without errors', async () => {
    const demo = path.join(samplesDir, '..', '..', '..', 'demo-data');
    const files = ['labelled', 'unlabelled'].flatMap((d) =>
      fs.readdirSync(path.join(demo, d)).filter((f) => f.endsWith('.csv')).sort().map((f) => path.relative(process.cwd(), path.join(demo, d, f))),
    );
    const r = await run('check', ...files, '--json');
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    // Totals counted with a separate Python csv.DictReader pass over the same files.
    expect([doc.samples.length, doc.samples.reduce((n: number, s: { points: number }) => n + s.points, 0), doc.samples.reduce((n: number, s: { labelled: number }) => n + s.labelled, 0)]).toEqual([16, 2538, 958]);
    expect(doc.samples.every((s: { dim: number }) => s.dim === 3)).toBe(true);
  });

  it('prints a JSON report with --json', async () => {
    const r = await run('check', A, '--json');
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.out);
    expect(doc).toMatchObject({
      ok: true,
      files: 1,
      samples: [{ id: 'animal-a', file: A, points: 8, labelled: 6, dim: 3, features: ['gfp'] }],
      errors: [],
    });
    expect(Object.keys(doc)).toEqual(['ok', 'files', 'samples', 'errors', 'handLabels']);
  });

  it('lists every error of every file on stderr, keeps reporting the valid samples, and exits 1', async () => {
    const bad = path.relative(process.cwd(), path.join(samplesDir, '..', 'bad', 'many-errors.csv'));
    const nan = path.relative(process.cwd(), path.join(samplesDir, '..', 'bad', 'nan.csv'));
    const r = await run('check', A, bad, nan);
    expect(r.code).toBe(1);
    expect(r.out).toContain('animal-a');
    expect(r.err.split('\n')).toEqual([
      `${bad}:2: column "y": "abc" is not a finite number`,
      `${bad}:3: column "x": "NaN" is not a finite number`,
      `${bad}:5: column "label": "VLa3" is used twice in sample "many-errors" (lines 4 and 5); a label names one point per sample`,
      `${bad}:6: the row has 2 fields but the header has 4 (is the file truncated?)`,
      `${nan}:2: column "y": "NaN" is not a finite number`,
      'cairn check: 5 errors in 2 of 3 files',
      '',
    ]);
  });

  it('puts errors with file, row and column into the JSON report', async () => {
    const nan = path.relative(process.cwd(), path.join(samplesDir, '..', 'bad', 'nan.csv'));
    const r = await run('check', nan, '--json');
    expect(r.code).toBe(1);
    const doc = JSON.parse(r.out);
    expect(doc.ok).toBe(false);
    expect(doc.errors).toEqual([
      { file: nan, row: 2, column: 'y', reason: '"NaN" is not a finite number', message: `${nan}:2: column "y": "NaN" is not a finite number` },
    ]);
  });

  it('applies --voxel-size to the coordinates it checks', async () => {
    const plain = readSamplesCollect([A]).samples[0];
    const scaled = readSamplesCollect([A], { voxelSize: [0.5, 0.5, 2] }).samples[0];
    expect(scaled.coords[0]).toEqual([plain.coords[0][0] * 0.5, plain.coords[0][1] * 0.5, plain.coords[0][2] * 2]);
    const r = await run('check', A, '--voxel-size', '0.5,0.5,2');
    expect(r.code).toBe(0);
  });

  it('exits 2 with a usage message for a bad --voxel-size and for no files', async () => {
    const r = await run('check', A, '--voxel-size', '0.5,-1,2');
    expect(r.code).toBe(2);
    expect(r.err).toContain('--voxel-size: expected 2 or 3 positive numbers separated by commas (X,Y or X,Y,Z), got "0.5,-1,2": "-1" is not a positive finite number');
    const none = await run('check');
    expect(none.code).toBe(2);
    expect(none.err).toContain("missing required argument 'samples'");
  });

  it('is listed in the program help', async () => {
    const r = await run('--help');
    expect(r.code).toBe(0);
    expect(r.out).toMatch(/check \[options\] <samples\.\.\.>/);
  });
});

describe('check report', () => {
  it('renders sections added by later checks in text and JSON, and counts their problems as errors', () => {
    const report: CheckReport = buildCheckReport(readSamplesCollect([A]));
    expect(checkFailed(report)).toBe(false);
    report.sections.push({
      key: 'example',
      title: 'Example section',
      lines: ['one line'],
      data: { n: 1 },
      problems: [{ file: A, row: 3, column: 'label', reason: 'looks wrong', message: `${A}:3: column "label": looks wrong` }],
    });
    expect(checkFailed(report)).toBe(true);
    const text = renderCheckText(report);
    expect(text.stdout).toContain('\nExample section\n  one line\n');
    expect(text.stderr).toBe(`${A}:3: column "label": looks wrong\ncairn check: 1 error in 1 of 1 file\n`);
    expect(JSON.parse(renderCheckJson(report))).toMatchObject({ ok: false, example: { n: 1 } });
  });
});
