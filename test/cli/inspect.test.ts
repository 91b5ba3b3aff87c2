import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { parse } from 'csv-parse/sync';
import { main } from '../../src/cli/main.js';
import { serializeTemplate } from '../../src/io/template-file.js';
import { describeCells, sortCellSummaries } from '../../src/report/cell-table.js';
import { testTemplate } from '../report/support/template.js';

async function run(...args: string[]): Promise<{ code: number; stdout: string; stderr: string }> {
  let stdout = '';
  let stderr = '';
  const code = await main(['node', 'cairn', ...args], {
    stdout: (t) => (stdout += t),
    stderr: (t) => (stderr += t),
  });
  return { code, stdout, stderr };
}

describe('cairn inspect', () => {
  const template = testTemplate({ cells: 18, flagged: 2 });
  const summaries = describeCells(template);
  let dir = '';
  let file = '';

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'cairn-inspect-'));
    file = join(dir, 'crown.json');
    writeFileSync(file, serializeTemplate(template));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('prints the summary and one table row per cell, by label by default', async () => {
    const r = await run('inspect', file);
    expect(r.code).toBe(0);
    expect(r.stderr).toBe('');
    expect(r.stdout).toContain('cells: 18 (');
    expect(r.stdout).toContain('flagged hand labels: 2');
    const lines = r.stdout.split('\n');
    const header = lines.findIndex((l) => l.startsWith('cell '));
    const labels = lines.slice(header + 1, header + 19).map((l) => l.split(/\s+/)[0]);
    expect(labels).toEqual(sortCellSummaries(summaries, 'label').map((s) => s.label));
  });

  it('prints CSV that reads back to the library values at full precision', async () => {
    const r = await run('inspect', file, '--csv', '--sort', 'variability');
    expect(r.code).toBe(0);
    const rows = parse(r.stdout, { columns: true }) as Record<string, string>[];
    const expected = sortCellSummaries(summaries, 'variability');
    expect(rows.map((row) => row.label)).toEqual(expected.map((s) => s.label));
    expect(Number(rows[0].sd_1)).toBe(expected[0].principalSds[0]);
    expect(Number(rows[0].separation_mahalanobis)).toBe(expected[0].leastSeparated!.separation);
    expect(Object.keys(rows[0])).toContain('nearest_mahalanobis_other');
  });

  it('prints JSON with the summaries in the requested order and the flagged labels', async () => {
    const r = await run('inspect', file, '--json', '--sort', 'separability');
    expect(r.code).toBe(0);
    const doc = JSON.parse(r.stdout);
    expect(doc.sort).toBe('separability');
    expect(doc.cells.map((c: { label: string }) => c.label)).toEqual(sortCellSummaries(summaries, 'separability').map((s) => s.label));
    expect(doc.cells[0].nearest.mahalanobisUnderThis).toBe(sortCellSummaries(summaries, 'separability')[0].nearest!.mahalanobisUnderThis);
    expect(doc.flagged).toHaveLength(2);
  });

  it('writes the HTML report, and refuses to replace it without --force', async () => {
    const out = join(dir, 'report.html');
    const first = await run('inspect', file, '--html', out, '--json');
    expect(first.code).toBe(0);
    expect(JSON.parse(first.stdout).cells).toHaveLength(18);
    expect(first.stderr).toBe(`cairn inspect: wrote ${out}\n`);
    const html = readFileSync(out, 'utf8');
    expect(html).toContain('<title>Template report: ' + file + '</title>');
    expect((html.match(/<svg /g) ?? []).length).toBe(2);
    const again = await run('inspect', file, '--html', out);
    expect(again.code).toBe(1);
    expect(again.stderr).toBe(`cairn: ${out}: exists; use --force to overwrite\n`);
    expect(again.stdout).toBe('');
    const forced = await run('inspect', file, '--html', out, '--force', '--ellipse-probability', '0.5');
    expect(forced.code).toBe(0);
    expect(readFileSync(out, 'utf8')).toContain('holding 50% of its positions');
  });

  it('quotes the accuracy measured by `cairn evaluate --json` on the --html page with --accuracy-from, and needs --html for it', async () => {
    // The fields measuredAccuracyFromEvaluateJson reads from evaluate's JSON output (figures invented for the test).
    const evalFile = join(dir, 'eval.json');
    writeFileSync(evalFile, JSON.stringify({ scheme: 'leave-one-out', report: { accuracy: 0.875, points: 240, coverage: 1, falseLabelRate: 0.125, perSample: [{}, {}, {}] } }));
    const out = join(dir, 'quoted.html');
    const r = await run('inspect', file, '--html', out, '--accuracy-from', evalFile);
    expect(r.code).toBe(0);
    const html = readFileSync(out, 'utf8');
    expect(html).toContain('gave the right label to 87.5% of labelled points');
    expect(html).toContain('leave-one-out, 3 samples, 240 labelled points');
    expect(html).not.toContain('has not been measured on this lab');
    const plain = join(dir, 'plain.html');
    expect((await run('inspect', file, '--html', plain)).code).toBe(0);
    expect(readFileSync(plain, 'utf8')).toContain('has not been measured on this lab');
    const alone = await run('inspect', file, '--accuracy-from', evalFile);
    expect(alone.code).toBe(2);
    expect(alone.stderr).toContain('--accuracy-from is quoted in the --html page; give --html FILE too');
    const wrong = await run('inspect', file, '--html', join(dir, 'wrong.html'), '--accuracy-from', file);
    expect(wrong.code).toBe(1);
    expect(wrong.stderr).toContain(`${file}: has no "report" object`);
    expect(existsSync(join(dir, 'wrong.html'))).toBe(false);
  });

  it('never overwrites its input', async () => {
    const before = readFileSync(file, 'utf8');
    const r = await run('inspect', file, '--html', file, '--force');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('refusing to overwrite an input');
    expect(readFileSync(file, 'utf8')).toBe(before);
  });

  it('exits 1 naming the file for a missing or broken template, and writes nothing', async () => {
    const missing = await run('inspect', join(dir, 'nope.json'));
    expect(missing.code).toBe(1);
    expect(missing.stderr).toContain('nope.json');
    const broken = join(dir, 'broken.json');
    writeFileSync(broken, '{"format": "cairn-template", ');
    const out = join(dir, 'broken.html');
    const r = await run('inspect', broken, '--html', out);
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/^cairn: .*broken\.json/);
    expect(existsSync(out)).toBe(false);
  });

  it('exits 2 for bad usage: --csv with --json, an unknown sort key, a probability outside (0, 1)', async () => {
    expect((await run('inspect', file, '--csv', '--json')).code).toBe(2);
    expect((await run('inspect', file, '--sort', 'size')).code).toBe(2);
    const p = await run('inspect', file, '--ellipse-probability', '1');
    expect(p.code).toBe(2);
    expect(p.stderr).toContain('expected a probability strictly between 0 and 1, got "1"');
  });
});
