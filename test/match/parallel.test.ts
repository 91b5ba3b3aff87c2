import { describe, expect, it } from 'vitest';
import { matchSampleStream, type SampleJob, type TimedResult } from '../../src/match/parallel.js';
import { createRng } from '../../src/random.js';
import type { Sample } from '../../src/types.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { templateFromTraining } from './support.js';

const rng = createRng(2718);
const layout = generateLayout(rng, { cells: 25, dim: 3 });
const template = templateFromTraining(layout, rng, { members: 6, animal: { jitterScale: 0.4 } });
const samples: Sample[] = Array.from({ length: 8 }, (_, k) => generateAnimal(layout, rng, `p${k}`, { jitterScale: 0.4, outlierFraction: 0.1 }).sample);
const options = { maxTrials: 20 };

/** Run the stream, recording the largest number of jobs taken and not yet reported. */
async function streamed(threads: number, window?: number, source: readonly Sample[] = samples, signal?: AbortSignal) {
  let taken = 0;
  let reported = 0;
  let mostHeld = 0;
  function* jobs(): Generator<SampleJob> {
    for (const [k, sample] of source.entries()) {
      taken++;
      mostHeld = Math.max(mostHeld, taken - reported);
      yield { sample, seed: 1000 + k };
    }
  }
  const results = new Map<number, TimedResult>();
  const order: number[] = [];
  const outcome = await matchSampleStream(
    template,
    jobs(),
    options,
    (index, _job, timed) => {
      reported++;
      results.set(index, timed);
      order.push(index);
    },
    { threads, window, signal },
  );
  return { outcome, results, mostHeld, order };
}

describe('matchSampleStream', () => {
  it('gives the same result per job on one thread and on two worker threads', async () => {
    const one = await streamed(1);
    const two = await streamed(2);
    expect(one.outcome).toEqual({ completed: 8, aborted: false });
    expect(two.outcome).toEqual({ completed: 8, aborted: false });
    for (let i = 0; i < 8; i++) {
      expect(two.results.get(i)?.result?.proposals).toEqual(one.results.get(i)?.result?.proposals);
      expect(two.results.get(i)?.result?.transform).toEqual(one.results.get(i)?.result?.transform);
    }
  }, 120_000);

  it('never holds more than one job on one thread, nor more than the window on worker threads', async () => {
    expect((await streamed(1)).mostHeld).toBe(1);
    const two = await streamed(2, 3);
    expect(two.mostHeld).toBeLessThanOrEqual(3);
    expect(two.mostHeld).toBeGreaterThanOrEqual(2);
  }, 120_000);

  it('records a sample that cannot be matched as its error and goes on', async () => {
    const tiny: Sample = { ...samples[0], id: 'tiny', coords: samples[0].coords.slice(0, 2), labels: [null, null], rows: [2, 3], features: { names: [], values: [[], []] } };
    const r = await streamed(2, undefined, [samples[0], tiny, samples[1]]);
    expect(r.outcome.completed).toBe(3);
    expect(r.results.get(1)?.result).toBeNull();
    expect(r.results.get(1)?.error).toMatch(/\S/);
    expect(r.results.get(0)?.error).toBeNull();
    expect(r.results.get(2)?.error).toBeNull();
  }, 120_000);

  it('stops taking jobs and reports no more results once the signal aborts', async () => {
    for (const threads of [1, 2]) {
      const controller = new AbortController();
      let seen = 0;
      const outcome = await matchSampleStream(
        template,
        samples.map((sample, k) => ({ sample, seed: k })),
        options,
        () => {
          seen++;
          if (seen === 2) controller.abort();
        },
        { threads, signal: controller.signal },
      );
      expect(outcome.aborted).toBe(true);
      expect(outcome.completed).toBe(2);
      expect(seen).toBe(2);
    }
  }, 120_000);
});
