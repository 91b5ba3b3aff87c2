import { describe, expect, it } from 'vitest';
import { accuracyReport, calibrationTable, expectedCalibrationError, type ScoredPoint } from '../../src/evaluate/metrics.js';

function pt(sample: string, truth: string, proposed: string | null, confidence: number, alternatives: string[] = []): ScoredPoint {
  return { sample, truth, proposed, confidence, alternatives: proposed ? [proposed, ...alternatives] : alternatives };
}

describe('accuracyReport', () => {
  // Hand-worked example: 5 labelled points in two samples.
  const points = [
    pt('s1', 'A', 'A', 0.95),
    pt('s1', 'B', 'C', 0.55, ['B']),
    pt('s1', 'C', null, 0),
    pt('s2', 'A', 'A', 0.85),
    pt('s2', 'B', 'C', 0.65, ['D', 'E', 'B']),
  ];
  const r = accuracyReport(points);

  it('counts an unlabelled point as not correct and not as a proposal', () => {
    expect(r.points).toBe(5);
    expect(r.accuracy).toBeCloseTo(2 / 5, 12);
    expect(r.coverage).toBeCloseTo(4 / 5, 12);
    expect(r.falseLabelRate).toBeCloseTo(2 / 4, 12);
  });

  it('counts top-3 only within the first three alternatives', () => {
    // A, B (2nd alternative), A are in the top 3; the last B is 4th.
    expect(r.top3Accuracy).toBeCloseTo(3 / 5, 12);
  });

  it('lists the most confused pair first', () => {
    expect(r.confusedPairs[0]).toEqual({ truth: 'B', proposed: 'C', count: 2 });
  });

  it('gives per-cell and per-sample accuracy sorted worst first', () => {
    const byCell = Object.fromEntries(r.perCell.map((c) => [c.key, c.accuracy]));
    expect(byCell).toEqual({ A: 1, B: 0, C: 0 });
    expect(r.perSample.map((s) => [s.key, s.correct, s.points])).toEqual([
      ['s1', 1, 3],
      ['s2', 1, 2],
    ]);
  });

  it('computes the expected calibration error by hand', () => {
    // Bins of width 0.1 with proposals: 0.55 (wrong), 0.65 (wrong), 0.85 (right), 0.95 (right).
    // ECE = 1/4 (|0 - .55| + |0 - .65| + |1 - .85| + |1 - .95|) = 1.4 / 4 = 0.35 (hand derivation).
    expect(r.expectedCalibrationError).toBeCloseTo(0.35, 12);
  });

  it('refuses to score nothing', () => {
    expect(() => accuracyReport([])).toThrow('no labelled points');
  });
});

describe('calibrationTable', () => {
  it('puts confidence 1 in the last bin and leaves empty bins as NaN', () => {
    const t = calibrationTable([pt('s', 'A', 'A', 1), pt('s', 'A', 'A', 0.99)], 4);
    expect(t[3].count).toBe(2);
    expect(t[3].accuracy).toBe(1);
    expect(Number.isNaN(t[0].accuracy)).toBe(true);
    expect(expectedCalibrationError(t)).toBeCloseTo(1 - 0.995, 12);
  });

  it('is zero for a perfectly calibrated set', () => {
    // Two proposals at 0.5, one right and one wrong: accuracy 0.5 = confidence 0.5.
    const t = calibrationTable([pt('s', 'A', 'A', 0.5), pt('s', 'A', 'B', 0.5)]);
    expect(expectedCalibrationError(t)).toBe(0);
  });
});
