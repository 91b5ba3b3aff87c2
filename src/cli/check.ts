/**
 * `cairn check SAMPLES... [--voxel-size X,Y[,Z]] [--json]`: validate sample
 * files without writing anything. Prints, per sample, its points, labelled
 * points and dimension, then the hand labels that look wrong (warnings, from
 * `handLabelCheckSection` in build.ts); on bad input lists every error found
 * (all files, all rows) and exits 1.
 *
 * Shape: read (src/io) -> `buildCheckReport` (a plain object) -> render as text
 * or JSON. Further checks (for example suspicious hand labels) add a
 * `CheckSection` to `report.sections`; both renderers print sections generically.
 */
import type { Command } from 'commander';
import type { InputError } from '../errors.js';
import { readSamplesCollect, type SampleReadResult } from '../io/sample-reader.js';
import type { Sample } from '../types.js';
import { handLabelCheckSection } from './build.js';
import { voxelSizeOption } from './options.js';
import { CommandFailed, type CliIo } from './main.js';

export interface CheckOptions {
  readonly voxelSize?: number[];
  readonly json?: boolean;
}

/** One valid sample as `check` reports it. */
export interface CheckSampleSummary {
  readonly id: string;
  readonly file: string;
  readonly points: number;
  readonly labelled: number;
  readonly dim: number;
  readonly features: readonly string[];
}

/** One problem, with its location as separate fields and the full message. */
export interface CheckProblem {
  readonly file: string;
  readonly row: number | null;
  readonly column: string | null;
  readonly reason: string;
  readonly message: string;
}

/**
 * An additional part of the report (for example suspicious hand labels):
 * `lines` are printed under `title` in text mode, `data` goes into the JSON
 * report under `key`. `problems` count as errors (exit 1); leave it empty for
 * findings that are warnings only.
 */
export interface CheckSection {
  readonly key: string;
  readonly title: string;
  readonly lines: readonly string[];
  readonly data: unknown;
  readonly problems?: readonly CheckProblem[];
}

export interface CheckReport {
  readonly files: number;
  readonly samples: readonly CheckSampleSummary[];
  readonly errors: readonly CheckProblem[];
  readonly sections: CheckSection[];
}

/** Summaries of the valid samples and every error, from what the reader returned. */
export function buildCheckReport(result: SampleReadResult): CheckReport {
  return {
    files: result.files.length,
    samples: result.samples.map(summarizeSample),
    errors: result.errors.map(problemOf),
    sections: [],
  };
}

export function summarizeSample(s: Sample): CheckSampleSummary {
  return {
    id: s.id,
    file: s.source,
    points: s.coords.length,
    labelled: s.labels.reduce((n, l) => (l === null ? n : n + 1), 0),
    dim: s.dim,
    features: s.features.names.slice(),
  };
}

export function problemOf(e: InputError): CheckProblem {
  return { file: e.file, row: e.row ?? null, column: e.column ?? null, reason: e.reason, message: e.message };
}

/** True when the report holds an error (reading or any section). */
export function checkFailed(report: CheckReport): boolean {
  return report.errors.length > 0 || report.sections.some((s) => (s.problems?.length ?? 0) > 0);
}

/** The report as text: a table of samples and the sections (stdout), then every problem (stderr). */
export function renderCheckText(report: CheckReport): { stdout: string; stderr: string } {
  let out = '';
  if (report.samples.length > 0) {
    const header = ['sample', 'file', 'points', 'labelled', 'dim', 'features'];
    const rows = report.samples.map((s) => [s.id, s.file, String(s.points), String(s.labelled), `${s.dim}-D`, s.features.join(' ') || '-']);
    out += formatTable(header, rows, [false, false, true, true, false, false]);
  }
  for (const section of report.sections) {
    out += `\n${section.title}\n`;
    for (const line of section.lines) out += `  ${line}\n`;
  }
  const problems = allProblems(report);
  let err = '';
  for (const p of problems) err += `${p.message}\n`;
  if (problems.length > 0) {
    const badFiles = new Set(problems.map((p) => p.file)).size;
    err += `cairn check: ${problems.length} error${problems.length === 1 ? '' : 's'} in ${badFiles} of ${report.files} file${report.files === 1 ? '' : 's'}\n`;
  } else {
    const n = report.samples.length;
    out += `${n} sample${n === 1 ? '' : 's'} in ${report.files} file${report.files === 1 ? '' : 's'}: no errors\n`;
  }
  return { stdout: out, stderr: err };
}

/** The report as a JSON document (stdout under --json). */
export function renderCheckJson(report: CheckReport): string {
  const doc: Record<string, unknown> = {
    ok: !checkFailed(report),
    files: report.files,
    samples: report.samples,
    errors: report.errors,
  };
  for (const s of report.sections) doc[s.key] = s.data;
  return JSON.stringify(doc, null, 2) + '\n';
}

function allProblems(report: CheckReport): CheckProblem[] {
  return [...report.errors, ...report.sections.flatMap((s) => s.problems ?? [])];
}

function formatTable(header: readonly string[], rows: readonly (readonly string[])[], right: readonly boolean[]): string {
  const widths = header.map((h, j) => Math.max(h.length, ...rows.map((r) => r[j].length)));
  const line = (cells: readonly string[]) =>
    cells
      .map((c, j) => (right[j] ? c.padStart(widths[j]) : j === cells.length - 1 ? c : c.padEnd(widths[j])))
      .join('  ')
      .trimEnd() + '\n';
  return line(header) + rows.map(line).join('');
}

/** Run `check` on the given paths and print the report; throws CommandFailed after printing when there are errors. */
export function runCheck(paths: readonly string[], options: CheckOptions, io: CliIo): void {
  const result = readSamplesCollect(paths, { voxelSize: options.voxelSize });
  const report = buildCheckReport(result);
  // Suspicious hand labels, among the samples that were read without errors (warnings, not errors).
  if (result.samples.length > 0) report.sections.push(handLabelCheckSection(result.samples));
  const text = renderCheckText(report);
  io.stdout(options.json ? renderCheckJson(report) : text.stdout);
  if (text.stderr) io.stderr(text.stderr);
  if (checkFailed(report)) throw new CommandFailed('check found errors');
}

/** Adds `check` to the program (a function declaration, so that main.ts can list it despite the import cycle). */
export function registerCheck(program: Command, io: CliIo): void {
  program
    .command('check')
    .description('validate sample files and summarise them, without writing anything')
    .argument('<samples...>', 'sample files (.csv or .json)')
    .option('--voxel-size <x,y[,z]>', 'micrometres per pixel along each axis; coordinates are multiplied by it', voxelSizeOption)
    .option('--json', 'print the report as JSON on stdout')
    .action((samples: string[], opts: CheckOptions) => {
      runCheck(samples, opts, io);
    });
}
