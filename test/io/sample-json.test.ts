import { describe, it, expect } from 'vitest';
import * as fc from 'fast-check';
import { isCairnError } from '../../src/errors.js';
import { parseSamplesJson } from '../../src/io/sample-json.js';
import { parseSamplesCsv } from '../../src/io/sample-csv.js';
import { messageOf } from '../support/errors.js';

describe('parseSamplesJson', () => {
  it('reads a list of samples; rows are 1-based point indices', () => {
    const text = JSON.stringify({
      samples: [
        { id: 'animal-a', points: [{ x: 1, y: 2, z: 3, label: 'VLa1', features: { gfp: 0.5 } }, { x: 4, y: 5, z: 6, label: null, features: { gfp: 1 } }] },
        { id: 'animal-b', points: [{ x: 7, y: 8, z: 9, label: ' ', features: { gfp: 2 } }] },
      ],
    });
    const samples = parseSamplesJson(text, 'both.json');
    expect(samples).toEqual([
      {
        id: 'animal-a',
        source: 'both.json',
        dim: 3,
        coords: [
          [1, 2, 3],
          [4, 5, 6],
        ],
        labels: ['VLa1', null],
        rows: [1, 2],
        features: { names: ['gfp'], values: [[0.5], [1]] },
      },
      { id: 'animal-b', source: 'both.json', dim: 3, coords: [[7, 8, 9]], labels: [null], rows: [1], features: { names: ['gfp'], values: [[2]] } },
    ]);
  });

  it('reads a single sample object whose id defaults to the file name', () => {
    const [s] = parseSamplesJson('{"points": [{"x": 1, "y": 2, "label": "VLa1"}, {"x": 3, "y": 4}]}', 'data/animal-c.json');
    expect(s.id).toBe('animal-c');
    expect(s.dim).toBe(2);
    expect(s.labels).toEqual(['VLa1', null]);
    expect(s.features).toEqual({ names: [], values: [[], []] });
  });

  it('holds the same content as the equivalent CSV (apart from rows)', () => {
    const csv = parseSamplesCsv('x,y,z,label,gfp\n1,2,3,VLa1,0.5\n4,5,6,,1\n', 'animal.csv');
    const json = parseSamplesJson(
      '{"points":[{"x":1,"y":2,"z":3,"label":"VLa1","features":{"gfp":0.5}},{"x":4,"y":5,"z":6,"features":{"gfp":1}}]}',
      'animal.json',
    );
    expect({ ...json[0], source: '', rows: [] }).toEqual({ ...csv[0], source: '', rows: [] });
  });

  it('multiplies coordinates by the voxel size', () => {
    const [s] = parseSamplesJson('{"points":[{"x":2,"y":4}]}', 'v.json', { voxelSize: [0.5, 0.25] });
    expect(s.coords).toEqual([[1, 1]]);
  });

  const cases: [string, string, string][] = [
    ['a string coordinate', '{"points":[{"x":1,"y":2},{"x":"NaN","y":2}]}', 'a.json:2: column "x": "NaN" is not a finite number'],
    ['a coordinate of 1e400', '{"points":[{"x":1e400,"y":2}]}', 'a.json:1: column "x": a number too large for a double is not a finite number'],
    ['a missing y', '{"points":[{"x":1}]}', 'a.json:1: column "y": is missing'],
    ['a point without z in a 3-D sample', '{"points":[{"x":1,"y":2,"z":3},{"x":1,"y":2}]}', 'a.json:2: column "z": is missing, but the first point of the sample has "z"'],
    ['a point with z in a 2-D sample', '{"points":[{"x":1,"y":2},{"x":1,"y":2,"z":3}]}', 'a.json:2: column "z": is given, but the first point of the sample has no "z"; all points of a sample have the same dimension'],
    ['a label used twice', '{"samples":[{"id":"s1","points":[{"x":1,"y":2,"label":"VLa1"},{"x":3,"y":4,"label":"VLa1"}]}]}', 'a.json:2: column "label": "VLa1" is used twice in sample "s1" (points 1 and 2); a label names one point per sample'],
    ['a numeric label', '{"points":[{"x":1,"y":2,"label":7}]}', 'a.json:1: column "label": must be a string or null, got a number'],
    ['an unknown point field', '{"points":[{"x":1,"y":2,"colour":"red"}]}', 'a.json:1: column "colour": unknown field; a point has "x", "y", "z", "label" and "features"'],
    ['a feature missing on a later point', '{"points":[{"x":1,"y":2,"features":{"gfp":1}},{"x":1,"y":2,"features":{}}]}', 'a.json:2: column "features.gfp": is missing; every point has the same features as the first'],
    ['an empty sample', '{"samples":[{"id":"s1","points":[]}]}', 'a.json: column "samples[0].points": sample "s1" has no points (empty sample)'],
    ['a sample without id in a list', '{"samples":[{"points":[{"x":1,"y":2}]}]}', 'a.json: column "samples[0].id": must be a non-empty string, got nothing'],
    ['the same id twice', '{"samples":[{"id":"s","points":[{"x":1,"y":2}]},{"id":"s","points":[{"x":1,"y":2}]}]}', 'a.json: sample id "s" is also used by another sample in the same file; sample ids must be unique'],
    ['mixed dimensions across samples', '{"samples":[{"id":"s","points":[{"x":1,"y":2,"z":3}]},{"id":"t","points":[{"x":1,"y":2}]}]}', 'a.json: sample "t" is 2-D but sample "s" (a.json) is 3-D; all samples must have the same dimension'],
    ['an array at the top level', '[{"x":1,"y":2}]', 'a.json: expected an object with "samples" (a list of samples) or "points" (one sample), got an array'],
    ['truncated JSON', '{"points":[{"x":1,\n"y":2}', 'a.json:2: the JSON text ends before it is complete at line 2, character 7 (is the file truncated?)'],
    ['an empty file', '  \n', 'a.json: the file is empty'],
  ];
  for (const [what, text, message] of cases) {
    it(`rejects ${what}`, () => {
      expect(messageOf(() => parseSamplesJson(text, 'a.json'))).toBe(message);
    });
  }

  it('fuzz: random text, edited valid files and arbitrary JSON values throw nothing but cairn errors', () => {
    const point = fc.record(
      { x: fc.jsonValue({ maxDepth: 1 }), y: fc.double(), z: fc.option(fc.double()), label: fc.option(fc.string({ maxLength: 4 })), features: fc.dictionary(fc.string({ maxLength: 3 }), fc.jsonValue({ maxDepth: 1 })) },
      { requiredKeys: [] },
    );
    const valid = '{"samples": [{"id": "a", "points": [{"x": 1, "y": 2, "z": 3, "label": "VLa1", "features": {"gfp": 0.5}}, {"x": 4, "y": 5, "z": 6, "label": null, "features": {"gfp": 1}}]}]}';
    const hostile = fc.oneof(
      fc.string({ maxLength: 120 }),
      fc.nat({ max: valid.length }).map((n) => valid.slice(0, n)),
      fc
        .tuple(fc.nat({ max: valid.length - 1 }), fc.nat({ max: 8 }), fc.string({ maxLength: 4 }))
        .map(([at, del, ins]) => valid.slice(0, at) + ins + valid.slice(at + del)),
      fc.jsonValue({ maxDepth: 4 }).map((v) => JSON.stringify(v)),
      fc.array(point, { maxLength: 5 }).map((points) => JSON.stringify({ points })),
      fc.array(fc.record({ id: fc.jsonValue({ maxDepth: 1 }), points: fc.array(point, { maxLength: 3 }) }), { maxLength: 3 }).map((samples) => JSON.stringify({ samples })),
    );
    fc.assert(
      fc.property(hostile, (text) => {
        try {
          parseSamplesJson(text, 'fuzz.json');
        } catch (e) {
          if (!isCairnError(e)) throw e;
        }
      }),
      { seed: 1234, numRuns: 500 },
    );
  });
});
