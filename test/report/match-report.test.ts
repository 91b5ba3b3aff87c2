import { describe, expect, it } from 'vitest';
import { POSE_MARGIN_SETTLED, type MatchResult } from '../../src/match/match-sample.js';
import {
  buildMatchReport,
  closeCalls,
  MATCH_REPORT_FIGURES,
  mergeCloseCalls,
  matchedFigureInput,
  renderMatchHtml,
  type MatchReportRow,
} from '../../src/report/match-report.js';
import { measuredAccuracyFromEvaluateJson } from '../../src/report/html.js';
import type { Sample } from '../../src/types.js';
import { testTemplate } from './support/template.js';
import { wellFormedProblems } from './support/xml.js';

const sample: Sample = {
  id: 'gk-07',
  source: 'gk-07.csv',
  dim: 3,
  coords: [
    [1, 2, 3],
    [0, 0, 0],
  ],
  labels: [null, null],
  rows: [2, 3],
  features: { names: [], values: [[], []] },
};

function result(labels: (string | null)[], confidences: number[]): MatchResult {
  return {
    sampleId: 'gk-07',
    method: 'ransac',
    // A quarter turn about z, then a shift: (x, y, z) -> (-y + 10, x + 20, z + 30).
    transform: { kind: 'rigid', linear: [[0, -1, 0], [1, 0, 0], [0, 0, 1]], translation: [10, 20, 30] },
    proposals: labels.map((label, i) => ({ label, confidence: confidences[i], distance: label === null ? null : 1, alternatives: [] })),
    hits: 1,
    score: 2,
    trials: 10,
    stopReason: 'converged',
    nonRigid: false,
  };
}

const row = (id: string, proposed: number, meanConfidence: number | null, error: string | null = null, poseMargin: number | null = error ? null : 50): MatchReportRow => ({
  id,
  source: `${id}.csv`,
  points: 10,
  proposed,
  meanConfidence,
  stopReason: error ? null : 'converged',
  poseMargin,
  error,
});

describe('matchedFigureInput', () => {
  it('maps each sample point into the template frame by y = A x + t and names it by its input row', () => {
    const f = matchedFigureInput(sample, result(['AB1', null], [0.9, 0.6]));
    expect(f.sampleId).toBe('gk-07');
    // By hand: A (1,2,3) = (-2, 1, 3); plus t = (8, 21, 33). A 0 + t = t.
    expect(f.points[0].coords).toEqual([8, 21, 33]);
    expect(f.points[1].coords).toEqual([10, 20, 30]);
    expect(f.points.map((p) => [p.label, p.confidence, p.name])).toEqual([
      ['AB1', 0.9, 'row 2'],
      [null, 0.6, 'row 3'],
    ]);
  });
});

describe('closeCalls and mergeCloseCalls', () => {
  const four: Sample = { ...sample, coords: [[0, 0, 0], [1, 0, 0], [2, 0, 0], [3, 0, 0]], labels: [null, null, null, null], rows: [2, 3, 5, 6], features: { names: [], values: [[], [], [], []] } };
  const r: MatchResult = {
    ...result(['AB1', 'AB2', null, 'AB4'], [0.5, 0.9, 0.7, 0.6]),
    proposals: [
      // margin 0.5 - 0.4 = 0.1
      { label: 'AB1', confidence: 0.5, distance: 1, alternatives: [{ label: 'AB1', probability: 0.5 }, { label: 'AB9', probability: 0.4 }] },
      // margin 0.9 - 0.05 = 0.85
      { label: 'AB2', confidence: 0.9, distance: 1, alternatives: [{ label: 'AB2', probability: 0.9 }, { label: 'AB3', probability: 0.05 }] },
      // unlabelled: not a call
      { label: null, confidence: 0.7, distance: null, alternatives: [{ label: 'AB5', probability: 0.3 }] },
      // the runner-up is more probable than the proposal (the one-to-one assignment chose otherwise): margin -0.1
      { label: 'AB4', confidence: 0.3, distance: 1, alternatives: [{ label: 'AB6', probability: 0.4 }, { label: 'AB4', probability: 0.3 }] },
    ],
  };

  it('lists labelled proposals with a runner-up, smallest margin (confidence - runner-up probability) first, at most limit', () => {
    const calls = closeCalls(four, r);
    expect(calls.map((c) => [c.row, c.label, c.runnerUp])).toEqual([
      [6, 'AB4', 'AB6'],
      [2, 'AB1', 'AB9'],
      [3, 'AB2', 'AB3'],
    ]);
    expect(calls[0]).toEqual({ sampleId: 'gk-07', row: 6, label: 'AB4', confidence: 0.3, runnerUp: 'AB6', runnerUpProbability: 0.4 });
    expect(closeCalls(four, r, 1)).toHaveLength(1);
    // A given label (alternatives: itself only) is never a call.
    expect(closeCalls(sample, { ...result(['AB1', null], [1, 0.5]), proposals: [{ label: 'AB1', confidence: 1, distance: 0, alternatives: [{ label: 'AB1', probability: 1 }] }, { label: null, confidence: 0.5, distance: null, alternatives: [] }] })).toEqual([]);
  });

  it('merges lists in any order to the same list (ties by sample id, then row)', () => {
    const a = closeCalls(four, r);
    const b = closeCalls({ ...four, id: 'gk-08' }, r);
    expect(mergeCloseCalls(a, b, 4)).toEqual(mergeCloseCalls(b, a, 4));
    expect(mergeCloseCalls(a, b, 4).map((c) => `${c.sampleId}:${c.row}`)).toEqual(['gk-07:6', 'gk-08:6', 'gk-07:2', 'gk-08:2']);
  });
});

