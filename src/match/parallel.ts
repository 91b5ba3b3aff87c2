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

function rebuildError(e: { name: string; message: string }): Error {
  if (e.name === 'FitError') return new FitError(e.message);
  if (e.name === 'UsageError') return new UsageError(e.message);
  if (e.name === 'InputError') return new InputError({ file: '' }, e.message);
  return new Error(e.message);
}

/** How `matchSampleStream` runs. */
export interface StreamOptions {
  /** Worker threads; 1 matches on this thread. */
  readonly threads: number;
  /** Most jobs taken from the source and not yet reported (default 2 x threads; at least threads). */
  readonly window?: number;
  /** When it aborts, no further job is taken, the workers are terminated and results still in flight are dropped. */
  readonly signal?: AbortSignal;
}

/** What `matchSampleStream` did. */
export interface StreamOutcome {
  /** Jobs reported through onResult. */
  readonly completed: number;
  /** Whether the run stopped early because `signal` aborted. */
  readonly aborted: boolean;
}

/** Errors that belong to one sample (its data), recorded rather than thrown. */
const PER_SAMPLE_ERRORS = new Set(['FitError', 'InputError']);

function perSampleError(e: unknown): string | null {
  if (e instanceof FitError || e instanceof InputError) return e.message;
  return null;
}

/**
 * Match jobs taken lazily from `jobs`, calling `onResult(index, job, timed)`
 * as soon as each is done (index = position in `jobs`; under threads > 1 the
 * calls come in completion order, not job order). At most `window` jobs are
 * held at once, so memory stays bounded however many jobs the source yields:
 * the caller writes each result out and drops it. Results are the same for
 * any `threads` (each job carries its own seed). FitError and InputError are
 * reported per job through `timed.error`; any other error (including one
 * thrown by onResult or by the source) stops the workers and is thrown.
 * Between jobs on this thread the event loop is given a turn, so a signal
 * handler that aborts `signal` is seen before the next job starts.
 */
export async function matchSampleStream<J extends SampleJob>(
  template: Template,
  jobs: Iterable<J>,
  options: Omit<MatchOptions, 'rng'>,
  onResult: (index: number, job: J, timed: TimedResult) => void,
  stream: StreamOptions,
): Promise<StreamOutcome> {
  const { threads, signal } = stream;
  if (!Number.isInteger(threads) || threads < 1) throw new UsageError(`threads must be a positive integer, got ${threads}`);
  const window = Math.max(threads, stream.window ?? 2 * threads);
  const source = jobs[Symbol.iterator]();
  if (threads === 1) {
    let index = 0;
    for (;;) {
      if (signal?.aborted) return { completed: index, aborted: true };
      const step = source.next();
      if (step.done) return { completed: index, aborted: false };
      const job = step.value;
      const start = performance.now();
      let timed: TimedResult;
      try {
        const result = matchSample(template, job.sample, { ...options, rng: createRng(job.seed) });
        timed = { result, error: null, seconds: (performance.now() - start) / 1000 };
      } catch (e) {
        const message = perSampleError(e);
        if (message === null) throw e;
        timed = { result: null, error: message, seconds: (performance.now() - start) / 1000 };
      }
      onResult(index++, job, timed);
      // Let pending signals and I/O callbacks run before the next sample.
      await new Promise<void>((resolve) => setImmediate(resolve));
    }
  }

  const here = new URL(import.meta.url);
  const isSource = here.pathname.endsWith('.ts');
  const workerUrl = new URL(isSource ? './match-worker.ts' : './match-worker.js', here);
  const bootstrap = `import('tsx/esm/api').then((m) => { m.register(); return import(${JSON.stringify(workerUrl.href)}); });`;
  const workers: Worker[] = [];
  const outstanding: number[] = [];
  const inFlight = new Map<number, J>();
  let next = 0;
  let completed = 0;
  let exhausted = false;
  let finished = false;

  return await new Promise<StreamOutcome>((resolve, reject) => {
    const stopAll = (): Promise<unknown> => Promise.all(workers.map((w) => w.terminate()));
    const finish = (outcome: StreamOutcome | { error: unknown }): void => {
      if (finished) return;
      finished = true;
      signal?.removeEventListener('abort', onAbort);
      inFlight.clear();
      void stopAll().then(
        () => ('error' in outcome ? reject(outcome.error) : resolve(outcome)),
        () => ('error' in outcome ? reject(outcome.error) : resolve(outcome)),
      );
    };
    const onAbort = (): void => finish({ completed, aborted: true });
    const pump = (): void => {
      try {
        while (!finished && !exhausted && inFlight.size < window && !signal?.aborted) {
          const step = source.next();
          if (step.done) {
            exhausted = true;
            break;
          }
          const index = next++;
          const job = step.value;
          inFlight.set(index, job);
          let w = 0;
          for (let k = 1; k < workers.length; k++) if (outstanding[k] < outstanding[w]) w = k;
          outstanding[w]++;
          workers[w].postMessage({ index, sample: job.sample, seed: job.seed, options });
        }
      } catch (e) {
        finish({ error: e });
        return;
      }
      if (signal?.aborted) finish({ completed, aborted: true });
      else if (exhausted && inFlight.size === 0) finish({ completed, aborted: false });
    };
    if (signal?.aborted) {
      finished = true;
      resolve({ completed: 0, aborted: true });
      return;
    }
    signal?.addEventListener('abort', onAbort);
    for (let k = 0; k < threads; k++) {
      const worker = isSource ? new Worker(bootstrap, { eval: true, workerData: { template } }) : new Worker(workerUrl, { workerData: { template } });
      workers.push(worker);
      outstanding.push(0);
      worker.on('message', (m: { index: number; result?: MatchResult; seconds?: number; error?: { name: string; message: string } }) => {
        if (finished) return;
        outstanding[k]--;
        const job = inFlight.get(m.index);
        if (job === undefined) return;
        inFlight.delete(m.index);
        if (m.error && !PER_SAMPLE_ERRORS.has(m.error.name)) {
          finish({ error: rebuildError(m.error) });
          return;
        }
        const timed: TimedResult = m.error
          ? { result: null, error: m.error.message, seconds: m.seconds ?? 0 }
          : { result: m.result as MatchResult, error: null, seconds: m.seconds as number };
        try {
          completed++;
          onResult(m.index, job, timed);
        } catch (e) {
          finish({ error: e });
          return;
        }
        pump();
      });
      worker.on('error', (e) => finish({ error: e }));
    }
    pump();
  });
}
