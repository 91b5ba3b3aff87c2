import { afterAll, describe, expect, it } from 'vitest';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../src/cli/main.js';

// Issue 8's build-specific bad inputs: each exits 1 with the exact reason and writes nothing.
const dir = mkdtempSync(join(tmpdir(), 'cairn-build-bad-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function file(name: string, text: string): string {
  const path = join(dir, name);
  writeFileSync(path, text);
  return path;
}

async function build(...args: string[]): Promise<{ code: number; stderr: string; out: string }> {
  let stderr = '';
  const out = join(dir, `out-${Math.random().toString(16).slice(2)}.json`);
  const code = await main(['node', 'cairn', 'build', ...args, '-o', out], {
    stdout: () => {},
    stderr: (t) => (stderr += t),
  });
  return { code, stderr, out };
}

describe('cairn build on inputs that cannot make a template', () => {
  const noLabels = file('nolab.csv', 'x,y,z,label\n1,2,3,\n4,5,6,\n7,8,9,\n');
  const twoLabels = file('two.csv', 'x,y,z,label\n0,0,0,A\n1,0,0,B\n5,5,5,\n');
  const collinear = file('line.csv', 'x,y,z,label\n0,0,0,A\n1,1,1,B\n2,2,2,C\n3,3,3,D\n');
  const collinear2 = file('line2.csv', 'x,y,z,label\n0,0,0,A\n2,2,2,B\n4,4,4,C\n6,6,6,D\n');
  const plane = file('plane.csv', 'x,y,z,label\n0,0,0,A\n1,0,0,B\n0,1,0,C\n1,1,0,D\n');
  const plane2 = file('plane2.csv', 'x,y,z,label\n0,0,0,A\n2,0,0,B\n0,2,0,C\n2,2,0,D\n');

  it('refuses samples without enough labelled points, naming each and why', async () => {
    const r = await build(noLabels, twoLabels);
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(
      'cairn: a template needs at least 2 samples that can be aligned, got 0 (skipped nolab: has 0 labelled points; similarity alignment needs at least 3; two: has 2 labelled points; similarity alignment needs at least 3)\n',
    );
    expect(existsSync(r.out)).toBe(false);
  });

  it('refuses collinear labelled sets for a similarity fit', async () => {
    const r = await build(collinear, collinear2);
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('line: cannot be aligned: fitSimilarity: the points are collinear, so the rotation is not determined (spread rank 1, need 2)');
    expect(existsSync(r.out)).toBe(false);
  });

  it('refuses coplanar labelled sets for an affine fit', async () => {
    const r = await build(plane, plane2, '--alignment', 'affine');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('plane: cannot be aligned: fitAffine: the points are coplanar, so an affine map is not determined (spread rank 2, need 3)');
    expect(existsSync(r.out)).toBe(false);
  });

  it('refuses an output path equal to an input and leaves the input untouched', async () => {
    const a = file('a.csv', readFileSync(new URL('../../demo-data/labelled/gk-01.csv', import.meta.url), 'utf8'));
    const b = file('b.csv', readFileSync(new URL('../../demo-data/labelled/gk-02.csv', import.meta.url), 'utf8'));
    const before = readFileSync(a);
    let stderr = '';
    const code = await main(['node', 'cairn', 'build', a, b, '-o', a], { stdout: () => {}, stderr: (t) => (stderr += t) });
    expect(code).toBe(1);
    expect(stderr).toBe(`cairn: ${a}: is also an input (${a}); refusing to overwrite an input, choose another output path\n`);
    expect(readFileSync(a)).toEqual(before);
  });
});
