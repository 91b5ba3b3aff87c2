/**
 * Samples from JSON text: the same content as the CSV form. Two shapes are
 * accepted (docs/formats.md):
 *
 *   {"samples": [{"id": "a", "points": [POINT, ...]}, ...]}
 *   {"id": "a", "points": [POINT, ...]}        (id optional: defaults to the file name)
 *
 * POINT = {"x": 1.5, "y": 2, "z": 3, "label": "VLa1", "features": {"gfp": 0.4}}
 * with `z`, `label` (string, null or "" = unlabelled; trimmed) and `features`
 * (name -> finite number, the same names on every point of a sample) optional.
 * In errors, the row is the 1-based index of the point in its sample and the
 * column the field name.
 */
import { InputError } from '../errors.js';
import type { Dim, Sample } from '../types.js';
import { isPlainObject, jsonTypeName, parseJsonText, showJsonValue } from './json-text.js';
import { checkVoxelSize, crossSampleErrors, SampleAssembler, voxelSizeError, type SampleReadOptions } from './sample-assembler.js';
import { sampleIdFromPath } from './sample-csv.js';

const POINT_KEYS = new Set(['x', 'y', 'z', 'label', 'features']);
const SAMPLE_KEYS = new Set(['id', 'points']);

/** Parse JSON text into samples. Throws the first InputError found. */
export function parseSamplesJson(text: string, file: string, options: SampleReadOptions = {}): Sample[] {
  const errors: InputError[] = [];
  const samples = parseSamplesJsonCollect(text, file, options, errors);
  if (errors.length > 0) throw errors[0];
  return samples;
}

/**
 * Parse JSON text into samples, appending every problem to `errors`. Returns
 * no samples when any error was found in this file.
 */
export function parseSamplesJsonCollect(
  text: string,
  file: string,
  options: SampleReadOptions,
  errors: InputError[],
): Sample[] {
  if (options.voxelSize !== undefined) checkVoxelSize(options.voxelSize);
  const before = errors.length;
  let doc: unknown;
  try {
    doc = parseJsonText(text, file);
  } catch (e) {
    if (e instanceof InputError) {
      errors.push(e);
      return [];
    }
    throw e;
  }
  const samples: Sample[] = [];
  if (isPlainObject(doc) && 'samples' in doc) {
    for (const key of Object.keys(doc)) {
      if (key !== 'samples') errors.push(new InputError({ file, column: key }, 'unknown field; a sample list has only "samples"'));
    }
    const list = doc.samples;
    if (!Array.isArray(list)) {
      errors.push(new InputError({ file, column: 'samples' }, `must be an array of samples, got ${jsonTypeName(list)}`));
      return [];
    }
    if (list.length === 0) {
      errors.push(new InputError({ file, column: 'samples' }, 'is empty; give at least one sample'));
      return [];
    }
    for (let i = 0; i < list.length; i++) {
      const s = readSample(list[i], `samples[${i}]`, undefined, file, options, errors);
      if (s) samples.push(s);
    }
  } else if (isPlainObject(doc) && 'points' in doc) {
    const s = readSample(doc, '', sampleIdFromPath(file), file, options, errors);
    if (s) samples.push(s);
  } else {
    errors.push(
      new InputError(
        { file },
        `expected an object with "samples" (a list of samples) or "points" (one sample), got ${jsonTypeName(doc)}`,
      ),
    );
  }
  if (errors.length > before) return [];
  const cross = crossSampleErrors(samples);
  if (cross.length > 0) {
    errors.push(...cross);
    return [];
  }
  return samples;
}

