import { describe, it, expect, beforeEach, afterEach, vi } from 'vitest';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { spawn } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { assertWritable, canonicalPath, ensureOutputDir, writeFileAtomic } from '../../src/io/write.js';
import { messageOf } from '../support/errors.js';

/** Lets a test make fs.renameSync fail, to check the clean-up path. */
const failRename = vi.hoisted(() => ({ on: false, from: '' }));
vi.mock('node:fs', async (importOriginal) => {
  const real = await importOriginal<typeof import('node:fs')>();
  const renameSync = (from: import('node:fs').PathLike, to: import('node:fs').PathLike) => {
    if (failRename.on) {
      failRename.from = String(from);
      throw Object.assign(new Error('simulated failure'), { code: 'EIO' });
    }
    return real.renameSync(from, to);
  };
  return { ...real, default: { ...real, renameSync }, renameSync };
});

let dir: string;
const at = (name: string) => path.join(dir, name);

beforeEach(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'cairn-write-'));
});

afterEach(() => {
  fs.rmSync(dir, { recursive: true, force: true });
});

/** Files in the test folder, temporary files included. */
const listing = () => fs.readdirSync(dir).sort();

describe('writeFileAtomic', () => {
  it('writes the content and leaves no temporary file behind', () => {
    writeFileAtomic(at('out.csv'), 'x,y\n1,2\n');
    expect(fs.readFileSync(at('out.csv'), 'utf8')).toBe('x,y\n1,2\n');
    expect(listing()).toEqual(['out.csv']);
    writeFileAtomic(at('bytes.bin'), new Uint8Array([0, 255]));
    expect([...fs.readFileSync(at('bytes.bin'))]).toEqual([0, 255]);
  });

  it('refuses to replace an existing file unless forced', () => {
    fs.writeFileSync(at('out.csv'), 'old');
    expect(messageOf(() => writeFileAtomic(at('out.csv'), 'new'))).toBe(`${at('out.csv')}: exists; use --force to overwrite`);
    expect(fs.readFileSync(at('out.csv'), 'utf8')).toBe('old');
    writeFileAtomic(at('out.csv'), 'new', { force: true });
    expect(fs.readFileSync(at('out.csv'), 'utf8')).toBe('new');
    expect(listing()).toEqual(['out.csv']);
  });

  it('refuses an output equal to an input, even with --force, through another spelling or a symbolic link, and writes nothing', () => {
    fs.writeFileSync(at('sample.csv'), 'x,y\n1,2\n');
    fs.symlinkSync(at('sample.csv'), at('link.csv'));
    const spellings = [at('sample.csv'), path.join(dir, '.', 'sub', '..', 'sample.csv'), at('link.csv')];
    for (const target of spellings) {
      expect(messageOf(() => writeFileAtomic(target, 'overwritten', { force: true, inputs: [at('sample.csv')] }))).toBe(
        `${target}: is also an input (${at('sample.csv')}); refusing to overwrite an input, choose another output path`,
      );
    }
    expect(fs.readFileSync(at('sample.csv'), 'utf8')).toBe('x,y\n1,2\n');
    expect(listing()).toEqual(['link.csv', 'sample.csv']);
  });

  it('accepts an output that merely shares a name with an input in another folder', () => {
    fs.mkdirSync(at('in'));
    fs.writeFileSync(at('in/a.csv'), 'x');
    writeFileAtomic(at('a.csv'), 'y', { inputs: [at('in/a.csv')] });
    expect(fs.readFileSync(at('a.csv'), 'utf8')).toBe('y');
  });

  it('refuses a folder as target and a target in a missing folder', () => {
    fs.mkdirSync(at('sub'));
    expect(messageOf(() => writeFileAtomic(at('sub'), 'x', { force: true }))).toBe(`${at('sub')}: is a folder; give a file name to write`);
    expect(messageOf(() => writeFileAtomic(at('nope/out.csv'), 'x'))).toBe(`${at('nope/out.csv')}: cannot write: the folder ${at('nope')} does not exist`);
    expect(listing()).toEqual(['sub']);
  });

  it('removes its temporary file and keeps the old content when the rename fails', () => {
    fs.writeFileSync(at('target'), 'old');
    failRename.on = true;
    try {
      expect(messageOf(() => writeFileAtomic(at('target'), 'new', { force: true }))).toBe(`${at('target')}: cannot write (EIO)`);
    } finally {
      failRename.on = false;
    }
    expect(path.dirname(failRename.from)).toBe(dir);
    expect(path.basename(failRename.from)).toMatch(new RegExp(`^\\.cairn-tmp-${process.pid}-[0-9a-f]{12}-target$`));
    expect(fs.readFileSync(at('target'), 'utf8')).toBe('old');
    expect(listing()).toEqual(['target']);
  });
});

