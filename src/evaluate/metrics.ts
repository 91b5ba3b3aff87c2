/**
 * Accuracy metrics for label proposals against hand labels: overall and top-3
 * accuracy, per-cell and per-sample accuracy, confused pairs, false-label
 * rate and a reliability (calibration) table with the expected calibration
 * error. Pure functions on plain data.
 */
import { UsageError } from '../errors.js';

/** One scored point: the hand label (truth) and what the matcher proposed. */
export interface ScoredPoint {
  readonly sample: string;
  /** The hand label that was hidden from the matcher. */
  readonly truth: string;
  /** Proposed label, or null when the matcher left the point unlabelled. */
  readonly proposed: string | null;
  /** Posterior confidence of the proposal in [0, 1] (0 when unlabelled). */
  readonly confidence: number;
  /** Top alternatives by posterior, best first (the proposal usually first). */
  readonly alternatives: readonly string[];
}

export interface AccuracyCount {
  readonly key: string;
  /** Labelled points scored. */
  readonly points: number;
  /** Points whose proposal equals the hand label. */
  readonly correct: number;
  /** Points given some label. */
  readonly proposed: number;
  /** correct / points. */
  readonly accuracy: number;
}

export interface CalibrationBin {
  /** Bin bounds [lower, upper) on confidence; the last bin includes 1. */
  readonly lower: number;
  readonly upper: number;
  readonly count: number;
  /** Mean confidence of the proposals in the bin (NaN when empty). */
  readonly meanConfidence: number;
  /** Fraction of them that are correct (NaN when empty). */
  readonly accuracy: number;
}

export interface ConfusedPair {
  readonly truth: string;
  readonly proposed: string;
  readonly count: number;
}

export interface AccuracyReport {
  /** Labelled points scored. */
  readonly points: number;
  /** Correct proposals / labelled points (an unlabelled point counts as not correct). */
  readonly accuracy: number;
  /** Hand label among the top-3 alternatives / labelled points. */
  readonly top3Accuracy: number;
  /** Points given a label / labelled points. */
  readonly coverage: number;
  /** Wrong proposals / proposals made (the false-label rate). */
  readonly falseLabelRate: number;
  readonly perCell: readonly AccuracyCount[];
  readonly perSample: readonly AccuracyCount[];
  /** Most frequent (truth, proposed) confusions, most frequent first. */
  readonly confusedPairs: readonly ConfusedPair[];
  readonly calibration: readonly CalibrationBin[];
  /**
   * Expected calibration error over the proposals made:
   * ECE = sum_b (n_b / N) |acc_b - conf_b| (Naeini, Cooper & Hauskrecht 2015; Guo et al. 2017, eq. 3).
   */
  readonly expectedCalibrationError: number;
}

function countBy(points: readonly ScoredPoint[], key: (p: ScoredPoint) => string): AccuracyCount[] {
  const groups = new Map<string, { points: number; correct: number; proposed: number }>();
  for (const p of points) {
    const k = key(p);
    let g = groups.get(k);
    if (!g) groups.set(k, (g = { points: 0, correct: 0, proposed: 0 }));
    g.points++;
    if (p.proposed !== null) g.proposed++;
    if (p.proposed === p.truth) g.correct++;
  }
  return [...groups.entries()]
    .map(([k, g]) => ({ key: k, ...g, accuracy: g.correct / g.points }))
    .sort((a, b) => a.accuracy - b.accuracy || (a.key < b.key ? -1 : a.key > b.key ? 1 : 0));
}

/**
 * Reliability table: proposals binned by confidence into `bins` equal-width
 * bins on [0, 1] (DeGroot & Fienberg 1983 reliability diagram; Guo et al. 2017).
 * Unlabelled points are not proposals and are left out.
 */
export function calibrationTable(points: readonly ScoredPoint[], bins = 10): CalibrationBin[] {
  if (!Number.isInteger(bins) || bins < 1) throw new UsageError(`calibrationTable: bins must be a positive integer, got ${bins}`);
  const count = new Array<number>(bins).fill(0);
  const conf = new Array<number>(bins).fill(0);
  const correct = new Array<number>(bins).fill(0);
  for (const p of points) {
    if (p.proposed === null) continue;
    const c = Math.min(1, Math.max(0, p.confidence));
    const b = Math.min(bins - 1, Math.floor(c * bins));
    count[b]++;
    conf[b] += c;
    if (p.proposed === p.truth) correct[b]++;
  }
  return count.map((n, b) => ({
    lower: b / bins,
    upper: (b + 1) / bins,
    count: n,
    meanConfidence: n ? conf[b] / n : NaN,
    accuracy: n ? correct[b] / n : NaN,
  }));
}

/** ECE = sum_b (n_b / N) |acc_b - conf_b| over non-empty bins (Guo et al. 2017, eq. 3). 0 when nothing was proposed. */
export function expectedCalibrationError(table: readonly CalibrationBin[]): number {
  const total = table.reduce((s, b) => s + b.count, 0);
  if (total === 0) return 0;
  let e = 0;
  for (const b of table) if (b.count > 0) e += (b.count / total) * Math.abs(b.accuracy - b.meanConfidence);
  return e;
}

/** All metrics of an evaluation run. Throws UsageError when there are no labelled points to score. */
export function accuracyReport(points: readonly ScoredPoint[], options: { bins?: number; topPairs?: number } = {}): AccuracyReport {
  if (points.length === 0) throw new UsageError('accuracyReport: no labelled points to score');
  let correct = 0, top3 = 0, proposed = 0, wrong = 0;
  const confusions = new Map<string, ConfusedPair>();
  for (const p of points) {
    if (p.proposed === p.truth) correct++;
    if (p.alternatives.slice(0, 3).includes(p.truth)) top3++;
    if (p.proposed !== null) {
      proposed++;
      if (p.proposed !== p.truth) {
        wrong++;
        const key = JSON.stringify([p.truth, p.proposed]);
        const c = confusions.get(key);
        confusions.set(key, { truth: p.truth, proposed: p.proposed, count: (c?.count ?? 0) + 1 });
      }
    }
  }
  const calibration = calibrationTable(points, options.bins ?? 10);
  const confusedPairs = [...confusions.values()]
    .sort((a, b) => b.count - a.count || (a.truth + '\u0000' + a.proposed < b.truth + '\u0000' + b.proposed ? -1 : 1))
    .slice(0, options.topPairs ?? 20);
  return {
    points: points.length,
    accuracy: correct / points.length,
    top3Accuracy: top3 / points.length,
    coverage: proposed / points.length,
    falseLabelRate: proposed ? wrong / proposed : 0,
    perCell: countBy(points, (p) => p.truth),
    perSample: countBy(points, (p) => p.sample),
    confusedPairs,
    calibration,
    expectedCalibrationError: expectedCalibrationError(calibration),
  };
}
