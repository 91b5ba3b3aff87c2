import { describe, it, expect } from 'vitest';
import * as fc from 'fast-check';
import { InputError, isCairnError } from '../../src/errors.js';
import { formatCsv } from '../../src/io/csv.js';
import { parseSamplesCsv, parseSamplesCsvCollect, sampleIdFromPath } from '../../src/io/sample-csv.js';
import type { Sample } from '../../src/types.js';
import { messageOf } from '../support/errors.js';

describe('parseSamplesCsv: one file per sample', () => {
  it('reads x, y, z, label and feature columns; the id is the file name without extension; rows are file lines', () => {
    const text = 'x,y,z,label,gfp\n1,2,3,VLa1,0.5\n4,5,6,,0.25\n7,8,9, DRb1 ,1\n';
    const [s] = parseSamplesCsv(text, 'samples/animal-a.csv');
    expect(s).toEqual({
      id: 'animal-a',
      source: 'samples/animal-a.csv',
      dim: 3,
      coords: [
        [1, 2, 3],
        [4, 5, 6],
        [7, 8, 9],
      ],
      labels: ['VLa1', null, 'DRb1'],
      rows: [2, 3, 4],
      features: { names: ['gfp'], values: [[0.5], [0.25], [1]] },
    } satisfies Sample);
  });

  it('reads 2-D samples without a label column, in any column order, matching reserved names ignoring case', () => {
    const [s] = parseSamplesCsv('Y , X\n2,1\n4,3\n', 'b.csv');
    expect(s.dim).toBe(2);
    expect(s.coords).toEqual([
      [1, 2],
      [3, 4],
    ]);
    expect(s.labels).toEqual([null, null]);
  });

  it('accepts a byte order mark, CRLF line ends and quoted labels containing commas and quotes', () => {
    const text = '\uFEFFx,y,label\r\n1,2,"VLa1, left"\r\n3,4,"DRb ""2"""\r\n';
    const [s] = parseSamplesCsv(text, 'c.csv');
    expect(s.labels).toEqual(['VLa1, left', 'DRb "2"']);
    expect(s.rows).toEqual([2, 3]);
  });

  it('gives a point after a multi-line quoted label the line it starts on', () => {
    const [s] = parseSamplesCsv('x,y,label\n1,2,"two\nlines"\n3,4,b\n', 'c.csv');
    expect(s.rows).toEqual([2, 4]);
  });

  it('multiplies coordinates by the voxel size', () => {
    const [s] = parseSamplesCsv('x,y,z\n10,20,3\n', 'v.csv', { voxelSize: [0.5, 0.25, 2] });
    expect(s.coords).toEqual([[5, 5, 6]]);
  });

  it('derives the id from the base name only', () => {
    expect(sampleIdFromPath('/data/run 1/animal.b.csv')).toBe('animal.b');
    expect(sampleIdFromPath('noext')).toBe('noext');
  });
});

describe('parseSamplesCsv: one long table with a sample column', () => {
  it('makes one sample per distinct value, in order of first appearance, keeping each point its file line', () => {
    const text = 'sample,x,y,label\nb,1,1,VLa1\na,2,2,VLa1\nb,3,3,VLa2\n';
    const samples = parseSamplesCsv(text, 'long.csv');
    expect(samples.map((s) => s.id)).toEqual(['b', 'a']);
    expect(samples[0].rows).toEqual([2, 4]);
    expect(samples[0].labels).toEqual(['VLa1', 'VLa2']);
    expect(samples[1].coords).toEqual([[2, 2]]);
    expect(samples.every((s) => s.source === 'long.csv')).toBe(true);
  });

  it('checks duplicate labels within each sample, not across samples', () => {
    expect(messageOf(() => parseSamplesCsv('sample,x,y,label\na,1,1,VLa1\nb,2,2,VLa1\na,3,3,VLa1\n', 'long.csv'))).toBe(
      'long.csv:4: column "label": "VLa1" is used twice in sample "a" (lines 2 and 4); a label names one point per sample',
    );
  });
});

