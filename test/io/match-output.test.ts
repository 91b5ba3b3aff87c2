import { describe, it, expect } from 'vitest';
import { UsageError } from '../../src/errors.js';
import { parseCsvRecords } from '../../src/io/csv.js';
import { formatMatchCsv, matchCsvHeader } from '../../src/io/match-output.js';
import { parseSamplesCsv } from '../../src/io/sample-csv.js';

const sample = parseSamplesCsv('x,y,z,label,gfp\n1,2,3,VLa1,0.5\n4,5,6,,0.25\n\n7.5,8,9,"DRb1, left",1\n', 'animal.csv')[0];

describe('formatMatchCsv', () => {
  it('writes the input rows in order with row, coordinates, input label and features, then label, confidence and distance', () => {
    const text = formatMatchCsv(sample, [
      { label: 'VLa1', confidence: 0.97, distance: 0.8 },
      { label: null, confidence: null, distance: null },
      { label: 'DRb1, left', confidence: 0.5, distance: 2.25 },
    ]);
    expect(text).toBe(
      'row,x,y,z,input_label,gfp,label,confidence,distance\n' +
        '2,1,2,3,VLa1,0.5,VLa1,0.97,0.8\n' +
        '3,4,5,6,,0.25,,,\n' +
        '5,7.5,8,9,"DRb1, left",1,"DRb1, left",0.5,2.25\n',
    );
    expect(parseCsvRecords(text, 'out.csv').map((r) => r.fields.length)).toEqual([9, 9, 9, 9]);
  });

  it('leaves out input_label when the sample has no hand labels, and z for 2-D samples', () => {
    const [flat] = parseSamplesCsv('x,y\n1,2\n', 'flat.csv');
    expect(matchCsvHeader(flat)).toEqual(['row', 'x', 'y', 'label', 'confidence', 'distance']);
    expect(formatMatchCsv(flat, [{ label: 'VLa1', confidence: 1, distance: 0 }])).toBe('row,x,y,label,confidence,distance\n2,1,2,VLa1,1,0\n');
  });

  it('adds the most probable other labels and their probabilities with alternatives N, empty where fewer were kept', () => {
    const proposals = [
      // The proposed label is among the top labels: it is skipped.
      { label: 'VLa1', confidence: 0.6, distance: 0.8, alternatives: [{ label: 'VLa1', probability: 0.6 }, { label: 'VLa2', probability: 0.3 }, { label: 'DRb1', probability: 0.05 }] },
      // Unlabelled point: its most probable labels.
      { label: null, confidence: 0.7, distance: null, alternatives: [{ label: 'VLa2', probability: 0.2 }] },
      // No alternatives kept.
      { label: 'DRb1, left', confidence: 1, distance: 0 },
    ];
    expect(matchCsvHeader(sample, 2).slice(-4)).toEqual(['alternative_1', 'alternative_1_probability', 'alternative_2', 'alternative_2_probability']);
    expect(formatMatchCsv(sample, proposals, 2)).toBe(
      'row,x,y,z,input_label,gfp,label,confidence,distance,alternative_1,alternative_1_probability,alternative_2,alternative_2_probability\n' +
        '2,1,2,3,VLa1,0.5,VLa1,0.6,0.8,VLa2,0.3,DRb1,0.05\n' +
        '3,4,5,6,,0.25,,,,VLa2,0.2,,\n' +
        '5,7.5,8,9,"DRb1, left",1,"DRb1, left",1,0,,,,\n',
    );
    expect(formatMatchCsv(sample, proposals, 1).split('\n')[1]).toBe('2,1,2,3,VLa1,0.5,VLa1,0.6,0.8,VLa2,0.3');
    // Without the option the columns are the plain ones, alternatives or not.
    expect(formatMatchCsv(sample, proposals).split('\n')[0]).toBe('row,x,y,z,input_label,gfp,label,confidence,distance');
    expect(() => formatMatchCsv(sample, proposals, 3)).toThrow('formatMatchCsv: alternatives must be an integer from 0 to 2, got 3');
    const bad = [proposals[0], proposals[1], { label: 'x', confidence: 0.5, distance: 1, alternatives: [{ label: 'y', probability: 1.2 }] }];
    expect(() => formatMatchCsv(sample, bad, 1)).toThrow('formatMatchCsv: point 3: the probability of alternative "y" must be in [0, 1], got 1.2');
  });

  it('refuses proposals that do not fit the sample', () => {
    expect(() => formatMatchCsv(sample, [])).toThrow(new UsageError('formatMatchCsv: 0 proposals for 3 points of sample "animal"'));
    const one = { label: null, confidence: null, distance: null };
    expect(() => formatMatchCsv(sample, [one, one, { label: 'x', confidence: 1.5, distance: 1 }])).toThrow(
      'formatMatchCsv: point 3: confidence must be in [0, 1], got 1.5',
    );
    expect(() => formatMatchCsv(sample, [one, one, { label: 'x', confidence: 0.5, distance: NaN }])).toThrow(
      'formatMatchCsv: point 3: distance must be a finite number >= 0, got NaN',
    );
    const [clash] = parseSamplesCsv('x,y,confidence\n1,2,3\n', 'clash.csv');
    expect(() => formatMatchCsv(clash, [one])).toThrow(UsageError);
  });
});
