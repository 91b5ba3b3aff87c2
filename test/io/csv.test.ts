import { describe, it, expect } from 'vitest';
import * as fc from 'fast-check';
import { formatCsv, formatCsvField, formatNumber, parseCsvRecords } from '../../src/io/csv.js';
import { messageOf } from '../support/errors.js';

describe('parseCsvRecords', () => {
  it('splits records and fields and numbers each record by the line it starts on (RFC 4180 section 2)', () => {
    const text = 'x,y,label\n1,2,"a, b"\n3,4,"line one\nline two"\n5,6,"say ""hi"""\n';
    expect(parseCsvRecords(text, 'f.csv')).toEqual([
      { fields: ['x', 'y', 'label'], line: 1 },
      { fields: ['1', '2', 'a, b'], line: 2 },
      { fields: ['3', '4', 'line one\nline two'], line: 3 },
      { fields: ['5', '6', 'say "hi"'], line: 5 },
    ]);
  });

  it('accepts CRLF, LF and lone CR line breaks, drops a byte order mark and skips blank lines', () => {
    const text = '\uFEFFx,y\r\n1,2\r\n\r\n3,4\r5,6\n\n7,8';
    expect(parseCsvRecords(text, 'f.csv')).toEqual([
      { fields: ['x', 'y'], line: 1 },
      { fields: ['1', '2'], line: 2 },
      { fields: ['3', '4'], line: 4 },
      { fields: ['5', '6'], line: 5 },
      { fields: ['7', '8'], line: 7 },
    ]);
  });

  it('counts CRLF inside a quoted field as one line break', () => {
    expect(parseCsvRecords('a\r\n"b\r\nc"\r\nd\r\n', 'f.csv').map((r) => r.line)).toEqual([1, 2, 4]);
  });

  it('tolerates spaces and tabs outside the quotes of a quoted field, and keeps them in unquoted fields', () => {
    expect(parseCsvRecords('x, y,label\n1, 2 , "a, b" \t\n', 'f.csv')[1].fields).toEqual(['1', ' 2 ', 'a, b']);
  });

  it('keeps empty fields, including a trailing one', () => {
    expect(parseCsvRecords('a,,c,\n', 'f.csv')[0].fields).toEqual(['a', '', 'c', '']);
  });

  it('names the line where an unclosed quote starts', () => {
    expect(messageOf(() => parseCsvRecords('x,y\n1,2\n3,"4\n5,6\n', 'f.csv'))).toBe(
      'f.csv:3: field 2: a quoted field starts on this line and is never closed (is the file truncated?)',
    );
  });

  it('rejects text after a closing quote and a quote inside an unquoted field', () => {
    expect(messageOf(() => parseCsvRecords('x,y\n"1"2,3\n', 'f.csv'))).toBe(
      'f.csv:2: field 1: unexpected "2" after a closing quote; a quoted field must end at a comma or the end of the line',
    );
    expect(messageOf(() => parseCsvRecords('x,y\n1,2"\n', 'f.csv'))).toBe(
      'f.csv:2: field 2: a quote inside an unquoted field; enclose the whole field in quotes and double the inner quotes',
    );
  });
});

describe('formatCsvField and formatCsv', () => {
  it('quotes only fields with a comma, quote, line break or edge spaces, doubling inner quotes', () => {
    expect(formatCsvField('VLa1')).toBe('VLa1');
    expect(formatCsvField('a,b')).toBe('"a,b"');
    expect(formatCsvField('say "hi"')).toBe('"say ""hi"""');
    expect(formatCsvField('two\nlines')).toBe('"two\nlines"');
    expect(formatCsvField(' pad')).toBe('" pad"');
    expect(formatCsvField(null)).toBe('');
    expect(formatCsvField(-0)).toBe('0');
    expect(formatCsvField(0.1)).toBe('0.1');
  });

  it('writes a header, one line per row, LF line ends and a final newline', () => {
    expect(formatCsv(['x', 'label'], [[1.5, 'a,b'], [2, null]])).toBe('x,label\n1.5,"a,b"\n2,\n');
  });

  it('refuses rows of another length and non-finite numbers', () => {
    expect(messageOf(() => formatCsv(['x', 'y'], [[1]]))).toBe('formatCsv: row 1 has 1 values but the header has 2');
    expect(messageOf(() => formatNumber(Infinity))).toBe('formatNumber: Infinity is not a finite number');
  });

  it('property: parsing formatted fields gives back the same strings', () => {
    const field = fc.string({ maxLength: 12 });
    fc.assert(
      fc.property(fc.array(fc.array(field, { minLength: 2, maxLength: 4 }), { minLength: 1, maxLength: 6 }), (rows) => {
        const width = rows[0].length;
        const table = rows.map((r) => (r.length === width ? r : [...r, ...Array(width).fill('')].slice(0, width)));
        // A record whose fields are all empty is a blank line; RFC 4180 writers cannot express it unquoted, so keep one non-empty field.
        const header = Array.from({ length: width }, (_, j) => `c${j}`);
        const body = table.map((r) => (r.every((f) => f === '') ? ['-', ...r.slice(1)] : r));
        const text = formatCsv(header, body);
        const back = parseCsvRecords(text, 'p.csv');
        expect(back.map((r) => r.fields)).toEqual([header, ...body]);
      }),
      { seed: 4180, numRuns: 300 },
    );
  });

  it('property: formatNumber text reads back as the same double', () => {
    fc.assert(
      fc.property(fc.double({ noNaN: true, noDefaultInfinity: true }), (x) => {
        expect(Number(formatNumber(x)) === x).toBe(true);
      }),
      { seed: 11, numRuns: 500 },
    );
  });
});
