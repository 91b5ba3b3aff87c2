/**
 * Samples from CSV text (RFC 4180, header row required). Either one file per
 * sample (the id is the file name without extension) or one long table with a
 * `sample` column (one sample per distinct value, in order of first
 * appearance). Columns: `x`, `y`, optional `z` (micrometres, or pixels with a
 * voxel size), optional `label` (trimmed; empty = unlabelled), `sample`;
 * every further column is a numeric per-point feature. Reserved column names
 * are matched ignoring case and surrounding spaces.
 */
import * as path from 'node:path';
import { InputError } from '../errors.js';
import type { Dim, Sample } from '../types.js';
import { parseCsvRecords, type CsvRecord } from './csv.js';
import { notFiniteReason, parseDecimal } from './number-text.js';
import { checkVoxelSize, crossSampleErrors, SampleAssembler, voxelSizeError, type SampleReadOptions } from './sample-assembler.js';

const RESERVED = ['x', 'y', 'z', 'label', 'sample'] as const;

/** The sample id of a one-sample file: its base name without extension. */
export function sampleIdFromPath(file: string): string {
  const base = path.basename(file);
  const ext = path.extname(base);
  return ext ? base.slice(0, -ext.length) : base;
}

/**
 * Parse CSV text into samples. Throws the first InputError found (see
 * `parseSamplesCsvCollect` for every error).
 */
export function parseSamplesCsv(text: string, file: string, options: SampleReadOptions = {}): Sample[] {
  const errors: InputError[] = [];
  const samples = parseSamplesCsvCollect(text, file, options, errors);
  if (errors.length > 0) throw errors[0];
  return samples;
}

/**
 * Parse CSV text into samples, appending every problem found to `errors`
 * instead of stopping at the first. Structural problems (empty file, bad
 * header, unclosed quote) end the file; row problems are collected row by row.
 * Returns no samples when any error was found in this file.
 */
export function parseSamplesCsvCollect(
  text: string,
  file: string,
  options: SampleReadOptions,
  errors: InputError[],
): Sample[] {
  if (options.voxelSize !== undefined) checkVoxelSize(options.voxelSize);
  const before = errors.length;
  if (text.replace(/^\uFEFF/, '').trim() === '') {
    errors.push(new InputError({ file }, 'the file is empty; a header row with at least "x" and "y" is required'));
    return [];
  }
  let records: CsvRecord[];
  try {
    records = parseCsvRecords(text, file);
  } catch (e) {
    if (e instanceof InputError) {
      errors.push(e);
      return [];
    }
    throw e;
  }
  const header = records[0];
  const columns = readHeader(header, file, errors);
  if (!columns) return [];
  if (records.length === 1) {
    errors.push(new InputError({ file, row: header.line }, 'the header is not followed by any data rows (empty sample)'));
    return [];
  }
  const dim: Dim = columns.z === undefined ? 2 : 3;
  const vErr = voxelSizeError(file, dim, options.voxelSize);
  if (vErr) {
    errors.push(vErr);
    return [];
  }
  const featureNames = columns.features.map((f) => f.name);
  const bySample = new Map<string, SampleAssembler>();
  const fileId = sampleIdFromPath(file);
  const width = header.fields.length;
  const coordColumns: { name: string; index: number }[] = [
    { name: header.fields[columns.x].trim(), index: columns.x },
    { name: header.fields[columns.y].trim(), index: columns.y },
  ];
  if (columns.z !== undefined) coordColumns.push({ name: header.fields[columns.z].trim(), index: columns.z });

  for (let r = 1; r < records.length; r++) {
    const { fields, line } = records[r];
    // A line of only spaces or tabs counts as blank.
    if (fields.length === 1 && fields[0].trim() === '' && width > 1) continue;
    if (fields.length !== width) {
      errors.push(
        new InputError(
          { file, row: line },
          `the row has ${fields.length} field${fields.length === 1 ? '' : 's'} but the header has ${width}` +
            (fields.length < width && r === records.length - 1 ? ' (is the file truncated?)' : ''),
        ),
      );
      continue;
    }
    let ok = true;
    const coords: number[] = [];
    for (const c of coordColumns) {
      const v = readNumber(fields[c.index], file, line, c.name, errors);
      if (v === undefined) ok = false;
      else coords.push(v);
    }
    const feats: number[] = [];
    for (const f of columns.features) {
      const v = readNumber(fields[f.index], file, line, f.name, errors, FEATURE_HINT);
      if (v === undefined) ok = false;
      else feats.push(v);
    }
    let id = fileId;
    if (columns.sample !== undefined) {
      id = fields[columns.sample].trim();
      if (id === '') {
        errors.push(new InputError({ file, row: line, column: header.fields[columns.sample].trim() }, 'is empty; every row of a long table needs a sample id'));
        ok = false;
      }
    }
    if (!ok) continue;
    const rawLabel = columns.label === undefined ? '' : fields[columns.label].trim();
    const label = rawLabel === '' ? null : rawLabel;
    let assembler = bySample.get(id);
    if (!assembler) {
      assembler = new SampleAssembler(id, file, dim, featureNames);
      bySample.set(id, assembler);
    }
    assembler.add(line, coords, label, feats, errors, 'lines');
  }
  if (errors.length > before) return [];
  const samples = [...bySample.values()].map((a) => a.finish(options.voxelSize));
  const cross = crossSampleErrors(samples);
  if (cross.length > 0) {
    errors.push(...cross);
    return [];
  }
  return samples;
}

