import { describe, it, expect } from 'vitest';
import * as fc from 'fast-check';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { Ajv2020 } from 'ajv/dist/2020.js';
import { InputError, isCairnError, UsageError } from '../../src/errors.js';
import { parseTemplate, readTemplate, serializeTemplate } from '../../src/io/template-file.js';
import type { Template } from '../../src/types.js';
import { exampleTemplate2d, exampleTemplate3d } from './template-example.js';
import { messageOf } from '../support/errors.js';

const schema = JSON.parse(fs.readFileSync(new URL('../../docs/template.schema.json', import.meta.url), 'utf8'));
const ajv = new Ajv2020({ allErrors: true, strict: true, formats: { 'date-time': true } });
const validateSchema = ajv.compile(schema);

/** Deep copy of a template as a plain JSON object, for mutation. */
function asJson(t: Template): Record<string, unknown> {
  return JSON.parse(serializeTemplate(t));
}

describe('serializeTemplate', () => {
  it('writes fixed key order, 2-space indent, number arrays and matrix rows on one line, and a final newline', () => {
    const text = serializeTemplate(exampleTemplate3d());
    // Expected text written by hand from docs/formats.md.
    const expected = `{
  "format": "cairn-template",
  "version": 1,
  "dim": 3,
  "units": "um",
  "cells": [
    {
      "label": "MPc1",
      "mean": [1, 2, 3],
      "covariance": [
        [4, 1, 0.5],
        [1, 3, 0.25],
        [0.5, 0.25, 2]
      ],
      "count": 12,
      "sum": [12, 24, 36],
      "sumOfSquares": [
        [60, 30, 40],
        [30, 84, 72],
        [40, 72, 132]
      ],
      "sparse": false
    }
  ],
  "members": [],
  "pooledCovariance": [
    [1, 0, 0],
    [0, 1, 0],
    [0, 0, 1]
  ],
  "settings": {
    "tolerance": 0.01,
    "maxIterations": 50,
    "alignment": "affine",
    "minCount": 0,
    "priorStrength": 0,
    "flagProbability": 0.05,
    "robust": "trim"
  },
  "flagged": [
    {
      "sample": "animal-b",
      "row": 3,
      "label": "MPc1",
      "distance": 5.25,
      "likelierLabel": "VLa2",
      "likelierDistance": 1.5
    }
  ],
  "tool": {
    "name": "cairn",
    "version": "0.1.0"
  }
}
`;
    expect(text).toBe(expected);
  });

  it('gives the same bytes whatever the key order of the objects it is given', () => {
    const t = exampleTemplate2d();
    const shuffled = JSON.parse(JSON.stringify(t), function (this: unknown, _key, value) {
      if (value && typeof value === 'object' && !Array.isArray(value)) {
        return Object.fromEntries(Object.entries(value).reverse());
      }
      return value;
    });
    expect(serializeTemplate(shuffled)).toBe(serializeTemplate(t));
  });

  it('does not modify the template it is given (deeply frozen input)', () => {
    const deepFreeze = <T>(v: T): T => {
      if (v && typeof v === 'object') {
        for (const x of Object.values(v)) deepFreeze(x);
        Object.freeze(v);
      }
      return v;
    };
    const t = deepFreeze(exampleTemplate2d());
    expect(serializeTemplate(t)).toBe(serializeTemplate(exampleTemplate2d()));
  });

  it('omits "created" when the template has none (--no-timestamp)', () => {
    expect(serializeTemplate(exampleTemplate3d())).not.toContain('created');
    expect(serializeTemplate(exampleTemplate2d())).toContain('"created": "2026-12-01T23:30:00.000Z"');
  });

  it('refuses a non-finite number with UsageError', () => {
    const t = exampleTemplate3d();
    const bad = { ...t, cells: [{ ...t.cells[0], mean: [1, NaN, 3] }] };
    expect(() => serializeTemplate(bad)).toThrow(UsageError);
  });

  it('refuses a field the file format does not know instead of dropping it', () => {
    const t = exampleTemplate2d();
    const bad = { ...t, settings: { ...t.settings, colour: 'red' } } as unknown as Template;
    expect(() => serializeTemplate(bad)).toThrow(
      'serializeTemplate: settings.colour is not part of the template file format; add it to src/io/template-file.ts and docs/template.schema.json',
    );
  });

  it('output validates against docs/template.schema.json (ajv, draft 2020-12)', () => {
    for (const t of [exampleTemplate2d(), exampleTemplate3d()]) {
      const ok = validateSchema(JSON.parse(serializeTemplate(t)));
      expect(validateSchema.errors ?? []).toEqual([]);
      expect(ok).toBe(true);
    }
  });

  it('the schema rejects a cell without a label and a template of another version', () => {
    const a = asJson(exampleTemplate2d());
    delete (a.cells as Record<string, unknown>[])[1].label;
    expect(validateSchema(a)).toBe(false);
    const b = asJson(exampleTemplate2d());
    b.version = 2;
    expect(validateSchema(b)).toBe(false);
  });
});

