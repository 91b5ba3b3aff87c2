/**
 * The template file (docs/formats.md, docs/template.schema.json): JSON with a
 * fixed key order, 2-space indentation, arrays of numbers on one line,
 * numbers in the shortest text that reads back as the same double, and a
 * final line break, so that the same template always gives the same bytes.
 * Reading validates everything a consumer relies on; errors are InputErrors
 * whose column is the JSON path of the bad value (`cells[3].covariance`).
 */
import { FitError, InputError, UsageError } from '../errors.js';
import { cholesky } from '../geometry/covariance.js';
import {
  TEMPLATE_FORMAT,
  TEMPLATE_VERSION,
  type Dim,
  type FlaggedLabel,
  type Matrix,
  type Template,
  type TemplateCell,
  type TemplateMember,
  type TemplateSettings,
  type Transform,
} from '../types.js';
import { formatNumber } from './csv.js';
import { parseJsonText, showJsonValue } from './json-text.js';
import { JsonChecker } from './json-validate.js';
import { readTextFile } from './text-file.js';

const TOP_KEYS = ['format', 'version', 'dim', 'units', 'cells', 'members', 'pooledCovariance', 'settings', 'flagged', 'tool'] as const;
const CELL_KEYS = ['label', 'mean', 'covariance', 'count', 'sum', 'sumOfSquares', 'sparse'] as const;
const MEMBER_KEYS = ['id', 'hash', 'transform', 'residual', 'labelled', 'positions'] as const;
const SETTINGS_KEYS = ['tolerance', 'maxIterations', 'alignment', 'minCount', 'priorStrength', 'flagProbability', 'robust'] as const;
const FLAG_KEYS = ['sample', 'row', 'label', 'distance', 'likelierLabel', 'likelierDistance'] as const;
const ALIGNMENTS = ['similarity', 'rigid', 'affine'] as const;
const OPTIONAL_SETTINGS_KEYS = ['memberFit', 'flagReference'] as const;
const MEMBER_FITS = ['template-to-sample', 'sample-to-template'] as const;
const FLAG_REFERENCES = ['student-t', 'chi-square'] as const;
/** RFC 3339 date-time, as Date.prototype.toISOString writes it (offsets allowed). */
const ISO_DATE_TIME = /^\d{4}-\d{2}-\d{2}T\d{2}:\d{2}:\d{2}(\.\d+)?(Z|[+-]\d{2}:\d{2})$/;

// ---------------------------------------------------------------- writing

type Json = null | boolean | number | string | readonly Json[] | { readonly [key: string]: Json };

/**
 * The template as canonical JSON text. Keys appear in the order of the
 * `Template` type in src/types.ts. Throws UsageError for a non-finite number
 * anywhere in the template, and for a field the file format does not know
 * (so that nothing is silently dropped).
 */
export function serializeTemplate(t: Template): string {
  return writeJson(canonicalTemplate(t), '') + '\n';
}

/**
 * Throws UsageError when `obj` has a field the file format does not know: a
 * field added to the types in src/types.ts must be added to this writer, the
 * reader and docs/template.schema.json, never silently dropped.
 */
function assertKnownKeys(obj: object, known: readonly string[], path: string): void {
  for (const key of Object.keys(obj)) {
    if (!known.includes(key) && (obj as Record<string, unknown>)[key] !== undefined) {
      throw new UsageError(
        `serializeTemplate: ${path ? path + '.' : ''}${key} is not part of the template file format; add it to src/io/template-file.ts and docs/template.schema.json`,
      );
    }
  }
}

