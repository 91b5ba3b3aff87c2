/**
 * Benchmarks side by side with peers: `npm run bench` (or `npx tsx test/bench/run.ts`).
 *
 * Options:
 *   --quick            fewer repeats and a 10-sample batch: a smoke run
 *   --only a,b         run only these cases (names below; a prefix such as "build" selects all build cases)
 *   --batch-size N     samples in the batch-match case (default 200; 10 under --quick)
 *   --write-docs       write docs/benchmarks.md from this run
 *   --json FILE        also write every result as JSON
 *   --list             list the cases and exit
 *   --profile-summary DIR   print self and inclusive CPU shares per function of every
 *                      .cpuprofile in DIR (made with `node --cpu-prof --cpu-prof-dir=DIR ...`)
 *
 * Environment: CAIRN_BENCH_SKIP_PEERS=1 skips R and Python (as if absent).
 *
 * Each case runs in its own Node process (same loader as this one), so its
 * peak memory (ru_maxrss) is its own. The parent prints a table per case and
 * the ratios against the baseline measured in the same run.
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import os from 'node:os';
import path from 'node:path';
import { fileURLToPath } from 'node:url';
import { add200 } from './cases/add.js';
import { assign1000, assign300 } from './cases/assignment.js';
import { batch } from './cases/batch.js';
import { build1000, build200, build50 } from './cases/build.js';
import { match190, match400 } from './cases/match.js';
import type { BenchCase, CaseContext, CaseResult } from './cases/types.js';
import { cpuProfileShares, currentRssMiB, formatMs, formatRatio, formatStats, machineInfo, textTable, type MachineInfo } from './harness.js';
import { renderDocs } from './report.js';

const CASES: readonly BenchCase[] = [build50, build200, build1000, add200, match190, match400, assign300, assign1000, batch];
const RESULT_TAG = 'BENCH-RESULT ';
const here = path.dirname(fileURLToPath(import.meta.url));
const root = path.resolve(here, '..', '..');

interface Args {
  quick: boolean;
  only: string[] | null;
  child: string | null;
  tmp: string | null;
  writeDocs: boolean;
  json: string | null;
  list: boolean;
  profileDir: string | null;
  batchSize?: number;
}

function parseArgs(argv: readonly string[]): Args {
  const a: Args = { quick: false, only: null, child: null, tmp: null, writeDocs: false, json: null, list: false, profileDir: null };
  for (let i = 0; i < argv.length; i++) {
    const v = argv[i];
    const next = (): string => {
      const x = argv[++i];
      if (x === undefined) throw new Error(`${v} needs a value`);
      return x;
    };
    if (v === '--quick') a.quick = true;
    else if (v === '--only') a.only = next().split(',').map((s) => s.trim()).filter(Boolean);
    else if (v === '--child') a.child = next();
    else if (v === '--tmp') a.tmp = next();
    else if (v === '--write-docs') a.writeDocs = true;
    else if (v === '--json') a.json = next();
    else if (v === '--list') a.list = true;
    else if (v === '--profile-summary') a.profileDir = next();
    else if (v === '--batch-size') {
      const n = Number(next());
      if (!Number.isInteger(n) || n < 1) throw new Error(`--batch-size must be a positive integer, got ${argv[i]}`);
      a.batchSize = n;
    } else throw new Error(`unknown option ${v} (see the comment at the top of test/bench/run.ts)`);
  }
  return a;
}

function selectCases(only: string[] | null): BenchCase[] {
  if (!only) return CASES.slice();
  const chosen = CASES.filter((c) => only.some((o) => c.name === o || c.name.startsWith(`${o}-`) || c.name.startsWith(o)));
  const unknown = only.filter((o) => !CASES.some((c) => c.name === o || c.name.startsWith(o)));
  if (unknown.length) throw new Error(`unknown case ${unknown.join(', ')}; cases: ${CASES.map((c) => c.name).join(', ')}`);
  return chosen;
}

/** Child mode: run one case in this process and print its result as one tagged JSON line. */
async function runChild(args: Args): Promise<void> {
  const c = CASES.find((x) => x.name === args.child);
  if (!c) throw new Error(`no case ${args.child}`);
  const baselineRssMiB = currentRssMiB();
  const ctx: CaseContext = {
    quick: args.quick,
    tmp: args.tmp ?? os.tmpdir(),
    root,
    log: (line) => process.stderr.write(`  [${c.name}] ${line}\n`),
    ...(args.batchSize !== undefined ? { batchSize: args.batchSize } : {}),
  };
  const r = await c.run(ctx);
  const result: CaseResult = { ...r, baselineRssMiB };
  process.stdout.write(`${RESULT_TAG}${JSON.stringify(result)}\n`);
}

function printCase(r: CaseResult): void {
  console.log(`\n== ${r.name}: ${r.title}`);
  const rows = r.measurements.map((m) => [
    m.variant,
    formatStats(m.stats),
    m.wall ? formatMs(m.wall.median) : '-',
    m.peakRssMiB === null ? '-' : `${m.peakRssMiB.toFixed(0)} MiB`,
  ]);
  console.log(textTable(['variant', 'in-process time: median, IQR, range', 'wall (whole process)', 'peak RSS'], rows));
  for (const m of r.measurements) {
    const extra = Object.entries(m.extra ?? {});
    if (extra.length) console.log(`  ${m.variant}: ${extra.map(([k, v]) => `${k} ${v}`).join('; ')}`);
  }
  console.log(`  memory: ${[...new Set(r.measurements.map((m) => m.memorySource))].join('; ')}; case process baseline before the case ${r.baselineRssMiB.toFixed(0)} MiB`);
  for (const ratio of r.ratios) {
    const target = ratio.target ? `  target ${ratio.target}: ${ratio.met ? 'met' : 'MISSED'}` : '';
    console.log(`  ratio ${ratio.name}: ${formatRatio(ratio.value)}${target}`);
  }
  for (const n of r.notes) console.log(`  note: ${n}`);
}

