/**
 * The bad-input corpus (test/fixtures/bad/cases.json): every case runs through
 * `cairn check` in-process (sample files) or readTemplate (template files) and
 * must give its exit code and exactly its messages; inputs that must work
 * (BOM, CRLF, quoted commas, ...) must be read with the listed counts.
 */
import { describe, it, expect } from 'vitest';
import * as fs from 'node:fs';
import * as os from 'node:os';
import * as path from 'node:path';
import { fileURLToPath } from 'node:url';
import { InputError } from '../../src/errors.js';
import { exitCodeFor, main, type CliIo } from '../../src/cli/main.js';
import { readTemplate } from '../../src/io/template-file.js';
import { writeFileAtomic } from '../../src/io/write.js';

interface Case {
  name: string;
  kind: 'samples' | 'template';
  files: string[];
  args?: string[];
  exit: number;
  errors?: string[];
  samples?: { id: string; points: number; labelled: number; dim: number }[];
  note: string;
}

const badDir = path.join(path.dirname(fileURLToPath(import.meta.url)), '..', 'fixtures', 'bad');
const manifest = JSON.parse(fs.readFileSync(path.join(badDir, 'cases.json'), 'utf8')) as { cases: Case[] };
const rel = (f: string) => path.relative(process.cwd(), path.join(badDir, f));

function capture(): CliIo & { out: string; err: string } {
  const io = {
    out: '',
    err: '',
    stdout: (t: string) => {
      io.out += t;
    },
    stderr: (t: string) => {
      io.err += t;
    },
  };
  return io;
}

function expand(message: string, paths: readonly string[]): string {
  return message.replace(/\{(\d+)\}/g, (_, i) => paths[Number(i)]);
}

function listTree(dir: string): string[] {
  return fs.readdirSync(dir, { recursive: true, withFileTypes: false }).map(String).sort();
}

describe('bad-input corpus (test/fixtures/bad/cases.json)', () => {
  it('has at least 40 failing cases, each with its exact messages, and unique names', () => {
    const bad = manifest.cases.filter((c) => c.exit === 1);
    expect(bad.length).toBeGreaterThanOrEqual(40);
    expect(bad.every((c) => (c.errors?.length ?? 0) > 0)).toBe(true);
    expect(new Set(manifest.cases.map((c) => c.name)).size).toBe(manifest.cases.length);
  });

  const before = listTree(badDir);

  for (const c of manifest.cases) {
    const title =
      c.exit === 0 ? `reads ${c.note} (${c.name})` : `rejects ${c.note} with exit code ${c.exit} and exact messages (${c.name})`;
    it(title, async () => {
      const paths = c.files.map(rel);
      if (c.kind === 'template') {
        let caught: unknown;
        try {
          readTemplate(paths[0]);
        } catch (e) {
          caught = e;
        }
        expect(caught).toBeInstanceOf(InputError);
        expect((caught as InputError).message).toBe(expand(c.errors![0], paths));
        const io = capture();
        expect(exitCodeFor(caught, io)).toBe(c.exit);
        expect(io.err).toBe(`cairn: ${expand(c.errors![0], paths)}\n`);
        return;
      }
      const io = capture();
      const code = await main(['node', 'cairn', 'check', ...paths, ...(c.args ?? []), ...(c.exit === 0 ? ['--json'] : [])], io);
      if (c.exit === 0) {
        expect(io.err).toBe('');
        expect(code).toBe(0);
        const report = JSON.parse(io.out);
        expect(report.ok).toBe(true);
        expect(report.samples.map((s: Record<string, unknown>) => ({ id: s.id, points: s.points, labelled: s.labelled, dim: s.dim }))).toEqual(c.samples);
        return;
      }
      expect(code).toBe(c.exit);
      const lines = io.err.trimEnd().split('\n');
      const summary = lines.pop();
      expect(lines).toEqual(c.errors!.map((m) => expand(m, paths)));
      expect(summary).toMatch(/^cairn check: \d+ errors? in \d+ of \d+ files?$/);
    });
  }

  it('leaves the corpus folder exactly as it was (nothing written by any case)', () => {
    expect(listTree(badDir)).toEqual(before);
  });
});

describe('an output path equal to an input', () => {
  it('is refused with exit code 1 and nothing is written, even with --force', () => {
    const dir = fs.mkdtempSync(path.join(os.tmpdir(), 'cairn-bad-'));
    try {
      const input = path.join(dir, 'animal.csv');
      const original = 'x,y,z,label\n1,2,3,VLa1\n';
      fs.writeFileSync(input, original);
      let caught: unknown;
      try {
        writeFileAtomic(path.join(dir, '.', 'animal.csv'), 'label,confidence\n', { force: true, inputs: [input] });
      } catch (e) {
        caught = e;
      }
      expect(caught).toBeInstanceOf(InputError);
      const io = capture();
      expect(exitCodeFor(caught, io)).toBe(1);
      expect(io.err).toBe(`cairn: ${path.join(dir, 'animal.csv')}: is also an input (${input}); refusing to overwrite an input, choose another output path\n`);
      expect(fs.readFileSync(input, 'utf8')).toBe(original);
      expect(fs.readdirSync(dir)).toEqual(['animal.csv']);
    } finally {
      fs.rmSync(dir, { recursive: true, force: true });
    }
  });
});