function canonicalTemplate(t: Template): Json {
  assertKnownKeys(t, [...TOP_KEYS, 'created'], '');
  assertKnownKeys(t.tool, ['name', 'version'], 'tool');
  const out: Record<string, Json> = {
    format: t.format,
    version: t.version,
    dim: t.dim,
    units: t.units,
    cells: t.cells.map((c, i) => canonicalCell(c, i)),
    members: t.members.map((m, i) => canonicalMember(m, i)),
    pooledCovariance: matrixJson(t.pooledCovariance),
    settings: canonicalSettings(t.settings),
    flagged: t.flagged.map((f, i) => canonicalFlag(f, i)),
    tool: { name: t.tool.name, version: t.tool.version },
  };
  if (t.created !== undefined) out.created = t.created;
  return out;
}

function canonicalCell(c: TemplateCell, i: number): Json {
  assertKnownKeys(c, CELL_KEYS, `cells[${i}]`);
  return {
    label: c.label,
    mean: c.mean.slice(),
    covariance: matrixJson(c.covariance),
    count: c.count,
    sum: c.sum.slice(),
    sumOfSquares: matrixJson(c.sumOfSquares),
    sparse: c.sparse,
  };
}

function canonicalMember(m: TemplateMember, i: number): Json {
  assertKnownKeys(m, MEMBER_KEYS, `members[${i}]`);
  assertKnownKeys(m.transform, ['kind', 'linear', 'translation'], `members[${i}].transform`);
  m.positions.forEach((p, k) => assertKnownKeys(p, ['label', 'coords', 'row'], `members[${i}].positions[${k}]`));
  return {
    id: m.id,
    hash: m.hash,
    transform: canonicalTransform(m.transform),
    residual: m.residual,
    labelled: m.labelled,
    positions: m.positions.map((p): Json => {
      const row = (p as { readonly row?: number }).row;
      return row === undefined ? { label: p.label, coords: p.coords.slice() } : { label: p.label, coords: p.coords.slice(), row };
    }),
  };
}

function canonicalTransform(t: Transform): Json {
  return { kind: t.kind, linear: matrixJson(t.linear), translation: t.translation.slice() };
}

function canonicalSettings(s: TemplateSettings): Json {
  assertKnownKeys(s, [...SETTINGS_KEYS, ...OPTIONAL_SETTINGS_KEYS], 'settings');
  const out: Record<string, Json> = {
    tolerance: s.tolerance,
    maxIterations: s.maxIterations,
    alignment: s.alignment,
    minCount: s.minCount,
    priorStrength: s.priorStrength,
    flagProbability: s.flagProbability,
    robust: s.robust,
  };
  // Optional settings, written only when set (older files lack them; readers use the defaults).
  const optional = s as OptionalSettings;
  if (optional.memberFit !== undefined) out.memberFit = optional.memberFit;
  if (optional.flagReference !== undefined) out.flagReference = optional.flagReference;
  return out;
}

/** Optional settings fields (read through this type so that the file format does not depend on their being in TemplateSettings yet). */
interface OptionalSettings {
  readonly memberFit?: (typeof MEMBER_FITS)[number];
  readonly flagReference?: (typeof FLAG_REFERENCES)[number];
}

function canonicalFlag(f: FlaggedLabel, i: number): Json {
  assertKnownKeys(f, FLAG_KEYS, `flagged[${i}]`);
  return {
    sample: f.sample,
    row: f.row,
    label: f.label,
    distance: f.distance,
    likelierLabel: f.likelierLabel,
    likelierDistance: f.likelierDistance,
  };
}

function matrixJson(m: Matrix): Json {
  return m.map((row) => row.slice());
}

function isPrimitive(v: Json): boolean {
  return v === null || typeof v !== 'object';
}