async function runParent(args: Args): Promise<void> {
  const cases = selectCases(args.only);
  const machine: MachineInfo = machineInfo();
  // The command as it would be typed for the docs: without --write-docs and without a --json scratch path.
  const argv = process.argv.slice(2);
  const shown = argv.filter((a, i) => a !== '--write-docs' && a !== '--json' && argv[i - 1] !== '--json').join(' ');
  const docsCommand = shown ? `npm run bench -- ${shown}` : 'npm run bench';
  const command = `npx tsx test/bench/run.ts ${process.argv.slice(2).join(' ')}`.trim();
  console.log(`cairn benchmarks  ${machine.date}`);
  console.log(`machine: ${machine.cpu}, ${machine.nproc} logical CPUs, ${machine.memoryGiB.toFixed(1)} GiB, Node ${machine.node}, ${machine.platform}`);
  console.log(`reference workload: sorting 1,000,000 doubles took ${machine.referenceSortMs.toFixed(0)} ms (best of 5)`);
  console.log(`load average at start: ${machine.loadAverage.map((x) => x.toFixed(2)).join(' ')}${args.quick ? '   (--quick: smoke run, few repeats)' : ''}`);
  const tmp = mkdtempSync(path.join(os.tmpdir(), 'cairn-bench-'));
  const results: CaseResult[] = [];
  const failures: string[] = [];
  const started = performance.now();
  try {
    for (const c of cases) {
      process.stderr.write(`running ${c.name} ...\n`);
      const ranAt = new Date().toISOString();
      const loadBefore = os.loadavg();
      const childArgs = [...process.execArgv, fileURLToPath(import.meta.url), '--child', c.name, '--tmp', tmp];
      if (args.quick) childArgs.push('--quick');
      if (args.batchSize !== undefined) childArgs.push('--batch-size', String(args.batchSize));
      const r = spawnSync(process.execPath, childArgs, { cwd: root, encoding: 'utf8', stdio: ['ignore', 'pipe', 'inherit'], maxBuffer: 64 * 1024 * 1024 });
      const line = String(r.stdout ?? '').split('\n').find((l) => l.startsWith(RESULT_TAG));
      if (r.status !== 0 || !line) {
        failures.push(`${c.name}: exit status ${r.status}${r.signal ? ` (${r.signal})` : ''}`);
        console.log(`\n== ${c.name}: FAILED (exit status ${r.status}); see the messages above`);
        continue;
      }
      const result: CaseResult = { ...(JSON.parse(line.slice(RESULT_TAG.length)) as CaseResult), ranAt, loadBefore, command: docsCommand };
      results.push(result);
      printCase(result);
    }
  } finally {
    rmSync(tmp, { recursive: true, force: true });
  }
  const end = machineInfo();
  console.log(`\ntotal ${formatMs(performance.now() - started)}; load average at end: ${end.loadAverage.map((x) => x.toFixed(2)).join(' ')}`);
  const allRatios = results.flatMap((r) => r.ratios.map((x) => [r.name, x.name, formatRatio(x.value), x.target ?? '', x.target ? (x.met ? 'met' : 'MISSED') : '']));
  if (allRatios.length) {
    console.log('\nratios (same run):');
    console.log(textTable(['case', 'ratio', 'value', 'target', ''], allRatios));
  }
  if (args.json) writeFileSync(args.json, JSON.stringify({ machine, end, command, quick: args.quick, results, failures }, null, 2) + '\n');
  if (args.writeDocs) {
    const file = path.join(root, 'docs', 'benchmarks.md');
    const existing = existsSync(file) ? readFileSync(file, 'utf8') : undefined;
    writeFileSync(file, renderDocs({ machine, end, command: docsCommand, quick: args.quick, results, failures }, existing, CASES.map((c) => c.name)));
    console.log(`\nwrote ${path.relative(root, file)}`);
  }
  if (failures.length) {
    console.log(`\nfailed cases: ${failures.join('; ')}`);
    process.exitCode = 1;
  }
}

async function main(): Promise<void> {
  const args = parseArgs(process.argv.slice(2));
  if (args.quick && args.writeDocs) throw new Error('--write-docs needs a full run: a --quick smoke run is not for the docs');
  if (args.list) {
    for (const c of CASES) console.log(`${c.name.padEnd(16)} ${c.title}`);
  } else if (args.profileDir) {
    const dir = args.profileDir;
    for (const f of readdirSync(dir).filter((x) => x.endsWith('.cpuprofile'))) {
      const p = cpuProfileShares(path.join(dir, f), 30);
      console.log(`== ${f}: ${formatMs(p.totalMs)} sampled`);
      const rows = p.self.map(([k, v], i) => [`${(100 * v).toFixed(1)}%`, k, p.inclusive[i] ? `${(100 * p.inclusive[i][1]).toFixed(1)}%` : '', p.inclusive[i]?.[0] ?? '']);
      console.log(textTable(['self', 'function', 'inclusive', 'function'], rows));
    }
  } else if (args.child) {
    await runChild(args);
  } else {
    selectCases(args.only); // fail on unknown names before anything runs
    await runParent(args);
  }
}

try {
  await main();
} catch (e) {
  process.stderr.write(`bench: ${e instanceof Error ? e.message : String(e)}\n`);
  if (process.argv.includes('--child') && e instanceof Error && e.stack) process.stderr.write(`${e.stack}\n`);
  process.exitCode = 2;
}
