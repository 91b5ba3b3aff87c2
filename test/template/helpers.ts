/** Small helpers shared by the template tests (not a test file). */
import { readFileSync } from 'node:fs';
import { expect } from 'vitest';
import Ajv2020 from 'ajv/dist/2020.js';
import { serializeTemplate } from '../../src/io/template-file.js';
import type { Dim, Sample, Template } from '../../src/types.js';

const schema = JSON.parse(readFileSync(new URL('../../docs/template.schema.json', import.meta.url), 'utf8'));
const ajv = new (Ajv2020 as unknown as typeof Ajv2020.default)({ allErrors: true, strict: false });
// RFC 3339 date-time (ajv-formats is not a dependency): enough to check the `created` stamp.
ajv.addFormat('date-time', /^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d(\.\d+)?(Z|[+-]\d\d:\d\d)$/);
const validate = ajv.compile(schema);

/** Validate the serialised template against docs/template.schema.json (ajv 8, draft 2020-12). */
export function expectSchemaValid(t: Template): void {
  const ok = validate(JSON.parse(serializeTemplate(t)));
  expect(validate.errors ?? []).toEqual([]);
  expect(ok).toBe(true);
}

export interface GpaFixture {
  source: string;
  dim: Dim;
  landmarks: number;
  configurations: number[][][];
  meanShape: number[][];
}

export function readGpaFixture(name: 'gpa-2d' | 'gpa-3d'): GpaFixture {
  return JSON.parse(readFileSync(new URL(`../fixtures/reference/${name}.json`, import.meta.url), 'utf8')) as GpaFixture;
}

/** A fully labelled sample from a configuration: labels L01, L02, ... */
export function sampleFromConfiguration(id: string, coords: readonly (readonly number[])[], labels?: readonly (string | null)[]): Sample {
  return {
    id,
    source: `${id}.csv`,
    dim: coords[0].length as Dim,
    coords: coords.map((p) => p.slice()),
    labels: labels ? labels.slice() : coords.map((_, i) => `L${String(i + 1).padStart(2, '0')}`),
    rows: coords.map((_, i) => i + 2),
    features: { names: [], values: coords.map(() => []) },
  };
}

export function centred(points: readonly (readonly number[])[]): number[][] {
  const d = points[0].length;
  const c = new Array<number>(d).fill(0);
  for (const p of points) for (let j = 0; j < d; j++) c[j] += p[j] / points.length;
  return points.map((p) => p.map((v, j) => v - c[j]));
}

/** Centred and scaled to unit centroid size. */
export function unitSize(points: readonly (readonly number[])[]): number[][] {
  const z = centred(points);
  const s = Math.sqrt(z.reduce((t, p) => t + p.reduce((u, v) => u + v * v, 0), 0));
  return z.map((p) => p.map((v) => v / s));
}

export function maxAbsDifference(a: readonly (readonly number[])[], b: readonly (readonly number[])[]): number {
  let m = 0;
  for (let i = 0; i < a.length; i++) for (let j = 0; j < a[i].length; j++) m = Math.max(m, Math.abs(a[i][j] - b[i][j]));
  return m;
}

/** Apply x -> s R x + t to every row. */
export function moved(points: readonly (readonly number[])[], r: readonly (readonly number[])[], s: number, t: readonly number[]): number[][] {
  return points.map((p) => r.map((row, i) => s * row.reduce((acc, v, j) => acc + v * p[j], 0) + t[i]));
}
