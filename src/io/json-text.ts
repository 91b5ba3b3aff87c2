/**
 * JSON.parse with errors that name the file, line and character. The parser's
 * own wording differs between Node versions, so messages here are our own and
 * use only the position it reports.
 */
import { InputError } from '../errors.js';

/**
 * Parse JSON text. Throws InputError
 * `file:LINE: not valid JSON at line LINE, character C` or, when the text
 * ends early, `file:LINE: the JSON text ends before it is complete (is the file truncated?)`.
 */
export function parseJsonText(text: string, file: string): unknown {
  const body = text.charCodeAt(0) === 0xfeff ? text.slice(1) : text;
  if (body.trim() === '') throw new InputError({ file }, 'the file is empty');
  try {
    return JSON.parse(body);
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    const m = /position (\d+)/.exec(message);
    let position = m ? Number(m[1]) : body.length;
    if (position > body.length) position = body.length;
    const atEnd = !m || body.slice(position).trim() === '' || /end of (JSON )?input|Unterminated string/i.test(message);
    const { line, character } = lineAndCharacter(body, position);
    if (atEnd) {
      throw new InputError({ file, row: line }, `the JSON text ends before it is complete at line ${line}, character ${character} (is the file truncated?)`);
    }
    throw new InputError(
      { file, row: line },
      `not valid JSON at line ${line}, character ${character} (near ${JSON.stringify(body.slice(position, position + 12))})`,
    );
  }
}

/** 1-based line and character of a 0-based offset into `text`. */
export function lineAndCharacter(text: string, offset: number): { line: number; character: number } {
  let line = 1;
  let lineStart = 0;
  for (let i = 0; i < offset && i < text.length; i++) {
    if (text[i] === '\n') {
      line++;
      lineStart = i + 1;
    }
  }
  return { line, character: offset - lineStart + 1 };
}

/** A short, printable rendering of a JSON value for error messages. */
export function showJsonValue(value: unknown): string {
  if (value === undefined) return 'nothing';
  if (typeof value === 'number' && !Number.isFinite(value)) return 'a number too large for a double';
  const s = JSON.stringify(value);
  return s.length > 40 ? s.slice(0, 37) + '...' : s;
}

/** The JSON type name of a value, for messages: object, array, string, number, boolean, null. */
export function jsonTypeName(value: unknown): string {
  if (value === null) return 'null';
  if (Array.isArray(value)) return 'an array';
  if (typeof value === 'object') return 'an object';
  if (typeof value === 'string') return 'a string';
  if (typeof value === 'number') return 'a number';
  if (typeof value === 'boolean') return 'a boolean';
  return typeof value;
}

export function isPlainObject(value: unknown): value is Record<string, unknown> {
  return typeof value === 'object' && value !== null && !Array.isArray(value);
}