describe('parseTemplate', () => {
  it('reads back exactly what serializeTemplate wrote (2-D and 3-D)', () => {
    for (const t of [exampleTemplate2d(), exampleTemplate3d()]) {
      const text = serializeTemplate(t);
      const back = parseTemplate(text, 't.json');
      expect(back).toEqual(t);
      expect(serializeTemplate(back)).toBe(text);
    }
  });

  it('keeps the optional settings memberFit and flagReference, and rejects unknown values of them', () => {
    const j = asJson(exampleTemplate2d());
    const settings = j.settings as Record<string, unknown>;
    settings.memberFit = 'sample-to-template';
    settings.flagReference = 'chi-square';
    const t = parseTemplate(JSON.stringify(j), 't.json');
    expect(t.settings).toMatchObject({ memberFit: 'sample-to-template', flagReference: 'chi-square' });
    const text = serializeTemplate(t);
    expect(text).toContain('"robust": "tukey-biweight",\n    "memberFit": "sample-to-template",\n    "flagReference": "chi-square"\n');
    expect(validateSchema(JSON.parse(text))).toBe(true);
    settings.memberFit = 'sideways';
    expect(messageOf(() => parseTemplate(JSON.stringify(j), 't.json'))).toBe(
      't.json: column "settings.memberFit": must be one of "template-to-sample", "sample-to-template", got "sideways"',
    );
  });

  it('keeps the optional row of member positions', () => {
    const j = asJson(exampleTemplate2d());
    const members = j.members as { positions: Record<string, unknown>[] }[];
    members[0].positions[0].row = 12;
    const t = parseTemplate(JSON.stringify(j), 't.json');
    expect((t.members[0].positions[0] as { row?: number }).row).toBe(12);
    expect(serializeTemplate(t)).toContain('"row": 12');
  });

  it('property: every finite double in a mean survives the round trip bit for bit', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), fc.double({ noNaN: true, noDefaultInfinity: true }), (a, b) => {
        const t = exampleTemplate2d();
        const changed: Template = { ...t, cells: [{ ...t.cells[0], mean: [a, b] }, t.cells[1]] };
        const back = parseTemplate(serializeTemplate(changed), 't.json');
        // -0 is written as 0: equal as numbers, not as bit patterns.
        expect(back.cells[0].mean[0] === a && back.cells[0].mean[1] === b).toBe(true);
      }),
      { seed: 20261201, numRuns: 300 },
    );
  });

  const cases: [string, (j: Record<string, any>) => void, string][] = [
    ['another format version', (j) => (j.version = 2), 't.json: column "version": this file is format version 2; this cairn reads version 1 only'],
    ['another format name', (j) => (j.format = 'other'), 't.json: column "format": expected "cairn-template", got "other"; this is not a cairn template file'],
    ['no format name', (j) => delete j.format, 't.json: column "format": expected "cairn-template", got nothing; this is not a cairn template file'],
    ['a cell without a label', (j) => delete j.cells[1].label, 't.json: column "cells[1].label": is missing'],
    ['a cell with an empty label', (j) => (j.cells[0].label = ' '), 't.json: column "cells[0].label": must be a non-empty string'],
    ['a label used by two cells', (j) => (j.cells[1].label = 'VLa1'), 't.json: column "cells[1].label": "VLa1" is also the label of cells[0]; cell labels must be unique'],
    ['a covariance that is not positive definite', (j) => (j.cells[0].covariance = [[1, 2], [2, 1]]), 't.json: column "cells[0].covariance": is not positive definite; a covariance must have positive variance along every direction'],
    ['a covariance that is not symmetric', (j) => (j.cells[1].covariance = [[1, 0.5], [0.4, 1]]), 't.json: column "cells[1].covariance": is not symmetric: [1][0] = 0.4 but [0][1] = 0.5'],
    ['a 3x3 covariance in a 2-D template', (j) => (j.cells[0].covariance = [[1, 0, 0], [0, 1, 0], [0, 0, 1]]), 't.json: column "cells[0].covariance": must be a 2x2 matrix, got 3 rows'],
    ['a mean of the wrong length', (j) => (j.cells[0].mean = [1, 2, 3]), 't.json: column "cells[0].mean": must have 2 numbers (one per axis), got 3'],
    ['a negative count', (j) => (j.cells[0].count = -1), 't.json: column "cells[0].count": must be at least 0, got -1'],
    ['a fractional count', (j) => (j.cells[0].count = 2.5), 't.json: column "cells[0].count": must be a whole number, got 2.5'],
    ['a string where a number belongs', (j) => (j.cells[0].mean = [1, '2']), 't.json: column "cells[0].mean[1]": must be a number, got a string'],
    ['dim 4', (j) => (j.dim = 4), 't.json: column "dim": must be one of 2, 3, got 4'],
    ['an unknown top-level field', (j) => (j.colour = 'red'), 't.json: column "colour": unknown field'],
    ['no cells', (j) => (j.cells = []), 't.json: column "cells": is empty; a template has at least one cell'],
    ['a member hash that is not SHA-256 hex', (j) => (j.members[0].hash = 'abc'), 't.json: column "members[0].hash": must be 64 lower-case hexadecimal digits (SHA-256)'],
    ['an unknown transform kind', (j) => (j.members[0].transform.kind = 'projective'), 't.json: column "members[0].transform.kind": must be one of "similarity", "rigid", "affine", got "projective"'],
    ['a pooled covariance that is not positive definite', (j) => (j.pooledCovariance = [[0, 0], [0, 0]]), 't.json: column "pooledCovariance": is not positive definite; a covariance must have positive variance along every direction'],
    ['a flag probability above 1', (j) => (j.settings.flagProbability = 2), 't.json: column "settings.flagProbability": must be at most 1, got 2'],
    ['a flagged row of 0', (j) => (j.flagged[0].row = 0), 't.json: column "flagged[0].row": must be at least 1, got 0'],
    ['a creation time that is not a date', (j) => (j.created = 'yesterday'), 't.json: column "created": "yesterday" is not an ISO date and time'],
    ['a creation time without time of day', (j) => (j.created = '2026-12-01'), 't.json: column "created": "2026-12-01" is not an ISO date and time'],
    ['another tool name', (j) => (j.tool.name = 'other'), 't.json: column "tool.name": must be one of "cairn", got "other"'],
    ['an empty object', (j) => { for (const k of Object.keys(j)) delete j[k]; }, 't.json: column "format": expected "cairn-template", got nothing; this is not a cairn template file'],
  ];
  for (const [what, mutate, message] of cases) {
    it(`rejects ${what} with an InputError naming the JSON path`, () => {
      const j = asJson(exampleTemplate2d());
      mutate(j);
      expect(messageOf(() => parseTemplate(JSON.stringify(j), 't.json'))).toBe(message);
    });
  }

  it('rejects 1e400 (overflows to infinity) as not a finite number', () => {
    const text = serializeTemplate(exampleTemplate2d()).replace('"residual": 0.25', '"residual": 1e400');
    expect(messageOf(() => parseTemplate(text, 't.json'))).toBe(
      't.json: column "members[0].residual": a number too large for a double is not a finite number',
    );
  });

  it('rejects truncated JSON naming the line and character where it ends', () => {
    const text = serializeTemplate(exampleTemplate3d());
    const cut = text.slice(0, text.indexOf('"count"'));
    const lines = cut.split('\n');
    expect(messageOf(() => parseTemplate(cut, 't.json'))).toBe(
      `t.json:${lines.length}: the JSON text ends before it is complete at line ${lines.length}, character ${lines[lines.length - 1].length + 1} (is the file truncated?)`,
    );
  });

  it('rejects invalid JSON in the middle naming the line and character', () => {
    expect(messageOf(() => parseTemplate('{\n  "format": "cairn-template",\n  "version": 1,,\n}', 't.json'))).toBe(
      't.json:3: not valid JSON at line 3, character 16 (near ",\\n}")',
    );
  });

  it('rejects an array at the top level', () => {
    expect(messageOf(() => parseTemplate('[1, 2]', 't.json'))).toBe('t.json: column "(top level)": must be an object, got an array');
  });

  it('rejects an empty file', () => {
    expect(messageOf(() => parseTemplate('', 't.json'))).toBe('t.json: the file is empty');
  });

  it('fuzz: random text, truncations and byte-level edits of a valid file throw only cairn errors', () => {
    const valid = serializeTemplate(exampleTemplate2d());
    const hostile = fc.oneof(
      fc.string({ maxLength: 200 }),
      fc.string({ unit: 'binary', maxLength: 200 }),
      fc.nat({ max: valid.length }).map((n) => valid.slice(0, n)),
      fc
        .tuple(fc.nat({ max: valid.length - 1 }), fc.nat({ max: 20 }), fc.string({ maxLength: 5 }))
        .map(([at, del, ins]) => valid.slice(0, at) + ins + valid.slice(at + del)),
    );
    fc.assert(
      fc.property(hostile, (text) => {
        try {
          parseTemplate(text, 'fuzz.json');
        } catch (e) {
          if (!isCairnError(e)) throw e;
        }
      }),
      { seed: 8, numRuns: 400 },
    );
  });

  it('fuzz: replacing any value of a valid file by arbitrary JSON is accepted only when the schema accepts it too', () => {
    const base = asJson(exampleTemplate2d());
    const paths: (string | number)[][] = [];
    const walk = (v: unknown, p: (string | number)[]) => {
      paths.push(p);
      if (Array.isArray(v)) v.forEach((x, i) => walk(x, [...p, i]));
      else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) walk(x, [...p, k]);
    };
    walk(base, []);
    fc.assert(
      fc.property(fc.nat({ max: paths.length - 1 }), fc.jsonValue({ maxDepth: 3 }), (which, value) => {
        const doc = JSON.parse(JSON.stringify(base));
        const p = paths[which];
        if (p.length === 0) return;
        let parent = doc;
        for (const k of p.slice(0, -1)) parent = parent[k];
        parent[p[p.length - 1]] = value;
        const text = JSON.stringify(doc);
        let accepted = true;
        try {
          parseTemplate(text, 'fuzz.json');
        } catch (e) {
          if (!isCairnError(e)) throw e;
          accepted = false;
        }
        if (accepted) expect(validateSchema(JSON.parse(text))).toBe(true);
      }),
      { seed: 77, numRuns: 400 },
    );
  });
});

describe('readTemplate', () => {
  it('reads the committed example file test/fixtures/bad/template-valid.json, whose bytes serializeTemplate reproduces', () => {
    const file = new URL('../fixtures/bad/template-valid.json', import.meta.url);
    const t = readTemplate(file.pathname);
    expect(t).toEqual(exampleTemplate2d());
    expect(serializeTemplate(t)).toBe(fs.readFileSync(file, 'utf8'));
  });

  it('reads a file written by serializeTemplate and names the path in errors', () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'cairn-template-'));
    try {
      const file = path.join(dir, 't.json');
      fs.writeFileSync(file, serializeTemplate(exampleTemplate2d()));
      expect(readTemplate(file)).toEqual(exampleTemplate2d());
      fs.writeFileSync(file, '{"format": "cairn-template", "version": 3}');
      expect(messageOf(() => readTemplate(file))).toBe(`${file}: column "version": this file is format version 3; this cairn reads version 1 only`);
      expect(messageOf(() => readTemplate(dir))).toBe(`${dir}: is a folder, not a file; give the files inside it (for example folder/*.csv)`);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
