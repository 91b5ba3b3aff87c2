/**
 * Memory and time of a large `cairn match` batch (a benchmark, not a test;
 * figures depend on the machine and its load):
 *
 *   npx tsc -p . && npx tsx test/bench/match-scale.ts [--samples N] [--jobs J] [--max-trials T] [--keep]
 *
 * Writes a 40-cell 3-D template and N copies (default 10,000) of one small
 * synthetic animal (test/support/animals.ts, labels removed) to a temporary
 * folder, runs the built CLI (`node bin/cairn.js match ... --jobs 2
 * --max-trials 50 --no-timestamp`) under /usr/bin/time -v, and prints the
 * peak resident set size of the whole process (main thread and workers share
 * it) and the wall time. Streaming shows as a peak that does not grow with N;
 * every --every seconds (default 30) it also prints the resident set size
 * (VmRSS from /proc) against the number of CSVs written so far.
 */
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { serializeTemplate } from '../../src/io/template-file.js';
import { createRng } from '../../src/random.js';
import { generateAnimal, generateLayout, writeSampleCsv } from '../support/animals.js';
import { templateFromTraining } from '../match/support.js';
import { argValue } from './harness.js';

const samples = Number(argValue('samples', '10000'));
const jobs = argValue('jobs', '2');
const maxTrials = argValue('max-trials', '50');
const keep = process.argv.includes('--keep');
const every = Number(argValue('every', '30'));

/** VmRSS of the child of `pid` (the node process under /usr/bin/time), MiB, or null. */
function childRss(pid: number): number | null {
  try {
    const kids = readFileSync(`/proc/${pid}/task/${pid}/children`, 'utf8').trim().split(/\s+/).filter(Boolean);
    if (kids.length === 0) return null;
    const kb = /VmRSS:\s+(\d+) kB/.exec(readFileSync(`/proc/${kids[0]}/status`, 'utf8'))?.[1];
    return kb === undefined ? null : Number(kb) / 1024;
  } catch {
    return null;
  }
}
const root = resolve(dirname(fileURLToPath(import.meta.url)), '../..');

const dir = mkdtempSync(join(tmpdir(), 'cairn-scale-'));
try {
  const rng = createRng(2026);
  const layout = generateLayout(rng, { cells: 40, dim: 3 });
  writeFileSync(join(dir, 'template.json'), serializeTemplate(templateFromTraining(layout, rng, { members: 8 })));
  const animal = generateAnimal(layout, rng, 'animal', { missingFraction: 0.1, outlierFraction: 0.1 }).sample;
  const text = writeSampleCsv({ ...animal, labels: animal.labels.map(() => null) });
  mkdirSync(join(dir, 's'));
  const names: string[] = [];
  for (let i = 0; i < samples; i++) {
    const name = join('s', `a${String(i).padStart(5, '0')}.csv`);
    writeFileSync(join(dir, name), text);
    names.push(name);
  }
  const args = ['-v', process.execPath, join(root, 'bin/cairn.js'), 'match', 'template.json', ...names, '-o', 'out', '--jobs', jobs, '--max-trials', maxTrials, '--no-timestamp'];
  const child = spawn('/usr/bin/time', args, { cwd: dir, stdio: ['ignore', 'ignore', 'pipe'] });
  let stderr = '';
  child.stderr.on('data', (d) => (stderr += String(d)));
  const start = performance.now();
  const timer = setInterval(() => {
    const rssNow = childRss(child.pid as number);
    const done = existsSync(join(dir, 'out')) ? readdirSync(join(dir, 'out')).length : 0;
    if (rssNow !== null) console.log(`  ${((performance.now() - start) / 1000).toFixed(0)} s: ${done} CSVs written, RSS ${rssNow.toFixed(1)} MiB`);
  }, every * 1000);
  const status = await new Promise<number | null>((done) => child.on('exit', (code) => done(code)));
  clearInterval(timer);
  const run = { status, stderr };
  const rss = /Maximum resident set size \(kbytes\): (\d+)/.exec(run.stderr)?.[1];
  const wall = /Elapsed \(wall clock\) time \(h:mm:ss or m:ss\): (\S+)/.exec(run.stderr)?.[1];
  const cpu = /User time \(seconds\): (\S+)/.exec(run.stderr)?.[1];
  const written = readdirSync(join(dir, 'out')).filter((f) => f.endsWith('.csv')).length;
  console.log(`samples ${samples} (${animal.coords.length} points each), template 40 cells, --jobs ${jobs}, --max-trials ${maxTrials}`);
  console.log(`exit code ${run.status}; CSVs written ${written}`);
  console.log(`peak RSS ${rss === undefined ? '?' : (Number(rss) / 1024).toFixed(1)} MiB; wall ${wall ?? '?'}; user CPU ${cpu ?? '?'} s`);
  if (run.status !== 0) console.log(run.stderr.split('\n').filter((l) => !l.startsWith('\t')).slice(-5).join('\n'));
  if (keep) console.log(`kept ${dir}`);
} finally {
  if (!keep) rmSync(dir, { recursive: true, force: true });
}