describe('parseSamplesCsv: errors name file, row and column', () => {
  const cases: [string, string, string][] = [
    ['a value that is not a number', 'x,y,z\n1,2,3\n1,2,1.2.3\n', 'a.csv:3: column "z": "1.2.3" is not a finite number'],
    ['NaN', 'x,y\nNaN,2\n', 'a.csv:2: column "x": "NaN" is not a finite number'],
    ['Inf', 'x,y\n1,-Inf\n', 'a.csv:2: column "y": "-Inf" is not a finite number'],
    ['1e400', 'x,y\n1e400,2\n', 'a.csv:2: column "x": "1e400" is not a finite number'],
    ['an empty coordinate', 'x,y,z\n1,2,\n', 'a.csv:2: column "z": is empty; a finite number is required'],
    ['a feature that is not a number', 'x,y,gfp\n1,2,high\n', 'a.csv:2: column "gfp": "high" is not a finite number (columns other than x, y, z, label and sample are numeric features)'],
    ['an empty file', '', 'a.csv: the file is empty; a header row with at least "x" and "y" is required'],
    ['a header only', 'x,y,label\n', 'a.csv:1: the header is not followed by any data rows (empty sample)'],
    ['no x column', 'y,z,label\n1,2,a\n', 'a.csv:1: the header has no "x" column (found "y", "z", "label")'],
    ['no y column', 'x,label\n1,a\n', 'a.csv:1: the header has no "y" column (found "x", "label")'],
    ['semicolons as separators', 'x;y;label\n1;2;a\n', 'a.csv:1: the header has no "x" column (found "x;y;label"); columns must be separated by commas, not semicolons'],
    ['a row with too few fields', 'x,y,label\n1,2\n3,4,b\n', 'a.csv:2: the row has 2 fields but the header has 3'],
    ['a truncated last row', 'x,y,label\n1,2,a\n3\n', 'a.csv:3: the row has 1 field but the header has 3 (is the file truncated?)'],
    ['a label used twice', 'x,y,label\n1,2,VLa1\n3,4,VLa2\n5,6, VLa1\n', 'a.csv:4: column "label": "VLa1" is used twice in sample "a" (lines 2 and 4); a label names one point per sample'],
    ['a column named twice', 'x,y,X\n1,2,3\n', 'a.csv:1: column "X": appears twice in the header (fields 1 and 3)'],
    ['an empty column name', 'x,y,,label\n1,2,3,a\n', 'a.csv:1: header field 3 is empty; every column needs a name'],
    ['an empty sample id in a long table', 'sample,x,y\na,1,2\n ,3,4\n', 'a.csv:3: column "sample": is empty; every row of a long table needs a sample id'],
    ['a voxel size of the wrong length', 'x,y\n1,2\n', 'a.csv: the samples are 2-D but --voxel-size gives 3 numbers (1,1,1); give one per axis'],
  ];
  for (const [what, text, message] of cases) {
    it(`rejects ${what}`, () => {
      const voxelSize = what.startsWith('a voxel') ? [1, 1, 1] : undefined;
      expect(messageOf(() => parseSamplesCsv(text, 'a.csv', { voxelSize }))).toBe(message);
    });
  }

  it('carries file, row, column and reason as fields', () => {
    try {
      parseSamplesCsv('x,y,z\n1,2,3\n1,2,1.2.3\n', 'samples/a.csv');
      expect.unreachable();
    } catch (e) {
      expect(e).toBeInstanceOf(InputError);
      const err = e as InputError;
      expect([err.file, err.row, err.column, err.reason]).toEqual(['samples/a.csv', 3, 'z', '"1.2.3" is not a finite number']);
      expect(err.message).toBe('samples/a.csv:3: column "z": "1.2.3" is not a finite number');
    }
  });

  it('collects every row error of a file instead of stopping at the first', () => {
    const errors: InputError[] = [];
    const samples = parseSamplesCsvCollect('x,y,label\n1,abc,a\nNaN,2,b\n3,4,a\n5,6,a\n', 'm.csv', {}, errors);
    expect(samples).toEqual([]);
    expect(errors.map((e) => e.message)).toEqual([
      'm.csv:2: column "y": "abc" is not a finite number',
      'm.csv:3: column "x": "NaN" is not a finite number',
      'm.csv:5: column "label": "a" is used twice in sample "m" (lines 4 and 5); a label names one point per sample',
    ]);
  });
});

