/**
 * Worker-thread entry for `matchSampleStream`: receives the template once
 * (workerData), then sample jobs { index, sample, seed, options } and answers
 * { index, result, seconds } or { index, error }. No file access, no printing.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { createRng } from '../random.js';
import type { Sample, Template } from '../types.js';
import { matchSample, type MatchOptions } from './match-sample.js';

interface Job {
  index: number;
  sample: Sample;
  seed: number;
  options: Omit<MatchOptions, 'rng'>;
}

const template = (workerData as { template: Template }).template;

parentPort?.on('message', (job: Job) => {
  const start = performance.now();
  try {
    const result = matchSample(template, job.sample, { ...job.options, rng: createRng(job.seed) });
    parentPort?.postMessage({ index: job.index, result, seconds: (performance.now() - start) / 1000 });
  } catch (e) {
    const err = e instanceof Error ? { name: e.name, message: e.message } : { name: 'Error', message: String(e) };
    parentPort?.postMessage({ index: job.index, error: err, seconds: (performance.now() - start) / 1000 });
  }
});
