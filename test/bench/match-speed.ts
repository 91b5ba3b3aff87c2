/**
 * Matching speed (a benchmark, not a test; timings depend on the machine and its load):
 *
 *   npx tsx test/bench/match-speed.ts [--animals N] [--seed S] [--max-trials T] [--arrangement ganglia|uniform]
 *
 * One thread. A 190-cell template (built from the layout itself, so that the
 * template module's cost is not counted) and samples of 190 points (171 cells
 * detected + 19 outliers, any rotation, bend, scale), default jitter.
 * Reports the one-off template preparation (descriptors, density table, cell
 * grids), then per sample the wall and CPU time (process.cpuUsage, user +
 * system) of matchSample; the medians over samples, and hypotheses (trials)
 * per second of whole-match time. On a shared machine the CPU time is the
 * steadier figure.
 */
import { matchSample, prepareTemplate } from '../../src/match/match-sample.js';
import { createRng } from '../../src/random.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { templateFromTraining } from '../match/support.js';
import { argValue, referenceSortMs, summarize } from './harness.js';

const count = Number(argValue('animals', '10'));
const seed = Number(argValue('seed', '11'));
const maxTrials = argValue('max-trials', '');
/** How cells fill the head (test/support/animals.ts): ganglia with gaps (as real heads group nuclei), or uniform packing. */
const arrangement = argValue('arrangement', 'ganglia');
if (arrangement !== 'ganglia' && arrangement !== 'uniform') throw new Error(`--arrangement must be ganglia or uniform, got ${arrangement}`);

const rng = createRng(seed);
const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement });
const template = templateFromTraining(layout, rng, { members: 25 });
const cpuSeconds = (since: NodeJS.CpuUsage): number => {
  const u = process.cpuUsage(since);
  return (u.user + u.system) / 1e6;
};
let start = performance.now();
let cpuStart = process.cpuUsage();
prepareTemplate(template);
const prepSeconds = (performance.now() - start) / 1000;
const prepCpu = cpuSeconds(cpuStart);

const times: number[] = [];
const cpuTimes: number[] = [];
const rates: number[] = [];
// Warm-up (JIT) on one extra animal, not counted.
matchSample(template, generateAnimal(layout, rng, 'warmup', { missingFraction: 0.1, outlierFraction: 0.1 }).sample, { rng: createRng(1) });
for (let a = 0; a < count; a++) {
  const animal = generateAnimal(layout, rng, `speed${a}`, { missingFraction: 0.1, outlierFraction: 0.1 });
  start = performance.now();
  cpuStart = process.cpuUsage();
  const result = matchSample(template, animal.sample, {
    rng: createRng(a + 1),
    ...(maxTrials ? { maxTrials: Number(maxTrials) } : {}),
  });
  const seconds = (performance.now() - start) / 1000;
  const cpu = cpuSeconds(cpuStart);
  times.push(seconds);
  cpuTimes.push(cpu);
  rates.push(result.trials / seconds);
  console.log(`${animal.sample.id}: ${animal.sample.coords.length} points, ${seconds.toFixed(3)} s wall, ${cpu.toFixed(3)} s CPU, ${result.trials} trials (${result.stopReason})`);
}
const median = summarize(times).median;
const meanRate = rates.reduce((s, r) => s + r, 0) / rates.length;
console.log(`template preparation (once per template): ${prepSeconds.toFixed(2)} s wall, ${prepCpu.toFixed(2)} s CPU`);
console.log(`median time to match 190 points to 190 cells (${arrangement} layout), one thread: ${median.toFixed(3)} s wall, ${summarize(cpuTimes).median.toFixed(3)} s CPU (target <= 0.3 s)`);
console.log(`hypotheses per second of whole-match time: ${meanRate.toFixed(0)}`);
console.log(`reference workload on this machine (to scale to another): sorting 1,000,000 doubles took ${referenceSortMs().toFixed(0)} ms (best of 5)`);
