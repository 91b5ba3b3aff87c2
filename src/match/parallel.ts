/**
 * Matching many samples, serially or on worker threads, with identical
 * results either way: each sample's generator is seeded from a per-sample
 * seed the caller derives from the run seed and the sample id (never from the
 * order or the thread), and matchSample is deterministic given its generator.
 */
import { Worker } from 'node:worker_threads';
import { FitError, InputError, UsageError } from '../errors.js';
import { createRng } from '../random.js';
import type { Sample, Template } from '../types.js';
import { matchSample, type MatchOptions, type MatchResult } from './match-sample.js';

export interface SampleJob {
  readonly sample: Sample;
  /** 32-bit seed of this sample's generator. */
  readonly seed: number;
}

export interface TimedResult {
  /** The result, or null when the sample could not be matched (see `error`). */
  readonly result: MatchResult | null;
  /** Why matching failed (a FitError's message), or null. */
  readonly error: string | null;
  /** Wall time of matchSample for this sample, seconds. */
  readonly seconds: number;
}

/**
 * Match each job in order on this thread. A FitError (no plausible pose) is
 * recorded per sample; any other error propagates.
 */
export function matchSamplesSerial(template: Template, jobs: readonly SampleJob[], options: Omit<MatchOptions, 'rng'>): TimedResult[] {
  return jobs.map((job) => {
    const start = performance.now();
    try {
      const result = matchSample(template, job.sample, { ...options, rng: createRng(job.seed) });
      return { result, error: null, seconds: (performance.now() - start) / 1000 };
    } catch (e) {
      if (e instanceof FitError) return { result: null, error: e.message, seconds: (performance.now() - start) / 1000 };
      throw e;
    }
  });
}

function rebuildError(e: { name: string; message: string }): Error {
  if (e.name === 'FitError') return new FitError(e.message);
  if (e.name === 'UsageError') return new UsageError(e.message);
  if (e.name === 'InputError') return new InputError({ file: '' }, e.message);
  return new Error(e.message);
}

/**
 * Match the jobs on `threads` worker threads (results in job order). FitErrors
 * are recorded per sample as in matchSamplesSerial; the first other error (by
 * job order) is thrown after all workers have stopped.
 */
export async function matchSamplesParallel(
  template: Template,
  jobs: readonly SampleJob[],
  options: Omit<MatchOptions, 'rng'>,
  threads: number,
): Promise<TimedResult[]> {
  if (!Number.isInteger(threads) || threads < 1) throw new UsageError(`threads must be a positive integer, got ${threads}`);
  const count = Math.min(threads, jobs.length);
  if (count <= 1) return matchSamplesSerial(template, jobs, options);
  // Source (.ts under tsx or vitest) or compiled (.js) worker next to this module.
  const here = new URL(import.meta.url);
  const isSource = here.pathname.endsWith('.ts');
  const workerUrl = new URL(isSource ? './match-worker.ts' : './match-worker.js', here);
  // Under a TypeScript runner (tests, tsx) the worker registers tsx's loader before importing the source.
  const bootstrap = `import('tsx/esm/api').then((m) => { m.register(); return import(${JSON.stringify(workerUrl.href)}); });`;
  const results: (TimedResult | undefined)[] = new Array(jobs.length);
  const errors: ({ name: string; message: string } | undefined)[] = new Array(jobs.length);
  let next = 0;
  await Promise.all(
    Array.from({ length: count }, () =>
      new Promise<void>((resolve, reject) => {
        const worker = isSource ? new Worker(bootstrap, { eval: true, workerData: { template } }) : new Worker(workerUrl, { workerData: { template } });
        const feed = (): void => {
          if (next >= jobs.length) {
            void worker.terminate().then(() => resolve());
            return;
          }
          const index = next++;
          worker.postMessage({ index, sample: jobs[index].sample, seed: jobs[index].seed, options });
        };
        worker.on('message', (m: { index: number; result?: MatchResult; seconds?: number; error?: { name: string; message: string } }) => {
          if (m.error && m.error.name === 'FitError') results[m.index] = { result: null, error: m.error.message, seconds: m.seconds ?? 0 };
          else if (m.error) errors[m.index] = m.error;
          else results[m.index] = { result: m.result as MatchResult, error: null, seconds: m.seconds as number };
          feed();
        });
        worker.on('error', reject);
        feed();
      }),
    ),
  );
  const firstError = errors.findIndex((e) => e !== undefined);
  if (firstError >= 0) throw rebuildError(errors[firstError] as { name: string; message: string });
  return results as TimedResult[];
}
