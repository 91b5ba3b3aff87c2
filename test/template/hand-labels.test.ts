import { describe, it, expect } from 'vitest';
import { checkHandLabels } from '../../src/template/hand-labels.js';
import { readGpaFixture, sampleFromConfiguration } from './helpers.js';

describe('checkHandLabels', () => {
  const fx = readGpaFixture('gpa-2d');
  const clean = () => fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));

  it('flags a label moved 20 um from its cell with sample, row, label and a leave-one-sample-out distance', () => {
    const samples = clean();
    const coords = samples[5].coords.map((p, j) => (j === 7 ? [p[0] + 20, p[1] - 20] : p.slice()));
    samples[5] = { ...samples[5], coords };
    const { flagged, skipped } = checkHandLabels(samples);
    expect(skipped).toEqual([]);
    expect(flagged.map((f) => [f.sample, f.row, f.label])).toEqual([['c6', 9, 'L08']]);
    // chi2_2 0.999 quantile 13.8155 (scipy 1.10.1 chi2.ppf): the distance is past it.
    expect(flagged[0].distance).toBeGreaterThan(Math.sqrt(13.8155));
  });

  it('flags a wrong label even in a cell seen by only four samples (the sample is left out of its own cell statistics)', () => {
    // Keep L03 in four samples only; move it in one of them by 15 um.
    const samples = clean().map((s, i) => (i < 4 ? s : { ...s, labels: s.labels.map((l) => (l === 'L03' ? null : l)) }));
    samples[0] = { ...samples[0], coords: samples[0].coords.map((p, j) => (j === 2 ? [p[0] + 15, p[1]] : p.slice())) };
    const { flagged } = checkHandLabels(samples);
    expect(flagged.filter((f) => f.label === 'L03').map((f) => f.sample)).toEqual(['c1']);
  });

  it('lists both labels of a swap between two distant cells, each with the other as the likelier cell', () => {
    const samples = clean();
    const labels = samples[2].labels.slice();
    [labels[1], labels[10]] = [labels[10], labels[1]];
    samples[2] = { ...samples[2], labels };
    const { flagged } = checkHandLabels(samples, { robust: 'none' });
    expect(flagged.map((f) => [f.sample, f.row, f.label, f.likelierLabel])).toEqual([
      ['c3', 3, 'L11', 'L02'],
      ['c3', 12, 'L02', 'L11'],
    ]);
  });

  it('reports samples it could not align', () => {
    const samples = [...clean(), sampleFromConfiguration('tiny', [[0, 0]], ['L01'])];
    expect(checkHandLabels(samples).skipped).toEqual([{ sample: 'tiny', reason: 'has 1 labelled point; similarity alignment needs at least 2' }]);
  });
});
