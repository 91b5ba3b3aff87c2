/**
 * Batch matching: the built CLI `node bin/cairn.js match TEMPLATE SAMPLES... -o DIR`
 * on 200 sample files (190 points against 190 cells) with --jobs 1 and --jobs 2.
 * Wall time of the whole process and its peak memory come from GNU time; the
 * in-process time is the wall time minus the CLI's start-up, measured as the
 * median wall time of `node bin/cairn.js --version`.
 *
 * Fallback while `cairn match` is not registered: the same samples matched by
 * matchSample in one Node process (jobs 1) or split in two halves over two
 * Node processes running at once (jobs 2, timed as the slower half), with
 * in-process timing. The report says which was used.
 */
import { existsSync, mkdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { spawn, spawnSync } from 'node:child_process';
import path from 'node:path';
import { serializeTemplate } from '../../../src/io/index.js';
import { writeSampleCsv } from '../../support/animals.js';
import { spawnMeasured, summarize, type Stats } from '../harness.js';
import { batchData } from './batch-data.js';
import type { BenchCase, Measurement, Ratio } from './types.js';

const SEED = 6190;

function cliHasMatch(root: string): boolean {
  const r = spawnSync(process.execPath, [path.join(root, 'bin/cairn.js'), 'match', '--help'], { encoding: 'utf8', cwd: root });
  return r.status === 0 && /match/.test(String(r.stdout));
}

/** Run `jobs` worker processes at once over contiguous shares of the batch; resolves with the slowest worker's in-process ms. */
function fallbackRun(root: string, templateFile: string, count: number, jobs: number): Promise<{ ms: number; wallMs: number; maxRssMiB: number }> {
  const worker = path.join(root, 'test/bench/cases/batch-worker.ts');
  const t0 = performance.now();
  const parts = Array.from({ length: jobs }, (_, j) => {
    const from = Math.floor((j * count) / jobs), to = Math.floor(((j + 1) * count) / jobs);
    return new Promise<{ ms: number; maxRssMiB: number }>((resolve, reject) => {
      const p = spawn(process.execPath, [...process.execArgv, worker, templateFile, String(count), String(SEED), String(from), String(to)], { cwd: root, stdio: ['ignore', 'pipe', 'inherit'] });
      let out = '';
      p.stdout.on('data', (b: Buffer) => (out += b.toString()));
      p.on('close', (code) => (code === 0 ? resolve(JSON.parse(out.trim().split('\n').pop() as string)) : reject(new Error(`batch worker exited with ${code}`))));
    });
  });
  return Promise.all(parts).then((r) => ({ ms: Math.max(...r.map((x) => x.ms)), wallMs: performance.now() - t0, maxRssMiB: Math.max(...r.map((x) => x.maxRssMiB)) }));
}

export const batch: BenchCase = {
  name: 'batch-match',
  title: 'batch match: 190-point samples against a 190-cell template, --jobs 1 vs --jobs 2',
  async run(ctx) {
    const count = ctx.batchSize ?? (ctx.quick ? 10 : 200);
    const repeats = ctx.quick ? 1 : count > 50 ? 2 : 3;
    ctx.log(`batch-match: generating the template and ${count} samples`);
    const data = batchData(count, SEED);
    const dir = path.join(ctx.tmp, 'batch');
    mkdirSync(dir, { recursive: true });
    const templateFile = path.join(dir, 'template.json');
    writeFileSync(templateFile, serializeTemplate(data.template));
    const files = data.animals.map((a) => {
      const f = path.join(dir, `${a.sample.id}.csv`);
      writeFileSync(f, writeSampleCsv(a.sample, 4));
      return f;
    });
    const notes: string[] = [`${count} samples of 190 points (15% of cells missing, 29 outliers), template from 30 training animals`];
    const measurements: Measurement[] = [];
    const medians = new Map<number, number>();
    const cli = path.join(ctx.root, 'bin/cairn.js');
    if (cliHasMatch(ctx.root)) {
      const startup: number[] = [];
      for (let i = 0; i < 7; i++) startup.push(spawnMeasured(process.execPath, [cli, '--version'], { cwd: ctx.root, timeFile: path.join(dir, 'gnutime-v.txt') }).wallMs);
      const start = summarize(startup).median;
      notes.push(`spawned the built CLI: node bin/cairn.js match template.json <${count} files> -o OUT --seed 1 --jobs N; CLI start-up (median of 7 runs of --version) ${start.toFixed(0)} ms subtracted for the in-process time`);
      for (const jobs of [1, 2]) {
        const walls: number[] = [], perSample: number[] = [];
        let peak = 0;
        for (let r = 0; r < repeats; r++) {
          ctx.log(`batch-match: cairn match --jobs ${jobs}, run ${r + 1}/${repeats}`);
          const out = path.join(dir, `out-${jobs}-${r}`);
          const m = spawnMeasured(process.execPath, [cli, 'match', templateFile, ...files, '-o', out, '--seed', '1', '--jobs', String(jobs)], { cwd: ctx.root, timeFile: path.join(dir, `gnutime-${jobs}-${r}.txt`) });
          if (m.status !== 0) throw new Error(`cairn match --jobs ${jobs} exited with ${m.status}: ${m.stderr.trim().split('\n').slice(-5).join(' / ')}`);
          walls.push(m.wallMs);
          peak = Math.max(peak, m.peakRssMiB ?? 0);
          // Per-sample matchSample seconds from the summary: their sum against the wall time shows whether the threads overlapped.
          const summaryFile = path.join(out, 'summary.json');
          if (existsSync(summaryFile)) {
            const summary = JSON.parse(readFileSync(summaryFile, 'utf8')) as { samples?: { seconds?: number }[] };
            perSample.push(...(summary.samples ?? []).map((x) => (x.seconds ?? Number.NaN) * 1000));
          }
          rmSync(out, { recursive: true, force: true });
        }
        const wall = summarize(walls);
        const inproc: Stats = summarize(walls.map((w) => w - start));
        medians.set(jobs, inproc.median);
        measurements.push({
          variant: `cairn match --jobs ${jobs} (built CLI)`,
          stats: inproc,
          wall,
          peakRssMiB: peak || null,
          memorySource: '/usr/bin/time -v of the cairn process (workers are threads of it)',
          extra: {
            'wall / samples': `${(inproc.median / count).toFixed(0)} ms`,
            ...(perSample.length
              ? {
                  'matchSample per sample (summary.json, median)': `${summarize(perSample).median.toFixed(0)} ms`,
                  'sum of per-sample times / in-process time (about 1 serial, up to 2 with two busy threads)': (perSample.reduce((a, x) => a + x, 0) / repeats / inproc.median).toFixed(2),
                }
              : {}),
          },
        });
      }
    } else {
      notes.push('FALLBACK: `cairn match` is not registered in the built CLI yet, so the batch was timed in-process: matchSample over all samples in one Node process (jobs 1) and over two halves in two Node processes at once (jobs 2, the slower half); start-up and reading excluded');
      for (const jobs of [1, 2]) {
        const ms: number[] = [], walls: number[] = [];
        let peak = 0;
        for (let r = 0; r < repeats; r++) {
          ctx.log(`batch-match: in-process fallback, ${jobs} process(es), run ${r + 1}/${repeats}`);
          const x = await fallbackRun(ctx.root, templateFile, count, jobs);
          ms.push(x.ms);
          walls.push(x.wallMs);
          peak = Math.max(peak, x.maxRssMiB);
        }
        const stats = summarize(ms);
        medians.set(jobs, stats.median);
        measurements.push({
          variant: `fallback: matchSample in ${jobs} Node process${jobs > 1 ? 'es' : ''}`,
          stats,
          wall: summarize(walls),
          peakRssMiB: peak,
          memorySource: 'ru_maxrss of each worker process (largest)',
          extra: { 'per sample (in-process)': `${(stats.median / count).toFixed(0)} ms` },
        });
      }
    }
    const speedup = (medians.get(1) as number) / (medians.get(2) as number);
    const ratios: Ratio[] = [{ name: '--jobs 1 / --jobs 2 (speed-up on the batch)', value: speedup, target: '>= 1.8x', met: speedup >= 1.8 }];
    return { name: this.name, title: this.title, measurements, ratios, notes };
  },
};
