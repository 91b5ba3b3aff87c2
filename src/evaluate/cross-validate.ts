/**
 * Cross-validation of the whole pipeline on labelled samples: for each fold,
 * build a template without the held-out samples, hide their labels, match
 * them, and compare the proposals with the hidden hand labels.
 */
import { UsageError } from '../errors.js';
import { createRng, shuffle, type Rng } from '../random.js';
import type { Sample } from '../types.js';
import { buildTemplate, type BuildOptions } from '../template/index.js';
import { matchSample, type MatchOptions } from '../match/match-sample.js';
import { accuracyReport, type AccuracyReport, type ScoredPoint } from './metrics.js';

export interface CrossValidationOptions {
  /** Number of folds; default = number of samples (leave-one-out). */
  readonly folds?: number;
  /** Seed for fold assignment and for every match. */
  readonly seed?: number;
  /** Options passed to the template build of each fold. */
  readonly build?: BuildOptions;
  /** Options passed to every match (the rng is derived per sample from the seed). */
  readonly match?: Omit<MatchOptions, 'rng'>;
  /** Called after each held-out sample, for progress reporting. */
  readonly onProgress?: (done: number, total: number, sampleId: string) => void;
}

export interface HeldOutResult {
  readonly sample: string;
  readonly fold: number;
  readonly labelled: number;
  readonly correct: number;
  /** Why the sample could not be scored (the fold's template could not be built), or null. */
  readonly skipped: string | null;
  /** The match's pose margin in nats (MatchResult.poseMargin); null when none or skipped. */
  readonly poseMargin: number | null;
}

export interface CrossValidationResult {
  readonly folds: number;
  readonly report: AccuracyReport;
  readonly samples: readonly HeldOutResult[];
  readonly points: readonly ScoredPoint[];
}

/** Deterministic fold of each sample: a seeded shuffle dealt round-robin into k folds. */
export function assignFolds(count: number, folds: number, rng: Rng): number[] {
  if (!Number.isInteger(folds) || folds < 2) throw new UsageError(`folds must be an integer of at least 2, got ${folds}`);
  if (folds > count) throw new UsageError(`folds (${folds}) cannot exceed the number of samples (${count})`);
  const order = shuffle(
    Array.from({ length: count }, (_, i) => i),
    rng,
  );
  const out = new Array<number>(count);
  order.forEach((sampleIndex, position) => (out[sampleIndex] = position % folds));
  return out;
}

/** A stable 32-bit seed for one sample, from the run seed and the sample id (FNV-1a hash of the id). */
export function sampleSeed(seed: number, id: string): number {
  let h = 0x811c9dc5 ^ (seed >>> 0);
  for (let i = 0; i < id.length; i++) {
    h ^= id.charCodeAt(i);
    h = Math.imul(h, 0x01000193) >>> 0;
  }
  return h >>> 0;
}

/** The sample with every label removed (what the matcher sees). */
export function hideLabels(sample: Sample): Sample {
  return { ...sample, labels: sample.labels.map(() => null) };
}

/**
 * k-fold (default leave-one-out) cross-validation of build + match on labelled
 * samples. Only the held-out samples' hand-labelled points are scored.
 */
export function crossValidate(samples: readonly Sample[], options: CrossValidationOptions = {}): CrossValidationResult {
  if (samples.length < 3) throw new UsageError(`cross-validation needs at least 3 labelled samples, got ${samples.length}`);
  const seed = options.seed ?? 1;
  const k = options.folds ?? samples.length;
  const fold = k === samples.length ? samples.map((_, i) => i) : assignFolds(samples.length, k, createRng(seed));
  const points: ScoredPoint[] = [];
  const results: HeldOutResult[] = [];
  let done = 0;
  for (let f = 0; f < k; f++) {
    const training = samples.filter((_, i) => fold[i] !== f);
    const heldOut = samples.filter((_, i) => fold[i] === f);
    let template;
    let failure: string | null = null;
    try {
      template = buildTemplate(training, options.build).template;
    } catch (e) {
      failure = `template without fold ${f + 1} could not be built: ${e instanceof Error ? e.message : String(e)}`;
    }
    for (const sample of heldOut) {
      const labelled = sample.labels.filter((l) => l !== null).length;
      if (!template || failure) {
        results.push({ sample: sample.id, fold: f, labelled, correct: 0, skipped: failure, poseMargin: null });
        continue;
      }
      const known = new Set(template.cells.map((c) => c.label));
      const result = matchSample(template, hideLabels(sample), {
        ...options.match,
        rng: createRng(sampleSeed(seed, sample.id)),
      });
      let correct = 0;
      sample.labels.forEach((truth, i) => {
        if (truth === null || !known.has(truth)) return;
        const p = result.proposals[i];
        if (p.label === truth) correct++;
        points.push({
          sample: sample.id,
          truth,
          proposed: p.label,
          confidence: p.label === null ? 0 : p.confidence,
          alternatives: p.alternatives.map((a) => a.label),
        });
      });
      results.push({ sample: sample.id, fold: f, labelled, correct, skipped: null, poseMargin: result.poseMargin });
      options.onProgress?.(++done, samples.length, sample.id);
    }
  }
  return { folds: k, report: accuracyReport(points), samples: results, points };
}