describe('parseSamplesCsv: properties', () => {
  const coordinate = fc.double({ noNaN: true, noDefaultInfinity: true, min: -1e6, max: 1e6 });
  const label = fc.string({ minLength: 1, maxLength: 8 }).filter((s) => s.trim() === s && s !== '');

  it('parsing a CSV written by formatCsv gives back the same sample', () => {
    const sampleArb = fc
      .tuple(fc.constantFrom(2, 3), fc.integer({ min: 1, max: 12 }), fc.integer({ min: 0, max: 2 }))
      .chain(([dim, n, nf]) =>
        fc.record({
          dim: fc.constant(dim as 2 | 3),
          coords: fc.array(fc.array(coordinate, { minLength: dim, maxLength: dim }), { minLength: n, maxLength: n }),
          labels: fc.uniqueArray(label, { minLength: n, maxLength: n }).chain((ls) =>
            fc.array(fc.boolean(), { minLength: n, maxLength: n }).map((keep) => ls.map((l, i) => (keep[i] ? l : null))),
          ),
          features: fc.array(fc.array(coordinate, { minLength: nf, maxLength: nf }), { minLength: n, maxLength: n }),
        }),
      );
    fc.assert(
      fc.property(sampleArb, (g) => {
        const names = g.features[0].map((_, j) => `f${j}`);
        const header = [...(g.dim === 3 ? ['x', 'y', 'z'] : ['x', 'y']), 'label', ...names];
        const rows = g.coords.map((c, i) => [...c, g.labels[i], ...g.features[i]]);
        const [s] = parseSamplesCsv(formatCsv(header, rows), 'dir/prop.csv');
        const expected: Sample = {
          id: 'prop',
          source: 'dir/prop.csv',
          dim: g.dim,
          coords: g.coords.map((c) => c.map((v) => (Object.is(v, -0) ? 0 : v))),
          labels: g.labels,
          rows: g.coords.map((_, i) => i + 2),
          features: { names, values: g.features.map((f) => f.map((v) => (Object.is(v, -0) ? 0 : v))) },
        };
        expect(s).toEqual(expected);
      }),
      { seed: 2026, numRuns: 200 },
    );
  });

  it('fuzz: random text and edited valid files throw nothing but cairn errors', () => {
    const valid = 'sample,x,y,z,label,gfp\na,1,2,3,"VLa1, left",0.5\na,4,5,6,,1\nb,7,8,9,DRb1,2\n';
    const hostile = fc.oneof(
      fc.string({ maxLength: 120 }),
      fc.string({ unit: 'binary', maxLength: 120 }),
      fc.array(fc.constantFrom('x', 'y', 'z', 'label', 'sample', ',', '"', '\n', '\r', '1', '-', '.', 'e', 'NaN', ' ', '\uFEFF'), { maxLength: 60 }).map((a) => a.join('')),
      fc
        .tuple(fc.nat({ max: valid.length - 1 }), fc.nat({ max: 10 }), fc.string({ maxLength: 4 }))
        .map(([at, del, ins]) => valid.slice(0, at) + ins + valid.slice(at + del)),
    );
    fc.assert(
      fc.property(hostile, fc.boolean(), (text, voxel) => {
        try {
          parseSamplesCsv(text, 'fuzz.csv', voxel ? { voxelSize: [1, 2, 3] } : {});
        } catch (e) {
          if (!isCairnError(e)) throw e;
        }
      }),
      { seed: 99, numRuns: 500 },
    );
  });
});
