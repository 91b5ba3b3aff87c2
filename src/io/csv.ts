/**
 * Comma-separated values as in RFC 4180 (Shafranovich 2005): fields separated
 * by commas, records by line breaks; a field may be enclosed in double quotes,
 * and then may contain commas, line breaks and doubled quotes (`""` = `"`).
 *
 * The reader is our own small state machine rather than a library parser so
 * that every record knows the 1-based line it starts on (a quoted field may
 * span lines) and every syntax error names the line where it happens. It
 * accepts LF, CRLF and lone CR line breaks, a leading byte order mark, spaces
 * or tabs around a quoted field (outside the quotes), and skips blank lines.
 */
import { InputError, UsageError } from '../errors.js';

const COMMA = 44;
const LF = 10;
const CR = 13;
const QUOTE = 34;

/** One record: its fields (unquoted) and the 1-based line it starts on. */
export interface CsvRecord {
  readonly fields: readonly string[];
  readonly line: number;
}

/**
 * Split `text` into records. Throws InputError for a quoted field that is
 * never closed (`file:line: a quoted field starts on this line and is never
 * closed (is the file truncated?)`), a character after a closing quote, or a
 * quote inside an unquoted field.
 */
export function parseCsvRecords(text: string, file: string): CsvRecord[] {
  const records: CsvRecord[] = [];
  let i = text.charCodeAt(0) === 0xfeff ? 1 : 0;
  const n = text.length;
  let line = 1;
  while (i < n) {
    // Skip blank lines.
    const c0 = text[i];
    if (c0 === '\n') {
      line++;
      i++;
      continue;
    }
    if (c0 === '\r') {
      line++;
      i += text[i + 1] === '\n' ? 2 : 1;
      continue;
    }
    const startLine = line;
    const fields: string[] = [];
    // Parse one record.
    for (;;) {
      let value = '';
      // Spaces or tabs before an opening quote are tolerated (`1, "VLa1, left"`).
      let j = i;
      while (text[j] === ' ' || text[j] === '\t') j++;
      if (text[j] === '"') i = j;
      if (text[i] === '"') {
        const quoteLine = line;
        i++;
        for (;;) {
          if (i >= n) {
            throw new InputError(
              { file, row: quoteLine },
              `field ${fields.length + 1}: a quoted field starts on this line and is never closed (is the file truncated?)`,
            );
          }
          const c = text[i];
          if (c === '"') {
            if (text[i + 1] === '"') {
              value += '"';
              i += 2;
              continue;
            }
            i++;
            break;
          }
          if (c === '\n') line++;
          else if (c === '\r' && text[i + 1] !== '\n') line++;
          value += c;
          i++;
        }
        while (text[i] === ' ' || text[i] === '\t') i++;
        if (i < n && text[i] !== ',' && text[i] !== '\n' && text[i] !== '\r') {
          throw new InputError(
            { file, row: line },
            `field ${fields.length + 1}: unexpected ${JSON.stringify(text[i])} after a closing quote; a quoted field must end at a comma or the end of the line`,
          );
        }
      } else {
        const start = i;
        while (i < n) {
          const c = text.charCodeAt(i);
          if (c === COMMA || c === LF || c === CR) break;
          if (c === QUOTE) {
            throw new InputError(
              { file, row: line },
              `field ${fields.length + 1}: a quote inside an unquoted field; enclose the whole field in quotes and double the inner quotes`,
            );
          }
          i++;
        }
        value = text.slice(start, i);
      }
      fields.push(value);
      if (i >= n) break;
      if (text[i] === ',') {
        i++;
        continue;
      }
      // Line break ends the record.
      line++;
      i += text[i] === '\r' && text[i + 1] === '\n' ? 2 : 1;
      break;
    }
    records.push({ fields, line: startLine });
  }
  return records;
}

/**
 * One CSV field: strings are quoted when they contain a comma, a quote, a line
 * break or leading/trailing white space (quotes doubled inside); numbers are
 * printed by `formatNumber`; null is the empty field.
 */
export function formatCsvField(value: string | number | null): string {
  if (value === null) return '';
  if (typeof value === 'number') return formatNumber(value);
  if (/[",\r\n]/.test(value) || value.trim() !== value || value.charCodeAt(0) === 0xfeff) {
    return '"' + value.replace(/"/g, '""') + '"';
  }
  return value;
}

/**
 * The shortest decimal text that reads back as the same double
 * (ECMAScript Number::toString, which has this round-trip guarantee),
 * with -0 printed as 0. Throws UsageError for NaN and infinities.
 */
export function formatNumber(x: number): string {
  if (!Number.isFinite(x)) throw new UsageError(`formatNumber: ${x} is not a finite number`);
  if (Object.is(x, -0)) return '0';
  return String(x);
}

/**
 * A whole CSV text: header line, then one line per row, LF line ends and a
 * final line break. Every row must have as many values as the header.
 * Throws UsageError for a row of another length or a non-finite number.
 */
export function formatCsv(header: readonly string[], rows: readonly (readonly (string | number | null)[])[]): string {
  const lines: string[] = [header.map(formatCsvField).join(',')];
  for (let r = 0; r < rows.length; r++) {
    const row = rows[r];
    if (row.length !== header.length) {
      throw new UsageError(`formatCsv: row ${r + 1} has ${row.length} values but the header has ${header.length}`);
    }
    lines.push(row.map(formatCsvField).join(','));
  }
  return lines.join('\n') + '\n';
}
