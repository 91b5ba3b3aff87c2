import { describe, it, expect } from 'vitest';
import * as fc from 'fast-check';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { decodeUtf8, firstInvalidUtf8Offset, readTextFile } from '../../src/io/text-file.js';
import { messageOf } from '../support/errors.js';

describe('decodeUtf8', () => {
  it('decodes UTF-8 and drops a leading byte order mark', () => {
    expect(decodeUtf8(new Uint8Array([0xef, 0xbb, 0xbf, 0x78, 0xc3, 0xa9]), 'f.csv')).toBe('xé');
  });

  it('names the line and offset of the first byte that is not UTF-8', () => {
    const bytes = new Uint8Array([0x78, 0x0a, 0x31, 0x0a, 0x61, 0xe9, 0x62]); // "x\n1\na" + Latin-1 é + "b"
    expect(messageOf(() => decodeUtf8(bytes, 'f.csv'))).toBe('f.csv:3: the file is not valid UTF-8 (byte 0xe9 at offset 5); save it as UTF-8');
  });

  it('reports a multi-byte character cut off at the end', () => {
    expect(messageOf(() => decodeUtf8(new Uint8Array([0x61, 0xe2, 0x82]), 'f.csv'))).toBe(
      'f.csv:1: the file is not valid UTF-8 (byte 0xe2 at offset 1); save it as UTF-8',
    );
  });
});

describe('firstInvalidUtf8Offset', () => {
  it('rejects overlong forms, surrogates and code points above U+10FFFF (Unicode 15, Table 3-7)', () => {
    expect(firstInvalidUtf8Offset(new Uint8Array([0xc0, 0x80]))).toBe(0); // overlong NUL
    expect(firstInvalidUtf8Offset(new Uint8Array([0xe0, 0x80, 0x80]))).toBe(0); // overlong
    expect(firstInvalidUtf8Offset(new Uint8Array([0xed, 0xa0, 0x80]))).toBe(0); // U+D800
    expect(firstInvalidUtf8Offset(new Uint8Array([0xf4, 0x90, 0x80, 0x80]))).toBe(0); // U+110000
    expect(firstInvalidUtf8Offset(new Uint8Array([0x41, 0xf0, 0x9f, 0x98, 0x80]))).toBe(5); // valid
  });

  it('property: agrees with the WHATWG decoder (TextDecoder fatal) on whether bytes are well formed', () => {
    const bytes = fc.oneof(
      fc.uint8Array({ maxLength: 24 }),
      fc.string({ unit: 'grapheme', maxLength: 12 }).map((s) => new TextEncoder().encode(s)),
      fc
        .tuple(fc.string({ unit: 'grapheme', maxLength: 12 }), fc.nat(), fc.integer({ min: 0, max: 255 }))
        .map(([s, at, b]) => {
          const e = new TextEncoder().encode(s);
          if (e.length > 0) e[at % e.length] = b;
          return e;
        }),
    );
    fc.assert(
      fc.property(bytes, (b) => {
        let ok = true;
        try {
          new TextDecoder('utf-8', { fatal: true }).decode(b);
        } catch {
          ok = false;
        }
        expect(firstInvalidUtf8Offset(b) === b.length).toBe(ok);
      }),
      { seed: 3629, numRuns: 500 },
    );
  });
});

describe('readTextFile', () => {
  it('names a missing file and a folder given where a file was expected', () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'cairn-text-'));
    try {
      expect(messageOf(() => readTextFile(path.join(dir, 'nope.csv')))).toBe(`${path.join(dir, 'nope.csv')}: no such file`);
      expect(messageOf(() => readTextFile(dir))).toBe(`${dir}: is a folder, not a file; give the files inside it (for example folder/*.csv)`);
      fs.writeFileSync(path.join(dir, 'ok.csv'), '\uFEFFx,y\r\n');
      expect(readTextFile(path.join(dir, 'ok.csv'))).toBe('x,y\r\n');
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