describe('buildMatchReport', () => {
  const template = testTemplate({ cells: 12 });
  const base = { template, templatePath: 'lab.json', method: 'ransac', hitRadius: 3, seed: 1 };

  it('puts the verification caution first and summarises samples, points, proposals and the proposal-weighted mean confidence', () => {
    const page = buildMatchReport({ ...base, rows: [row('a', 8, 0.9), row('b', 2, 0.4), row('c', 0, null, 'c.csv:3: column "x": not a number')], figures: [] });
    expect(page.cautions[0]).toContain('a person must check every proposed label');
    const value = (term: string) => page.summary.find((s) => s.term === term)?.value;
    expect(value('samples')).toBe('3 (2 matched, 1 failed)');
    expect(value('points')).toBe('30');
    expect(value('proposed labels')).toBe('10 (33.3% of points)');
    // (8 x 0.9 + 2 x 0.4) / 10 = 0.8
    expect(value('mean confidence of proposals')).toBe('0.800');
    expect(value('pose search stopped')).toBe('converged (2)');
    expect(value(`orientation not settled (pose margin < ${POSE_MARGIN_SETTLED} nats)`)).toBe('none');
  });

  it('names the samples whose orientation is not settled and shows every pose margin in the table', () => {
    const rows = [row('a', 8, 0.9, null, 3.2), row('b', 2, 0.4, null, 40), row('c', 5, 0.3, null, -1.5), row('d', 5, 0.3, null, null), row('e', 0, null, 'e.csv: bad')];
    const page = buildMatchReport({ ...base, rows, figures: [] });
    const value = page.summary.find((s) => s.term === `orientation not settled (pose margin < ${POSE_MARGIN_SETTLED} nats)`)?.value;
    // A margin of null (no other pose screened) is not counted; the failed sample is not among the matched.
    expect(value).toBe('2 of 4: a, c (give a few labels and match again)');
    const html = page.sections[0].html;
    expect(html).toContain('pose margin');
    expect(html).toContain('3.2');
    expect(html).toContain('-1.5');
  });

  it(`draws at most ${MATCH_REPORT_FIGURES} figures and says how many samples were matched in all`, () => {
    const cell = template.cells[0];
    const fig = { sampleId: 's', points: [{ coords: cell.mean.slice(), label: cell.label, confidence: 0.7, name: 'row 2' }] };
    const rows = Array.from({ length: 15 }, (_, i) => row(`s${i}`, 1, 0.7));
    const html = renderMatchHtml({ ...base, rows, figures: Array.from({ length: 15 }, (_, i) => ({ ...fig, sampleId: `s${i}` })) });
    expect((html.match(/<figure>/g) ?? []).length).toBe(MATCH_REPORT_FIGURES);
    expect(html).toContain(`first ${MATCH_REPORT_FIGURES} of 15 matched samples`);
    expect(wellFormedProblems(html, { html: true })).toEqual([]);
  });

  it('lists the closest calls in a sortable table when they were collected, and says so when there were none', () => {
    const calls = [{ sampleId: 'a', row: 7, label: 'AB1', confidence: 0.45, runnerUp: 'AB2', runnerUpProbability: 0.4 }];
    const html = renderMatchHtml({ ...base, rows: [row('a', 1, 0.45)], figures: [], closeCalls: calls });
    expect(html).toContain('Closest calls');
    expect(html).toContain('verify these first');
    expect(html).toContain('0.450');
    expect(html).toContain('AB2');
    expect(wellFormedProblems(html, { html: true })).toEqual([]);
    expect(renderMatchHtml({ ...base, rows: [row('a', 1, 0.45)], figures: [], closeCalls: [] })).toContain('No proposal had another label');
    expect(renderMatchHtml({ ...base, rows: [row('a', 1, 0.45)], figures: [] })).not.toContain('Closest calls');
  });

  it('quotes a measured accuracy in place of the "not measured" caution', () => {
    const measured = measuredAccuracyFromEvaluateJson(
      JSON.stringify({ scheme: '5-fold', report: { accuracy: 0.875, points: 800, coverage: 1, falseLabelRate: 0.125, perSample: [1, 2, 3, 4, 5] } }),
      'e.json',
    );
    const page = buildMatchReport({ ...base, rows: [row('a', 1, 0.5)], figures: [], measured });
    expect(page.cautions.join(' ')).toContain('gave the right label to 87.5% of labelled points');
    expect(page.cautions.join(' ')).not.toContain('has not been measured');
  });
});