/** Deterministic JSON: 2-space indent, arrays of primitives (and rows of matrices) on one line. */
function writeJson(v: Json, indent: string): string {
  if (v === null) return 'null';
  if (typeof v === 'number') {
    if (!Number.isFinite(v)) throw new UsageError(`serializeTemplate: ${v} is not a finite number`);
    return formatNumber(v);
  }
  if (typeof v === 'string' || typeof v === 'boolean') return JSON.stringify(v);
  const inner = indent + '  ';
  if (Array.isArray(v)) {
    const items = v as readonly Json[];
    if (items.length === 0) return '[]';
    if (items.every(isPrimitive)) return '[' + items.map((x) => writeJson(x, inner)).join(', ') + ']';
    return '[\n' + items.map((x) => inner + writeJson(x, inner)).join(',\n') + '\n' + indent + ']';
  }
  const obj = v as { readonly [key: string]: Json };
  const keys = Object.keys(obj);
  if (keys.length === 0) return '{}';
  return '{\n' + keys.map((k) => `${inner}${JSON.stringify(k)}: ${writeJson(obj[k], inner)}`).join(',\n') + '\n' + indent + '}';
}

// ---------------------------------------------------------------- reading

/** Read and validate a template file. Throws InputError (see `parseTemplate`). */
export function readTemplate(path: string): Template {
  return parseTemplate(readTextFile(path), path);
}

/**
 * Parse and validate template JSON text. Throws the first InputError found,
 * with column = JSON path: wrong format name, another format version
 * (`this file is format version 2; this cairn reads version 1`), truncated or
 * invalid JSON (with line and character), dim not 2 or 3, a cell without a
 * label or with a label used twice, vectors of the wrong length, a covariance
 * that is not a symmetric positive definite d x d matrix, negative counts,
 * and unknown or missing fields.
 */
export function parseTemplate(text: string, file: string): Template {
  const doc = parseJsonText(text, file);
  const check = new JsonChecker(file);
  const top = check.object(doc, '', TOP_KEYS, ['created']);
  if (!top) throw check.errors[0];
  // Format name and version first: a file of another kind or version is not checked further.
  if (top.format !== TEMPLATE_FORMAT) {
    throw new InputError(
      { file, column: 'format' },
      `expected ${JSON.stringify(TEMPLATE_FORMAT)}, got ${showJsonValue(top.format)}; this is not a cairn template file`,
    );
  }
  if (top.version !== TEMPLATE_VERSION) {
    throw new InputError(
      { file, column: 'version' },
      `this file is format version ${showJsonValue(top.version)}; this cairn reads version ${TEMPLATE_VERSION} only`,
    );
  }
  const dim = check.oneOf(top.dim, 'dim', [2, 3] as const);
  if (dim === undefined) throw check.errors[0];
  check.oneOf(top.units, 'units', ['um'] as const);

  const cells: TemplateCell[] = [];
  const cellList = check.array(top.cells, 'cells');
  if (cellList) {
    if (cellList.length === 0) check.fail('cells', 'is empty; a template has at least one cell');
    const labelAt = new Map<string, number>();
    cellList.forEach((c, i) => {
      const cell = readCell(check, c, `cells[${i}]`, dim);
      if (!cell) return;
      const earlier = labelAt.get(cell.label);
      if (earlier !== undefined) {
        check.fail(`cells[${i}].label`, `${JSON.stringify(cell.label)} is also the label of cells[${earlier}]; cell labels must be unique`);
        return;
      }
      labelAt.set(cell.label, i);
      cells.push(cell);
    });
  }

  const members: TemplateMember[] = [];
  const memberList = check.array(top.members, 'members');
  if (memberList) {
    const idAt = new Map<string, number>();
    memberList.forEach((m, i) => {
      const member = readMember(check, m, `members[${i}]`, dim);
      if (!member) return;
      const earlier = idAt.get(member.id);
      if (earlier !== undefined) {
        check.fail(`members[${i}].id`, `${JSON.stringify(member.id)} is also the id of members[${earlier}]; member ids must be unique`);
        return;
      }
      idAt.set(member.id, i);
      members.push(member);
    });
  }

  const pooledCovariance = readCovariance(check, top.pooledCovariance, 'pooledCovariance', dim);
  const settings = readSettings(check, top.settings);

  const flagged: FlaggedLabel[] = [];
  const flagList = check.array(top.flagged, 'flagged');
  if (flagList) {
    flagList.forEach((f, i) => {
      const flag = readFlag(check, f, `flagged[${i}]`);
      if (flag) flagged.push(flag);
    });
  }

  let tool: Template['tool'] | undefined;
  const toolObj = check.object(top.tool, 'tool', ['name', 'version']);
  if (toolObj) {
    const name = check.oneOf(toolObj.name, 'tool.name', ['cairn'] as const);
    const version = check.string(toolObj.version, 'tool.version');
    if (name !== undefined && version !== undefined) tool = { name, version };
  }

  let created: string | undefined;
  if (top.created !== undefined) {
    created = check.string(top.created, 'created');
    if (created !== undefined && (!ISO_DATE_TIME.test(created) || Number.isNaN(Date.parse(created)))) {
      check.fail('created', `${JSON.stringify(created)} is not an ISO date and time`);
    }
  }

  if (check.errors.length > 0) throw check.errors[0];
  const template: Template = {
    format: TEMPLATE_FORMAT,
    version: TEMPLATE_VERSION,
    dim,
    units: 'um',
    cells,
    members,
    pooledCovariance: pooledCovariance!,
    settings: settings!,
    flagged,
    tool: tool!,
    ...(created !== undefined ? { created } : {}),
  };
  return template;
}

