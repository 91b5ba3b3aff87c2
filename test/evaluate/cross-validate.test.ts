import { describe, expect, it } from 'vitest';
import { assignFolds, crossValidate, hideLabels, sampleSeed } from '../../src/evaluate/cross-validate.js';
import { renderEvaluateText } from '../../src/cli/evaluate.js';
import { POSE_MARGIN_SETTLED } from '../../src/match/match-sample.js';
import { createRng } from '../../src/random.js';
import { buildEvaluateReport } from '../../src/report/evaluate-report.js';
import { generateAnimal, generateLayout } from '../support/animals.js';

// A small, well-separated invented head: 40 cells 4 um apart with 0.4-0.8 um jitter,
// so that a working pipeline labels most held-out points correctly.
function smallSet(count: number) {
  const rng = createRng(4242);
  const layout = generateLayout(rng, { cells: 40, nearestSpacing: 4, jitterRange: [0.4, 0.8] });
  return Array.from({ length: count }, (_, i) =>
    generateAnimal(layout, rng, `cv-${i + 1}`, { labelledFraction: 0.9, outlierFraction: 0.1, missingFraction: 0.05 }).sample,
  );
}

describe('assignFolds', () => {
  it('deals samples into k folds whose sizes differ by at most one', () => {
    const f = assignFolds(11, 3, createRng(1));
    const sizes = [0, 1, 2].map((k) => f.filter((x) => x === k).length);
    expect(sizes.sort()).toEqual([3, 4, 4]);
  });
  it('refuses more folds than samples and fewer than two', () => {
    expect(() => assignFolds(3, 4, createRng(1))).toThrow('cannot exceed');
    expect(() => assignFolds(3, 1, createRng(1))).toThrow('at least 2');
  });
});

describe('sampleSeed', () => {
  it('depends on the sample id and the run seed, not on order', () => {
    expect(sampleSeed(1, 'a')).toBe(sampleSeed(1, 'a'));
    expect(sampleSeed(1, 'a')).not.toBe(sampleSeed(1, 'b'));
    expect(sampleSeed(1, 'a')).not.toBe(sampleSeed(2, 'a'));
  });
});

describe('crossValidate', () => {
  const samples = smallSet(5);

  it('hides every label from the matcher', () => {
    expect(hideLabels(samples[0]).labels.every((l) => l === null)).toBe(true);
    expect(samples[0].labels.some((l) => l !== null)).toBe(true);
  });

  it('scores every held-out hand label once, leave-one-out by default, and is deterministic', () => {
    const a = crossValidate(samples, { seed: 7 });
    const handLabels = samples.reduce((s, x) => s + x.labels.filter((l) => l !== null).length, 0);
    expect(a.folds).toBe(5);
    expect(a.report.points).toBe(handLabels);
    expect(a.samples.map((s) => s.sample)).toEqual(samples.map((s) => s.id));
    // A working pipeline on this easy set labels most points right (floor set well below the
    // observed value so that a regression, not noise, trips it).
    expect(a.report.accuracy).toBeGreaterThan(0.8);
    const b = crossValidate(samples, { seed: 7 });
    expect(b.report).toEqual(a.report);
    expect(b.samples).toEqual(a.samples);
  });

  it("keeps each held-out sample's pose margin, and the text and HTML reports show it", () => {
    const result = crossValidate(samples, { seed: 7 });
    for (const s of result.samples) expect(typeof s.poseMargin).toBe('number');
    // A well-separated head: its orientation is settled, so no sample is named.
    expect(renderEvaluateText(result, null)).not.toContain('orientation not settled');
    const first = result.samples[0];
    const doubtful = { ...result, samples: [{ ...first, poseMargin: 3.25 }, ...result.samples.slice(1)] };
    const accuracy = result.report.perSample.find((p) => p.key === first.sample)!.accuracy;
    expect(renderEvaluateText(doubtful, null)).toContain(
      `orientation not settled (pose margin below ${POSE_MARGIN_SETTLED} nats) when matched: ${first.sample} 3.3 (accuracy ${(100 * accuracy).toFixed(1)}%)`,
    );
    const table = buildEvaluateReport(doubtful).sections.find((x) => x.heading === 'Accuracy per sample')!.html;
    expect(table).toContain('pose margin');
    expect(table).toContain('3.3');
  });

  it('needs at least three samples', () => {
    expect(() => crossValidate(samples.slice(0, 2))).toThrow('at least 3');
  });
});