describe('assertWritable', () => {
  it('makes the same refusals as writeFileAtomic without writing anything', () => {
    fs.writeFileSync(at('in.csv'), 'x');
    expect(assertWritable(at('new.csv'))).toBe(dir);
    expect(messageOf(() => assertWritable(at('in.csv')))).toBe(`${at('in.csv')}: exists; use --force to overwrite`);
    expect(assertWritable(at('in.csv'), { force: true })).toBe(dir);
    expect(messageOf(() => assertWritable(at('in.csv'), { force: true, inputs: [at('in.csv')] }))).toBe(
      `${at('in.csv')}: is also an input (${at('in.csv')}); refusing to overwrite an input, choose another output path`,
    );
    expect(listing()).toEqual(['in.csv']);
  });
});

describe('writeFileAtomic under interruption', () => {
  it('leaves every output complete or absent when a writing process is killed by SIGINT', async () => {
    const repo = path.resolve(path.dirname(fileURLToPath(import.meta.url)), '..', '..');
    const script = path.join(dir, 'writer.mts');
    // Each output is about 1 MiB of a known pattern with an end marker; the child writes them until killed.
    fs.writeFileSync(
      script,
      `import { writeFileAtomic } from ${JSON.stringify(path.join(repo, 'src/io/write.ts'))};\n` +
        `const body = 'x,y,z,label\\n' + '1.5,2.5,3.5,VLa1\\n'.repeat(60000) + 'END\\n';\n` +
        `for (let i = 0; ; i++) { writeFileAtomic(${JSON.stringify(dir)} + '/out-' + i + '.csv', body); if (i === 3) process.stdout.write('ready\\n'); }\n`,
    );
    const child = spawn(process.execPath, ['--import', 'tsx', script], { cwd: repo, stdio: ['ignore', 'pipe', 'pipe'] });
    await new Promise<void>((resolve, reject) => {
      child.stdout.on('data', (d: Buffer) => {
        if (d.toString().includes('ready')) resolve();
      });
      child.on('exit', (code) => reject(new Error(`writer exited early with ${code}`)));
    });
    const exited = new Promise<NodeJS.Signals | null>((resolve) => child.on('exit', (_code, signal) => resolve(signal)));
    child.kill('SIGINT');
    expect(await exited).toBe('SIGINT');
    const expected = 'x,y,z,label\n' + '1.5,2.5,3.5,VLa1\n'.repeat(60000) + 'END\n';
    const outputs = fs.readdirSync(dir).filter((f) => /^out-\d+\.csv$/.test(f));
    expect(outputs.length).toBeGreaterThanOrEqual(4);
    for (const f of outputs) expect(fs.readFileSync(path.join(dir, f), 'utf8') === expected, f).toBe(true);
    // Whatever was in flight is at most one temporary file, never a partial output.
    expect(fs.readdirSync(dir).filter((f) => f.startsWith('.cairn-tmp-')).length).toBeLessThanOrEqual(1);
  });
});

describe('ensureOutputDir', () => {
  it('creates a missing folder with its parents and accepts an existing one', () => {
    ensureOutputDir(at('out/deep'));
    expect(fs.statSync(at('out/deep')).isDirectory()).toBe(true);
    ensureOutputDir(at('out/deep'));
  });

  it('refuses an existing file and an input', () => {
    fs.writeFileSync(at('file'), 'x');
    expect(messageOf(() => ensureOutputDir(at('file')))).toBe(`${at('file')}: exists and is not a folder; give a folder for the outputs`);
    expect(messageOf(() => ensureOutputDir(at('file'), { inputs: [at('file')] }))).toBe(
      `${at('file')}: is also an input (${at('file')}); refusing to overwrite an input, choose another output path`,
    );
  });
});

describe('canonicalPath', () => {
  it('resolves the existing part of a path through symbolic links and keeps the rest', () => {
    fs.mkdirSync(at('real'));
    fs.symlinkSync(at('real'), at('alias'));
    expect(canonicalPath(path.join(dir, 'alias', 'new', 'file.csv'))).toBe(path.join(fs.realpathSync(at('real')), 'new', 'file.csv'));
  });
});