function readCell(check: JsonChecker, value: unknown, path: string, dim: Dim): TemplateCell | undefined {
  const o = check.object(value, path, CELL_KEYS);
  if (!o) return undefined;
  const before = check.errors.length;
  const label = check.string(o.label, `${path}.label`);
  const mean = check.vector(o.mean, `${path}.mean`, dim);
  const covariance = readCovariance(check, o.covariance, `${path}.covariance`, dim);
  const count = check.number(o.count, `${path}.count`, { min: 0, integer: true });
  const sum = check.vector(o.sum, `${path}.sum`, dim);
  const sumOfSquares = check.matrix(o.sumOfSquares, `${path}.sumOfSquares`, dim, dim);
  const sparse = check.boolean(o.sparse, `${path}.sparse`);
  if (check.errors.length > before) return undefined;
  return { label: label!, mean: mean!, covariance: covariance!, count: count!, sum: sum!, sumOfSquares: sumOfSquares!, sparse: sparse! };
}

/** A d x d symmetric positive definite matrix (Cholesky from src/geometry/covariance.ts must succeed). */
function readCovariance(check: JsonChecker, value: unknown, path: string, dim: Dim): number[][] | undefined {
  const m = check.matrix(value, path, dim, dim);
  if (!m) return undefined;
  for (let i = 0; i < dim; i++)
    for (let j = 0; j < i; j++) {
      const a = m[i][j], b = m[j][i];
      if (Math.abs(a - b) > 1e-9 * (Math.abs(a) + Math.abs(b)) && a !== b) {
        return check.fail(path, `is not symmetric: [${i}][${j}] = ${a} but [${j}][${i}] = ${b}`);
      }
    }
  try {
    cholesky(m);
  } catch (e) {
    if (e instanceof FitError) return check.fail(path, 'is not positive definite; a covariance must have positive variance along every direction');
    throw e;
  }
  return m;
}

