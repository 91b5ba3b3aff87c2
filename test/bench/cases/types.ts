/**
 * Shapes shared by the benchmark cases and the runner (test/bench/run.ts).
 */
import type { Stats } from '../harness.js';

export interface CaseContext {
  /** Fewer repeats and smaller batches: a smoke run. */
  readonly quick: boolean;
  /** Scratch folder for data handed to peers and to spawned commands (removed by the runner). */
  readonly tmp: string;
  /** Repository root. */
  readonly root: string;
  /** Progress lines (stderr). */
  readonly log: (line: string) => void;
  /** Batch size override for the batch case (default 200, 10 under --quick). */
  readonly batchSize?: number;
}

/** One timed thing: ours, a peer, or a baseline. */
export interface Measurement {
  /** Short name of what ran, e.g. "cairn buildTemplate" or "R shapes::procGPA". */
  readonly variant: string;
  /** In-process time (start-up excluded), ms. */
  readonly stats: Stats;
  /** Whole-process wall time including start-up, ms (spawned runs and peers). */
  readonly wall?: Stats;
  /** Peak resident memory, MiB, and how it was obtained. */
  readonly peakRssMiB: number | null;
  readonly memorySource: string;
  /** Extra figures (accuracy, iterations, ...), printed as "key value". */
  readonly extra?: Readonly<Record<string, string>>;
}

export interface Ratio {
  /** e.g. "procGPA / cairn build" */
  readonly name: string;
  readonly value: number;
  /** Human-readable target, e.g. ">= 50x"; absent when there is none. */
  readonly target?: string;
  /** Whether the target was met (absent when there is none). */
  readonly met?: boolean;
}

export interface CaseResult {
  readonly name: string;
  readonly title: string;
  readonly measurements: Measurement[];
  readonly ratios: Ratio[];
  /** Free-text notes: skipped peers, fallbacks, data description. */
  readonly notes: string[];
  /** RSS of the case's process before the case started (Node + tsx + modules), MiB. */
  readonly baselineRssMiB: number;
  /** When the case ran (ISO time) and the load average (1, 5, 15 min) just before it; set by the runner. */
  readonly ranAt?: string;
  readonly loadBefore?: readonly number[];
  /** The command of the run it came from (set by the runner). */
  readonly command?: string;
}

/** What a case returns; the runner adds the rest. */
export type CaseOutcome = Omit<CaseResult, 'baselineRssMiB' | 'ranAt' | 'loadBefore' | 'command'>;

export interface BenchCase {
  readonly name: string;
  readonly title: string;
  run(ctx: CaseContext): Promise<CaseOutcome> | CaseOutcome;
}
