/**
 * Writing outputs so that nothing is ever half-written or overwritten by
 * accident: each file is written to a temporary file in the same folder and
 * then renamed over the target (rename is atomic within one file system on
 * POSIX), an existing file is replaced only with `force`, and an output that
 * is one of the command's inputs is always refused.
 */
import { randomBytes } from 'node:crypto';
import * as fs from 'node:fs';
import * as path from 'node:path';
import { InputError } from '../errors.js';
import { canonicalPath } from './paths.js';
import { fileSystemError } from './text-file.js';

export { formatCsv, formatCsvField, formatNumber } from './csv.js';
export { canonicalPath } from './paths.js';

export interface WriteOptions {
  /** Replace an existing file. */
  readonly force?: boolean;
  /** The command's input files: the output may not be any of them. */
  readonly inputs?: readonly string[];
}

/** Throws InputError when `target` is (resolves to the same file as) one of `inputs`. */
export function refuseInputAsOutput(target: string, inputs: readonly string[] = []): void {
  const t = canonicalPath(target);
  for (const input of inputs) {
    if (canonicalPath(input) === t) {
      throw new InputError(
        { file: target },
        `is also an input (${input}); refusing to overwrite an input, choose another output path`,
      );
    }
  }
}

/**
 * The checks `writeFileAtomic` makes before writing, without writing: call it
 * before a long computation so that a refused output fails early. Throws
 * InputError when `target` is one of `options.inputs`, exists without
 * `options.force`, is a folder, or its folder does not exist. Returns the
 * absolute folder of `target`.
 */
export function assertWritable(target: string, options: WriteOptions = {}): string {
  refuseInputAsOutput(target, options.inputs);
  const dir = path.dirname(path.resolve(target));
  let dirStat: fs.Stats | undefined;
  try {
    dirStat = fs.statSync(dir);
  } catch {
    dirStat = undefined;
  }
  if (!dirStat || !dirStat.isDirectory()) {
    throw new InputError({ file: target }, `cannot write: the folder ${dir} does not exist`);
  }
  let existing: fs.Stats | undefined;
  try {
    existing = fs.statSync(target);
  } catch {
    existing = undefined;
  }
  if (existing?.isDirectory()) throw new InputError({ file: target }, 'is a folder; give a file name to write');
  if (existing && !options.force) throw new InputError({ file: target }, 'exists; use --force to overwrite');
  return dir;
}

/**
 * Write `content` to `target` atomically: write `.cairn-tmp-<pid>-<hex>-<name>`
 * in the same folder, flush it to disk, rename it over `target`. The
 * temporary file is removed on any failure. Throws InputError when `target`
 * is one of `options.inputs`, exists without `options.force`
 * (`out.csv: exists; use --force to overwrite`), is a folder, or its folder
 * does not exist; and for file-system failures.
 */
export function writeFileAtomic(target: string, content: string | Uint8Array, options: WriteOptions = {}): void {
  const dir = assertWritable(target, options);
  const tmp = path.join(dir, `.cairn-tmp-${process.pid}-${randomBytes(6).toString('hex')}-${path.basename(target)}`);
  let fd: number | undefined;
  try {
    fd = fs.openSync(tmp, 'wx', 0o644);
    fs.writeFileSync(fd, content);
    fs.fsyncSync(fd);
    fs.closeSync(fd);
    fd = undefined;
    fs.renameSync(tmp, target);
  } catch (e) {
    if (fd !== undefined) {
      try {
        fs.closeSync(fd);
      } catch {
        // already failing; the original error is the one to report
      }
    }
    try {
      fs.rmSync(tmp, { force: true });
    } catch {
      // nothing more we can do; the original error is the one to report
    }
    if (e instanceof InputError) throw e;
    throw writeError(target, e);
  }
}

/**
 * Make sure `dir` exists as a folder to write outputs into (created with its
 * parents when missing). Throws InputError when it is one of the inputs or an
 * existing file. Files inside are written with `writeFileAtomic`, which
 * refuses to replace existing ones without `force`.
 */
export function ensureOutputDir(dir: string, options: WriteOptions = {}): void {
  refuseInputAsOutput(dir, options.inputs);
  let stat: fs.Stats | undefined;
  try {
    stat = fs.statSync(dir);
  } catch {
    stat = undefined;
  }
  if (stat && !stat.isDirectory()) throw new InputError({ file: dir }, 'exists and is not a folder; give a folder for the outputs');
  if (stat) return;
  try {
    fs.mkdirSync(dir, { recursive: true });
  } catch (e) {
    throw writeError(dir, e);
  }
}

function writeError(target: string, e: unknown): InputError {
  const code = (e as { code?: string } | null)?.code;
  if (code === 'EACCES' || code === 'EPERM') return new InputError({ file: target }, 'cannot write: permission denied');
  if (code === 'ENOSPC') return new InputError({ file: target }, 'cannot write: no space left on the device');
  if (code === 'EROFS') return new InputError({ file: target }, 'cannot write: read-only file system');
  const base = fileSystemError(target, e);
  return new InputError({ file: target }, `cannot write (${code ?? base.reason})`);
}
