/**
 * Linear assignment: solveAssignment on square uniform random cost matrices,
 * against scipy.optimize.linear_sum_assignment on the same matrices (written
 * to CSV with 17 significant digits, so both solve the same numbers); the
 * optimal totals are compared as a check.
 */
import { writeFileSync } from 'node:fs';
import path from 'node:path';
import { solveAssignment } from '../../../src/match/assignment.js';
import { createRng } from '../../../src/random.js';
import { peakRssMiB, spawnMeasured, summarize, timeRepeated } from '../harness.js';
import { hasScipy, missingReason, PYTHON } from './peers.js';
import type { BenchCase, Measurement, Ratio } from './types.js';

/** n x n costs uniform in [0, 1) from a seeded generator. */
export function uniformCosts(n: number, seed: number): number[][] {
  const rng = createRng(seed);
  return Array.from({ length: n }, () => Array.from({ length: n }, () => rng()));
}

/** Calls before timing starts (the solver's hot loops are compiled by then). */
const WARMUP = 10;

function assignmentCase(n: number, target: boolean): BenchCase {
  const name = `assign-${n}`;
  return {
    name,
    title: `assignment: ${n} x ${n} uniform random costs; peer scipy.optimize.linear_sum_assignment`,
    run(ctx) {
      const repeats = ctx.quick ? 3 : n >= 1000 ? 7 : 15;
      const matrices = [0, 1, 2].map((k) => uniformCosts(n, 900 + n + k));
      ctx.log(`${name}: timing solveAssignment, ${repeats} runs over ${matrices.length} matrices`);
      // The first calls run while V8 compiles the solver; a matched sample calls it several times and a
      // batch hundreds of times, so the steady state is timed (after WARMUP calls) and the cold first
      // call is reported beside it.
      const c0 = performance.now();
      solveAssignment(matrices[0]);
      const coldMs = performance.now() - c0;
      const ours = timeRepeated((c: number[][]) => solveAssignment(c), { repeats, warmup: WARMUP, setup: (i) => matrices[((i % 3) + 3) % 3] });
      const totals = matrices.map((c) => solveAssignment(c).total);
      const measurements: Measurement[] = [
        { variant: 'cairn solveAssignment', stats: ours.stats, peakRssMiB: peakRssMiB(), memorySource: 'ru_maxrss of the case process' },
      ];
      const ratios: Ratio[] = [];
      const notes = [
        `costs uniform in [0, 1), ${matrices.length} matrices cycled over the runs (same matrices for both)`,
        `cairn timed after ${WARMUP} warm-up calls (JIT compilation done); the very first call in the process took ${coldMs.toFixed(1)} ms`,
      ];
      if (!hasScipy()) {
        notes.push(`scipy skipped: ${missingReason(`${PYTHON} with scipy.optimize`)}`);
        return { name, title: this.title, measurements, ratios, notes };
      }
      const files = matrices.map((c, k) => {
        const f = path.join(ctx.tmp, `${name}-${k}.csv`);
        writeFileSync(f, c.map((row) => row.map((v) => v.toPrecision(17)).join(',')).join('\n') + '\n');
        return f;
      });
      const perMatrix = Math.max(1, Math.ceil(repeats / matrices.length));
      ctx.log(`${name}: scipy, ${perMatrix} runs per matrix`);
      const r = spawnMeasured(PYTHON, [path.join(ctx.root, 'test/bench/peers/lsa.py'), String(perMatrix), ...files], { timeFile: path.join(ctx.tmp, `${name}-gnutime.txt`) });
      if (r.status !== 0) {
        notes.push(`scipy failed with status ${r.status}: ${r.stderr.trim().split('\n').slice(-3).join(' / ')}`);
        return { name, title: this.title, measurements, ratios, notes };
      }
      const out = JSON.parse(r.stdout) as { python: string; numpy: string; scipy: string; matrices: { times_ms: number[]; total: number }[] };
      const times = out.matrices.flatMap((m) => m.times_ms);
      const maxDiff = Math.max(...out.matrices.map((m, k) => Math.abs(m.total - totals[k]) / Math.max(1, Math.abs(totals[k]))));
      const stats = summarize(times);
      measurements.push({
        variant: 'scipy linear_sum_assignment',
        stats,
        wall: summarize([r.wallMs]),
        peakRssMiB: r.peakRssMiB,
        memorySource: '/usr/bin/time -v of the python3 process',
        extra: {
          version: `Python ${out.python}, numpy ${out.numpy}, scipy ${out.scipy}`,
          'process start-up, imports and reading the CSVs (wall minus the timed runs)': `${((r.wallMs - times.reduce((x, y) => x + y, 0)) / 1000).toFixed(2)} s`, 'optimal totals agree to (relative)': maxDiff.toExponential(1) },
      });
      if (maxDiff > 1e-9) notes.push(`WARNING: optimal totals differ from scipy's by ${maxDiff.toExponential(2)} (relative)`);
      const ratio = stats.median / ours.stats.median;
      ratios.push({ name: `scipy / cairn assignment, ${n} x ${n}`, value: ratio, ...(target ? { target: '>= 1x (no slower than scipy)', met: ratio >= 1 } : {}) });
      notes.push('scipy time measured inside Python (time.perf_counter around the call); wall time includes Python start-up, imports and reading the CSVs');
      return { name, title: this.title, measurements, ratios, notes };
    },
  };
}

export const assign300 = assignmentCase(300, true);
export const assign1000 = assignmentCase(1000, false);
