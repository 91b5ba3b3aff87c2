import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import * as fc from 'fast-check';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { isCairnError, UsageError } from '../../src/errors.js';
import { parseVoxelSize, readSamples, readSamplesCollect } from '../../src/io/sample-reader.js';
import { messageOf } from '../support/errors.js';

let dir: string;
const at = (name: string) => path.join(dir, name);

beforeAll(() => {
  dir = fs.mkdtempSync(path.join(os.tmpdir(), 'cairn-reader-'));
  fs.writeFileSync(at('a.csv'), 'x,y,z,label\n1,2,3,VLa1\n4,5,6,\n');
  fs.writeFileSync(at('b.json'), JSON.stringify({ points: [{ x: 1, y: 1, z: 1, label: 'VLa1' }] }));
  fs.writeFileSync(at('flat.csv'), 'x,y\n1,2\n');
  fs.writeFileSync(at('bad.csv'), 'x,y,z\n1,2,zz\n1,2,NaN\n');
  fs.writeFileSync(at('notes.txt'), 'x,y\n1,2\n');
  fs.mkdirSync(at('other'));
  fs.writeFileSync(at('other/a.csv'), 'x,y,z\n7,8,9\n');
  fs.mkdirSync(at('folder.csv'));
});

afterAll(() => {
  fs.rmSync(dir, { recursive: true, force: true });
});

describe('readSamples', () => {
  it('chooses the parser by extension and keeps file order', () => {
    const samples = readSamples([at('a.csv'), at('b.json')]);
    expect(samples.map((s) => [s.id, s.source, s.coords.length])).toEqual([
      ['a', at('a.csv'), 2],
      ['b', at('b.json'), 1],
    ]);
  });

  it('applies the voxel size to every file', () => {
    const samples = readSamples([at('a.csv'), at('b.json')], { voxelSize: [2, 3, 4] });
    expect(samples[0].coords[1]).toEqual([8, 15, 24]);
    expect(samples[1].coords[0]).toEqual([2, 3, 4]);
  });

  it('throws the first error, naming the file', () => {
    expect(messageOf(() => readSamples([at('a.csv'), at('bad.csv')]))).toBe(`${at('bad.csv')}:2: column "z": "zz" is not a finite number`);
  });

  it('rejects a folder, a missing file and an unknown extension', () => {
    expect(messageOf(() => readSamples([at('folder.csv')]))).toBe(`${at('folder.csv')}: is a folder, not a file; give the files inside it (for example folder/*.csv)`);
    expect(messageOf(() => readSamples([at('missing.csv')]))).toBe(`${at('missing.csv')}: no such file`);
    expect(messageOf(() => readSamples([at('notes.txt')]))).toBe(`${at('notes.txt')}: unknown sample file type ".txt"; use .csv or .json`);
  });

  it('rejects samples of mixed dimension across files, naming both', () => {
    expect(messageOf(() => readSamples([at('a.csv'), at('flat.csv')]))).toBe(
      `${at('flat.csv')}: sample "flat" is 2-D but sample "a" (${at('a.csv')}) is 3-D; all samples must have the same dimension`,
    );
  });

  it('rejects the same sample id in two files', () => {
    expect(messageOf(() => readSamples([at('a.csv'), at('other/a.csv')]))).toBe(
      `${at('other/a.csv')}: sample id "a" is also used by ${at('a.csv')}; sample ids must be unique`,
    );
  });

  it('rejects the same file given twice, under any spelling', () => {
    expect(messageOf(() => readSamples([at('a.csv'), at('a.csv')]))).toBe(`${at('a.csv')}: is given more than once`);
    const other = `${dir}/other/../a.csv`;
    expect(messageOf(() => readSamples([at('a.csv'), other]))).toBe(`${other}: is given more than once (also as ${at('a.csv')})`);
  });

  it('needs at least one path (UsageError)', () => {
    expect(() => readSamples([])).toThrow(UsageError);
  });
});

describe('readSamples on arbitrary bytes', () => {
  it('fuzz: files of random bytes (valid UTF-8 or not) give only cairn errors', () => {
    fc.assert(
      fc.property(fc.uint8Array({ maxLength: 80 }), fc.constantFrom('csv', 'json'), (bytes, ext) => {
        const file = at(`fuzz.${ext}`);
        fs.writeFileSync(file, bytes);
        try {
          readSamples([file]);
        } catch (e) {
          if (!isCairnError(e)) throw e;
        }
      }),
      { seed: 5150, numRuns: 200 },
    );
  });
});

describe('readSamplesCollect', () => {
  it('collects every error of every file and keeps the samples of the good files', () => {
    const r = readSamplesCollect([at('a.csv'), at('bad.csv'), at('folder.csv'), at('b.json'), at('flat.csv')]);
    expect(r.errors.map((e) => e.message)).toEqual([
      `${at('bad.csv')}:2: column "z": "zz" is not a finite number`,
      `${at('bad.csv')}:3: column "z": "NaN" is not a finite number`,
      `${at('folder.csv')}: is a folder, not a file; give the files inside it (for example folder/*.csv)`,
      `${at('flat.csv')}: sample "flat" is 2-D but sample "a" (${at('a.csv')}) is 3-D; all samples must have the same dimension`,
    ]);
    expect(r.samples.map((s) => s.id)).toEqual(['a', 'b']);
    expect(r.files.map((f) => [f.file, f.samples.length, f.errors.length])).toEqual([
      [at('a.csv'), 1, 0],
      [at('bad.csv'), 0, 2],
      [at('folder.csv'), 0, 1],
      [at('b.json'), 1, 0],
      [at('flat.csv'), 1, 0],
    ]);
  });
});

describe('parseVoxelSize', () => {
  it('reads 2 or 3 positive numbers separated by commas', () => {
    expect(parseVoxelSize('0.5,0.5,2')).toEqual([0.5, 0.5, 2]);
    expect(parseVoxelSize(' 0.2 , 1e-1 ')).toEqual([0.2, 0.1]);
  });

  it('rejects other counts, zero, negative and non-finite values with UsageError', () => {
    expect(messageOf(() => parseVoxelSize('1'))).toBe('--voxel-size: expected 2 or 3 positive numbers separated by commas (X,Y or X,Y,Z), got "1"');
    expect(messageOf(() => parseVoxelSize('1,1,1,1'))).toBe('--voxel-size: expected 2 or 3 positive numbers separated by commas (X,Y or X,Y,Z), got "1,1,1,1"');
    expect(messageOf(() => parseVoxelSize('1,0,1'))).toBe(
      '--voxel-size: expected 2 or 3 positive numbers separated by commas (X,Y or X,Y,Z), got "1,0,1": "0" is not a positive finite number',
    );
    for (const t of ['1,-1', '1,NaN', '1,Inf', '1,1e400', '1,,1', '1;1']) expect(() => parseVoxelSize(t), t).toThrow(UsageError);
  });
});