interface HeaderColumns {
  x: number;
  y: number;
  z?: number;
  label?: number;
  sample?: number;
  features: { name: string; index: number }[];
}

function readHeader(header: CsvRecord, file: string, errors: InputError[]): HeaderColumns | undefined {
  const names = header.fields.map((f) => f.trim());
  const found = new Map<string, number>();
  const features: { name: string; index: number }[] = [];
  let bad = false;
  const seen = new Map<string, number>();
  for (let i = 0; i < names.length; i++) {
    const name = names[i];
    if (name === '') {
      errors.push(new InputError({ file, row: header.line }, `header field ${i + 1} is empty; every column needs a name`));
      bad = true;
      continue;
    }
    const key = (RESERVED as readonly string[]).includes(name.toLowerCase()) ? name.toLowerCase() : name;
    if (seen.has(key)) {
      errors.push(new InputError({ file, row: header.line, column: name }, `appears twice in the header (fields ${seen.get(key)! + 1} and ${i + 1})`));
      bad = true;
      continue;
    }
    seen.set(key, i);
    if ((RESERVED as readonly string[]).includes(key)) found.set(key, i);
    else features.push({ name, index: i });
  }
  for (const required of ['x', 'y']) {
    if (!found.has(required)) {
      let reason = `the header has no "${required}" column (found ${names.map((n) => JSON.stringify(n)).join(', ')})`;
      const joined = header.fields.join(',');
      if (names.length === 1 && /[;\t|]/.test(joined)) {
        const sep = joined.includes(';') ? 'semicolons' : joined.includes('\t') ? 'tabs' : 'bars';
        reason += `; columns must be separated by commas, not ${sep}`;
      }
      errors.push(new InputError({ file, row: header.line }, reason));
      return undefined;
    }
  }
  if (bad) return undefined;
  return { x: found.get('x')!, y: found.get('y')!, z: found.get('z'), label: found.get('label'), sample: found.get('sample'), features };
}

const FEATURE_HINT = ' (columns other than x, y, z, label and sample are numeric features)';

function readNumber(text: string, file: string, row: number, column: string, errors: InputError[], hint = ''): number | undefined {
  if (text.trim() === '') {
    errors.push(new InputError({ file, row, column }, `is empty; a finite number is required${hint}`));
    return undefined;
  }
  const v = parseDecimal(text);
  if (v === undefined) errors.push(new InputError({ file, row, column }, notFiniteReason(JSON.stringify(text.trim())) + hint));
  return v;
}
