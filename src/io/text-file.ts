/**
 * Reading input files as UTF-8 text: the one place where input bytes become
 * strings. A byte order mark is dropped; bytes that are not UTF-8 are an
 * InputError naming the line and byte offset of the first bad byte.
 */
import * as fs from 'node:fs';
import { InputError } from '../errors.js';

/**
 * Decode `bytes` as strict UTF-8 (WHATWG TextDecoder with `fatal: true`),
 * dropping a leading byte order mark.
 * Throws InputError `file:line: the file is not valid UTF-8 (byte 0xff at offset 17)`.
 */
export function decodeUtf8(bytes: Uint8Array, file: string): string {
  try {
    return new TextDecoder('utf-8', { fatal: true, ignoreBOM: false }).decode(bytes);
  } catch {
    const offset = firstInvalidUtf8Offset(bytes);
    let line = 1;
    for (let i = 0; i < offset && i < bytes.length; i++) if (bytes[i] === 0x0a) line++;
    const shown = offset < bytes.length ? `byte 0x${bytes[offset].toString(16).padStart(2, '0')} at offset ${offset}` : `incomplete character at the end`;
    throw new InputError({ file, row: line }, `the file is not valid UTF-8 (${shown}); save it as UTF-8`);
  }
}

/**
 * Offset of the first byte that does not belong to a well-formed UTF-8
 * sequence (Unicode 15, Table 3-7: no overlong forms, no surrogates, at most
 * U+10FFFF), or bytes.length when the input is well formed.
 */
export function firstInvalidUtf8Offset(bytes: Uint8Array): number {
  let i = 0;
  const n = bytes.length;
  while (i < n) {
    const b = bytes[i];
    if (b < 0x80) {
      i++;
      continue;
    }
    let need: number;
    let lo = 0x80;
    let hi = 0xbf;
    if (b >= 0xc2 && b <= 0xdf) need = 1;
    else if (b >= 0xe0 && b <= 0xef) {
      need = 2;
      if (b === 0xe0) lo = 0xa0;
      if (b === 0xed) hi = 0x9f;
    } else if (b >= 0xf0 && b <= 0xf4) {
      need = 3;
      if (b === 0xf0) lo = 0x90;
      if (b === 0xf4) hi = 0x8f;
    } else return i;
    for (let k = 1; k <= need; k++) {
      if (i + k >= n) return i;
      const c = bytes[i + k];
      const min = k === 1 ? lo : 0x80;
      const max = k === 1 ? hi : 0xbf;
      if (c < min || c > max) return i;
    }
    i += need + 1;
  }
  return n;
}

/**
 * Read a whole file as UTF-8 text. Errors are InputErrors naming the path:
 * missing file, a folder where a file was expected, unreadable file, bytes
 * that are not UTF-8.
 */
export function readTextFile(path: string): string {
  return decodeUtf8(readFileBytes(path), path);
}

/** Read a whole file's bytes, mapping file-system failures to InputError. */
export function readFileBytes(path: string): Uint8Array {
  let stat: fs.Stats;
  try {
    stat = fs.statSync(path);
  } catch (e) {
    throw fileSystemError(path, e);
  }
  if (stat.isDirectory()) {
    throw new InputError({ file: path }, 'is a folder, not a file; give the files inside it (for example folder/*.csv)');
  }
  try {
    return fs.readFileSync(path);
  } catch (e) {
    throw fileSystemError(path, e);
  }
}

/** Map a Node file-system error to an InputError with a plain reason. */
export function fileSystemError(path: string, e: unknown): InputError {
  const code = (e as { code?: string } | null)?.code;
  switch (code) {
    case 'ENOENT':
      return new InputError({ file: path }, 'no such file');
    case 'EACCES':
    case 'EPERM':
      return new InputError({ file: path }, 'permission denied');
    case 'EISDIR':
      return new InputError({ file: path }, 'is a folder, not a file; give the files inside it (for example folder/*.csv)');
    case 'ENOTDIR':
      return new InputError({ file: path }, 'a part of the path is not a folder');
    default:
      return new InputError({ file: path }, `cannot read (${code ?? (e instanceof Error ? e.message : String(e))})`);
  }
}