function readMember(check: JsonChecker, value: unknown, path: string, dim: Dim): TemplateMember | undefined {
  const o = check.object(value, path, MEMBER_KEYS);
  if (!o) return undefined;
  const before = check.errors.length;
  const id = check.string(o.id, `${path}.id`);
  const hash = check.string(o.hash, `${path}.hash`);
  if (hash !== undefined && !/^[0-9a-f]{64}$/.test(hash)) check.fail(`${path}.hash`, 'must be 64 lower-case hexadecimal digits (SHA-256)');
  const transform = readTransform(check, o.transform, `${path}.transform`, dim);
  const residual = check.number(o.residual, `${path}.residual`, { min: 0 });
  const labelled = check.number(o.labelled, `${path}.labelled`, { min: 0, integer: true });
  const positions: { label: string; coords: number[]; row?: number }[] = [];
  const list = check.array(o.positions, `${path}.positions`);
  if (list) {
    list.forEach((p, i) => {
      const at = `${path}.positions[${i}]`;
      const po = check.object(p, at, ['label', 'coords'], ['row']);
      if (!po) return;
      const label = check.string(po.label, `${at}.label`);
      const coords = check.vector(po.coords, `${at}.coords`, dim);
      const row = po.row === undefined ? undefined : check.number(po.row, `${at}.row`, { min: 1, integer: true });
      if (label === undefined || coords === undefined || (po.row !== undefined && row === undefined)) return;
      positions.push(row === undefined ? { label, coords } : { label, coords, row });
    });
  }
  if (check.errors.length > before) return undefined;
  return { id: id!, hash: hash!, transform: transform!, residual: residual!, labelled: labelled!, positions };
}

function readTransform(check: JsonChecker, value: unknown, path: string, dim: Dim): Transform | undefined {
  const o = check.object(value, path, ['kind', 'linear', 'translation']);
  if (!o) return undefined;
  const kind = check.oneOf(o.kind, `${path}.kind`, ALIGNMENTS);
  const linear = check.matrix(o.linear, `${path}.linear`, dim, dim);
  const translation = check.vector(o.translation, `${path}.translation`, dim);
  if (kind === undefined || !linear || !translation) return undefined;
  return { kind, linear, translation };
}

function readSettings(check: JsonChecker, value: unknown): TemplateSettings | undefined {
  const o = check.object(value, 'settings', SETTINGS_KEYS, OPTIONAL_SETTINGS_KEYS);
  if (!o) return undefined;
  const before = check.errors.length;
  const s: Record<string, unknown> = {
    tolerance: check.number(o.tolerance, 'settings.tolerance', { min: 0, exclusiveMin: true }),
    maxIterations: check.number(o.maxIterations, 'settings.maxIterations', { min: 1, integer: true }),
    alignment: check.oneOf(o.alignment, 'settings.alignment', ALIGNMENTS),
    minCount: check.number(o.minCount, 'settings.minCount', { min: 0, integer: true }),
    priorStrength: check.number(o.priorStrength, 'settings.priorStrength', { min: 0 }),
    flagProbability: check.number(o.flagProbability, 'settings.flagProbability', { min: 0, max: 1 }),
    robust: check.string(o.robust, 'settings.robust'),
  };
  if (o.memberFit !== undefined) s.memberFit = check.oneOf(o.memberFit, 'settings.memberFit', MEMBER_FITS);
  if (o.flagReference !== undefined) s.flagReference = check.oneOf(o.flagReference, 'settings.flagReference', FLAG_REFERENCES);
  if (check.errors.length > before) return undefined;
  return s as unknown as TemplateSettings;
}

function readFlag(check: JsonChecker, value: unknown, path: string): FlaggedLabel | undefined {
  const o = check.object(value, path, FLAG_KEYS);
  if (!o) return undefined;
  const before = check.errors.length;
  const sample = check.string(o.sample, `${path}.sample`);
  const row = check.number(o.row, `${path}.row`, { min: 1, integer: true });
  const label = check.string(o.label, `${path}.label`);
  const distance = check.number(o.distance, `${path}.distance`, { min: 0 });
  const likelierLabel = o.likelierLabel === null ? null : check.string(o.likelierLabel, `${path}.likelierLabel`);
  const likelierDistance = o.likelierDistance === null ? null : check.number(o.likelierDistance, `${path}.likelierDistance`, { min: 0 });
  if (check.errors.length > before) return undefined;
  return { sample: sample!, row: row!, label: label!, distance: distance!, likelierLabel: likelierLabel!, likelierDistance: likelierDistance! };
}