function readSample(
  value: unknown,
  pathPrefix: string,
  defaultId: string | undefined,
  file: string,
  options: SampleReadOptions,
  errors: InputError[],
): Sample | undefined {
  const at = (key: string) => (pathPrefix ? `${pathPrefix}.${key}` : key);
  if (!isPlainObject(value)) {
    errors.push(new InputError({ file, column: pathPrefix }, `must be a sample object with "id" and "points", got ${jsonTypeName(value)}`));
    return undefined;
  }
  let ok = true;
  for (const key of Object.keys(value)) {
    if (!SAMPLE_KEYS.has(key)) {
      errors.push(new InputError({ file, column: at(key) }, 'unknown field; a sample has "id" and "points"'));
      ok = false;
    }
  }
  let id: string;
  if (value.id === undefined && defaultId !== undefined) id = defaultId;
  else if (typeof value.id === 'string' && value.id.trim() !== '') id = value.id.trim();
  else {
    errors.push(new InputError({ file, column: at('id') }, `must be a non-empty string, got ${showJsonValue(value.id)}`));
    return undefined;
  }
  const points = value.points;
  if (!Array.isArray(points)) {
    errors.push(new InputError({ file, column: at('points') }, `must be an array of points, got ${jsonTypeName(points)}`));
    return undefined;
  }
  const context = pathPrefix ? ` in sample ${JSON.stringify(id)}` : '';
  if (points.length === 0) {
    errors.push(new InputError({ file, column: at('points') }, `sample ${JSON.stringify(id)} has no points (empty sample)`));
    return undefined;
  }
  // The first point fixes the sample's dimension and feature names.
  const first = points[0];
  const dim: Dim = isPlainObject(first) && first.z !== undefined ? 3 : 2;
  const featureNames = isPlainObject(first) && isPlainObject(first.features) ? Object.keys(first.features) : [];
  const vErr = voxelSizeError(file, dim, options.voxelSize);
  if (vErr) {
    errors.push(vErr);
    return undefined;
  }
  const assembler = new SampleAssembler(id, file, dim, featureNames);
  for (let i = 0; i < points.length; i++) {
    const row = i + 1;
    const p = points[i];
    const err = (column: string | undefined, reason: string) => {
      errors.push(new InputError({ file, row, column }, reason + context));
      ok = false;
    };
    if (!isPlainObject(p)) {
      err(undefined, `a point must be an object with "x" and "y", got ${jsonTypeName(p)}`);
      continue;
    }
    let pointOk = true;
    for (const key of Object.keys(p)) {
      if (!POINT_KEYS.has(key)) {
        err(key, 'unknown field; a point has "x", "y", "z", "label" and "features"');
        pointOk = false;
      }
    }
    const coords: number[] = [];
    for (const axis of dim === 3 ? ['x', 'y', 'z'] : ['x', 'y']) {
      const v = p[axis];
      if (v === undefined) {
        err(axis, axis === 'z' ? 'is missing, but the first point of the sample has "z"' : 'is missing');
        pointOk = false;
      } else if (typeof v !== 'number' || !Number.isFinite(v)) {
        err(axis, `${showJsonValue(v)} is not a finite number`);
        pointOk = false;
      } else coords.push(v);
    }
    if (dim === 2 && p.z !== undefined) {
      err('z', 'is given, but the first point of the sample has no "z"; all points of a sample have the same dimension');
      pointOk = false;
    }
    let label: string | null = null;
    if (typeof p.label === 'string') label = p.label.trim() === '' ? null : p.label.trim();
    else if (p.label !== undefined && p.label !== null) {
      err('label', `must be a string or null, got ${jsonTypeName(p.label)}`);
      pointOk = false;
    }
    const feats: number[] = [];
    if (p.features !== undefined || featureNames.length > 0) {
      if (!isPlainObject(p.features)) {
        err('features', `must be an object of name: number, got ${p.features === undefined ? 'nothing' : jsonTypeName(p.features)}`);
        pointOk = false;
      } else {
        const names = Object.keys(p.features);
        for (const name of names) {
          if (!featureNames.includes(name)) {
            err(`features.${name}`, `is not a feature of the first point (${featureNames.map((n) => JSON.stringify(n)).join(', ') || 'none'}); every point has the same features`);
            pointOk = false;
          }
        }
        for (const name of featureNames) {
          const v = Object.hasOwn(p.features, name) ? p.features[name] : undefined;
          if (v === undefined) {
            err(`features.${name}`, 'is missing; every point has the same features as the first');
            pointOk = false;
          } else if (typeof v !== 'number' || !Number.isFinite(v)) {
            err(`features.${name}`, `${showJsonValue(v)} is not a finite number`);
            pointOk = false;
          } else feats.push(v);
        }
      }
    }
    if (!pointOk) continue;
    const count = errors.length;
    assembler.add(row, coords, label, feats, errors, 'points');
    if (errors.length > count) ok = false;
  }
  return ok ? assembler.finish(options.voxelSize) : undefined;
}
