/**
 * `cairn match TEMPLATE SAMPLES... -o DIR [--method ransac|icp|cpd] [--seed N]
 *  [--hit-radius R|auto] [--jobs N] [--max-trials N] [--nonrigid | --no-nonrigid] [--no-bend]
 *  [--abstain-below P] [--alternatives N] [--force] [--json] [--voxel-size X,Y[,Z]] [--no-timestamp]
 *  [--html FILE [--accuracy-from EVAL.json]]`:
 * propose labels for samples against a template. Writes DIR/<id>.csv per
 * sample (docs/formats.md, "Match output") and DIR/summary.json; prints a
 * short table, or the summary as JSON under --json.
 *
 * Shape: plan (sample ids and dimensions from file names and headers; refuse
 * repeated ids, a dimension other than the template's and existing outputs
 * before any work) -> [chooseHitRadius] -> stream: read one file, match its
 * samples (this thread, or worker threads with at most 2 x --jobs samples in
 * flight), write each CSV atomically as soon as it is done, drop the sample ->
 * summary.json last (atomically) -> print. Each sample's generator is seeded
 * from --seed and its id, so --jobs never changes a byte. A file that turns
 * out bad while streaming is an error of its samples in the summary; the run
 * goes on and exits 1. SIGINT stops taking samples, terminates the workers
 * and leaves every CSV complete or absent (no summary.json).
 */
import { Option, type Command } from 'commander';
import * as path from 'node:path';
import { InputError, UsageError } from '../errors.js';
import { chooseHitRadius, type HitRadiusChoice } from '../evaluate/hit-radius.js';
import { sampleSeed } from '../evaluate/cross-validate.js';
import {
  assertWritable,
  canonicalPath,
  ensureOutputDir,
  formatMatchCsv,
  MAX_ALTERNATIVES,
  parseCsvRecords,
  readSamplesCollect,
  readTemplate,
  readTextFile,
  sampleIdFromPath,
  writeFileAtomic,
} from '../io/index.js';
import { DEFAULT_HIT_RADIUS, POSE_MARGIN_SETTLED, poseUnsettled, type Assignment, type MatchOptions } from '../match/match-sample.js';
import { matchSampleStream, type SampleJob, type TimedResult } from '../match/parallel.js';
import { closeCalls, MATCH_REPORT_FIGURES, matchedFigureInput, mergeCloseCalls, renderMatchHtml, type CloseCall } from '../report/match-report.js';
import type { MatchedFigureInput } from '../report/svg/matched-figure.js';
import type { Sample, Template } from '../types.js';
import { VERSION } from '../version.js';
import { accuracyFromOption, assignOption, hitRadiusOption, integerOption, positiveNumberOption, voxelSizeOption } from './options.js';
import { CommandFailed, type CliIo, type CommandRegistrar } from './main.js';

export interface MatchCommandOptions {
  readonly output: string;
  readonly method: 'ransac' | 'icp' | 'cpd';
  readonly seed: number;
  readonly hitRadius?: number | 'auto';
  readonly jobs: number;
  readonly maxTrials?: number;
  readonly nonrigid?: boolean;
  /** false under --no-bend. */
  readonly bend?: boolean;
  readonly abstainBelow?: number;
  /** The final labelling rule (MatchOptions.assignment). */
  readonly assign: Assignment;
  /** Other labels per point in the CSVs (0-2; default 0). */
  readonly alternatives?: number;
  readonly force?: boolean;
  readonly json?: boolean;
  readonly voxelSize?: number[];
  /** false under --no-timestamp: no `created`, no per-sample `seconds` (reproducible bytes). */
  readonly timestamp?: boolean;
  readonly html?: string;
  readonly accuracyFrom?: string;
}

export interface MatchSampleSummary {
  readonly id: string;
  readonly source: string;
  /** The sample's CSV, a file name relative to the folder of summary.json (so the folder can move), or null. */
  readonly output: string | null;
  readonly points: number;
  readonly proposed: number;
  readonly meanConfidence: number | null;
  readonly transform: { kind: string; linear: number[][]; translation: number[] } | null;
  readonly hits: number | null;
  readonly score: number | null;
  readonly trials: number | null;
  readonly stopReason: string | null;
  /** Crowded points left out of the pose search (denser than any part of the template: likely a clump of outliers). */
  readonly crowded: number | null;
  readonly nonRigid: boolean | null;
  /** Whether the bend correction was kept (MatchResult.bend); null when the sample failed. */
  readonly bend: boolean | null;
  /** How far the chosen pose mode leads the best other one, nats (MatchResult.poseMargin); null when none or the sample failed. */
  readonly poseMargin: number | null;
  /** Wall time of matching, seconds; absent under --no-timestamp (it differs from run to run). */
  readonly seconds?: number;
  /** Why the sample could not be read or matched (file:row:column: reason for bad input), or null. */
  readonly error: string | null;
}

export interface MatchSummary {
  readonly format: 'cairn-match';
  readonly version: 1;
  readonly template: string;
  readonly seed: number;
  readonly method: string;
  /** The final labelling rule: 'map' (most probable joint labelling) or 'mea' (most labels right in expectation). */
  readonly assignment: Assignment;
  readonly hitRadius: number;
  readonly hitRadiusChoice: HitRadiusChoice | null;
  readonly samples: readonly MatchSampleSummary[];
  readonly note: string;
  readonly tool: { name: 'cairn'; version: string };
  /** ISO time of writing; absent under --no-timestamp. */
  readonly created?: string;
}

/** Thrown by runMatch when SIGINT (or `signal`) stopped the batch; the CSVs written so far are complete. */
export class MatchInterrupted extends Error {
  constructor(
    readonly written: number,
    readonly total: number,
  ) {
    super(`interrupted after ${written} of ${total} samples`);
    this.name = 'MatchInterrupted';
  }
}

/** Samples made from the template members' labelled positions (for --hit-radius auto). */
export function memberSamples(template: Template): Sample[] {
  return template.members
    .filter((m) => m.positions.length > 0)
    .map((m) => ({
      id: m.id,
      source: `member ${m.id}`,
      dim: template.dim,
      coords: m.positions.map((p) => p.coords.slice()),
      labels: m.positions.map((p) => p.label),
      rows: m.positions.map((_, i) => i + 1),
      features: { names: [], values: m.positions.map(() => []) },
    }));
}

/** One sample file as planned before any work: the sample ids it will give and their dimension, when known cheaply. */
interface PlannedFile {
  readonly file: string;
  readonly ids: readonly string[];
  /** Position of ids[0] among all planned samples (summary order). */
  readonly first: number;
}

/**
 * The ids (and dimension) a sample file will give, cheaply: a one-sample CSV
 * (no `sample` column) from its name and header line only; a long table or a
 * JSON file by reading it once and keeping only ids and dimensions. A file
 * that cannot be read or parsed plans one sample named after the file; its
 * error is reported for that sample when the batch reaches it.
 */
function planFile(file: string, voxelSize: number[] | undefined): { ids: string[]; dims: (number | null)[] } {
  const fallback = { ids: [sampleIdFromPath(file)], dims: [null] };
  const ext = path.extname(file).toLowerCase();
  if (ext === '.csv') {
    let text: string;
    try {
      text = readTextFile(file);
    } catch (e) {
      if (e instanceof InputError) return fallback;
      throw e;
    }
    const end = text.indexOf('\n');
    const headerLine = (end < 0 ? text : text.slice(0, end)).replace(/^\uFEFF/, '');
    let names: string[];
    try {
      names = (parseCsvRecords(headerLine, file)[0]?.fields ?? []).map((f) => f.trim().toLowerCase());
    } catch (e) {
      if (e instanceof InputError) return fallback;
      throw e;
    }
    if (!names.includes('sample')) return { ids: fallback.ids, dims: [names.includes('x') && names.includes('y') ? (names.includes('z') ? 3 : 2) : null] };
  } else if (ext !== '.json') return fallback;
  const read = readSamplesCollect([file], { voxelSize });
  if (read.errors.length > 0 || read.samples.length === 0) return fallback;
  return { ids: read.samples.map((s) => s.id), dims: read.samples.map((s) => s.dim) };
}

interface StreamJob extends SampleJob {
  /** Position in the summary. */
  readonly ordinal: number;
}

export async function runMatch(
  templatePath: string,
  samplePaths: readonly string[],
  o: MatchCommandOptions,
  io: CliIo,
  signal?: AbortSignal,
): Promise<MatchSummary> {
  if (samplePaths.length === 0) throw new UsageError('no sample files given');
  const timestamp = o.timestamp !== false;
  const template = readTemplate(templatePath);
  const measured = accuracyFromOption(o.accuracyFrom, o.html);

  // Plan: ids, dimensions, repeated files and ids, before any work.
  const inputs = [templatePath, ...samplePaths, ...(o.accuracyFrom === undefined ? [] : [o.accuracyFrom])];
  const canonicalInputs = new Map<string, string>();
  for (const p of inputs) canonicalInputs.set(canonicalPath(p), p);
  const seenFiles = new Map<string, string>();
  const owner = new Map<string, string>();
  const plan: PlannedFile[] = [];
  let total = 0;
  for (const file of samplePaths) {
    const key = canonicalPath(file);
    const earlier = seenFiles.get(key);
    if (earlier !== undefined) throw new InputError({ file }, `is given more than once${earlier === file ? '' : ` (also as ${earlier})`}`);
    seenFiles.set(key, file);
    const { ids, dims } = planFile(file, o.voxelSize);
    ids.forEach((id, k) => {
      const dim = dims[k];
      if (dim !== null && dim !== template.dim) throw new UsageError(`sample ${id} (${file}) is ${dim}-D but the template is ${template.dim}-D`);
      const other = owner.get(id);
      if (other !== undefined) throw new UsageError(`two samples are named ${JSON.stringify(id)} (${other}, ${file}); their outputs would collide`);
      owner.set(id, file);
    });
    plan.push({ file, ids, first: total });
    total += ids.length;
  }
  owner.clear();

  ensureOutputDir(o.output, { inputs });
  const csvPath = (id: string): string => path.join(o.output, `${id}.csv`);
  const summaryPath = path.join(o.output, 'summary.json');
  const refuseInput = (target: string): void => {
    const input = canonicalInputs.get(canonicalPath(target));
    if (input !== undefined) throw new InputError({ file: target }, `is also an input (${input}); refusing to overwrite an input, choose another output path`);
  };
  // Refuse existing outputs before any work (nothing half-written).
  const outputs = [...plan.flatMap((f) => f.ids.map(csvPath)), summaryPath, ...(o.html === undefined ? [] : [o.html])];
  for (const p of outputs) {
    refuseInput(p);
    assertWritable(p, { force: o.force });
  }

  let hitRadius = o.hitRadius === 'auto' || o.hitRadius === undefined ? DEFAULT_HIT_RADIUS : o.hitRadius;
  let choice: HitRadiusChoice | null = null;
  const base: Omit<MatchOptions, 'rng'> = { method: o.method, maxTrials: o.maxTrials, nonRigid: o.nonrigid, bend: o.bend, abstainBelow: o.abstainBelow, assignment: o.assign };
  if (o.hitRadius === 'auto') {
    const members = memberSamples(template);
    if (members.length < 3) {
      throw new UsageError(`--hit-radius auto needs at least 3 template members with labelled positions, the template has ${members.length}`);
    }
    choice = chooseHitRadius(members, { seed: o.seed, folds: Math.min(5, members.length), match: base });
    hitRadius = choice.hitRadius;
  }
  const options = { ...base, hitRadius };

  // Stream: compact entries by position; the figures of the first samples for --html.
  const entries: (MatchSampleSummary | undefined)[] = new Array(total);
  const figures = new Map<number, MatchedFigureInput>();
  let closest: CloseCall[] = [];
  const failEntry = (ordinal: number, id: string, source: string, error: string, points = 0, seconds = 0): void => {
    entries[ordinal] = {
      id,
      source,
      output: null,
      points,
      proposed: 0,
      meanConfidence: null,
      transform: null,
      hits: null,
      score: null,
      trials: null,
      stopReason: null,
      crowded: null,
      nonRigid: null,
      bend: null,
      poseMargin: null,
      ...(timestamp ? { seconds } : {}),
      error,
    };
  };
  function* jobs(): Generator<StreamJob> {
    for (const planned of plan) {
      const read = readSamplesCollect([planned.file], { voxelSize: o.voxelSize });
      if (read.errors.length > 0) {
        const message = read.errors[0].message + (read.errors.length > 1 ? ` (and ${read.errors.length - 1} more error${read.errors.length > 2 ? 's' : ''} in this file)` : '');
        planned.ids.forEach((id, k) => failEntry(planned.first + k, id, planned.file, message));
        continue;
      }
      const seen = new Set<string>();
      for (const sample of read.samples) {
        const k = planned.ids.indexOf(sample.id);
        if (k < 0 || seen.has(sample.id)) continue; // the file changed since it was planned; reported below
        seen.add(sample.id);
        const ordinal = planned.first + k;
        if (sample.dim !== template.dim) {
          failEntry(ordinal, sample.id, sample.source, `${sample.source}: is ${sample.dim}-D but the template is ${template.dim}-D`, sample.coords.length);
          continue;
        }
        yield { sample, seed: sampleSeed(o.seed, sample.id), ordinal };
      }
      planned.ids.forEach((id, k) => {
        if (!seen.has(id)) failEntry(planned.first + k, id, planned.file, `${planned.file}: sample ${JSON.stringify(id)} was no longer in the file when it was read for matching`);
      });
    }
  }
  const onResult = (_index: number, job: StreamJob, t: TimedResult): void => {
    const s = job.sample;
    const r = t.result;
    if (!r) {
      failEntry(job.ordinal, s.id, s.source, t.error ?? 'could not be matched', s.coords.length, t.seconds);
      return;
    }
    const out = csvPath(s.id);
    writeFileAtomic(out, formatMatchCsv(s, r.proposals, o.alternatives ?? 0), { force: o.force });
    let proposed = 0;
    let confidence = 0;
    for (const p of r.proposals) {
      if (p.label === null) continue;
      proposed++;
      confidence += p.confidence;
    }
    entries[job.ordinal] = {
      id: s.id,
      source: s.source,
      output: path.basename(out),
      points: s.coords.length,
      proposed,
      meanConfidence: proposed ? confidence / proposed : null,
      transform: { kind: r.transform.kind, linear: r.transform.linear.map((row) => row.slice()), translation: r.transform.translation.slice() },
      hits: r.hits,
      score: r.score,
      trials: r.trials,
      stopReason: r.stopReason,
      crowded: r.crowded,
      nonRigid: r.nonRigid,
      bend: r.bend,
      poseMargin: r.poseMargin,
      ...(timestamp ? { seconds: t.seconds } : {}),
      error: null,
    };
    if (o.html !== undefined && job.ordinal < MATCH_REPORT_FIGURES) figures.set(job.ordinal, matchedFigureInput(s, r));
    if (o.html !== undefined) closest = mergeCloseCalls(closest, closeCalls(s, r));
  };
  const outcome = await matchSampleStream(template, jobs(), options, onResult, { threads: Math.max(1, Math.min(o.jobs, total)), signal });
  if (outcome.aborted) throw new MatchInterrupted(entries.filter((e) => e?.output).length, total);

  const samples = entries.map((e, i) => e ?? unreachableEntry(i));
  const summary: MatchSummary = {
    format: 'cairn-match',
    version: 1,
    template: templatePath,
    seed: o.seed,
    method: o.method,
    assignment: o.assign,
    hitRadius,
    hitRadiusChoice: choice,
    samples,
    note: 'Labels are proposals to verify, not identifications.',
    tool: { name: 'cairn', version: VERSION },
    ...(timestamp ? { created: new Date().toISOString() } : {}),
  };
  if (o.html !== undefined) {
    const html = renderMatchHtml({
      template,
      templatePath,
      method: o.method,
      hitRadius,
      seed: o.seed,
      rows: samples,
      figures: [...figures.entries()].sort((a, b) => a[0] - b[0]).map(([, f]) => f),
      measured,
      closeCalls: closest,
      toolLine: `cairn ${VERSION}; template ${templatePath}; ${samplePaths.length} sample file${samplePaths.length === 1 ? '' : 's'}`,
    });
    writeFileAtomic(o.html, html, { force: o.force });
  }
  // Last, so that a summary.json means the batch finished.
  writeFileAtomic(summaryPath, JSON.stringify(summary, null, 2) + '\n', { force: o.force });
  void io;
  return summary;
}

function unreachableEntry(i: number): never {
  throw new Error(`internal: no summary entry for sample ${i + 1}`);
}

function renderText(s: MatchSummary, dir: string): string {
  const lines: string[] = [];
  lines.push(`matched ${s.samples.length} sample${s.samples.length === 1 ? '' : 's'} against ${s.template} (method ${s.method}, hit radius ${s.hitRadius}, seed ${s.seed})`);
  if (s.hitRadiusChoice) {
    lines.push(`hit radius chosen by cross-validation on the template members: ${s.hitRadiusChoice.trials.map((t) => `${t.hitRadius}: ${(100 * t.accuracy).toFixed(1)}%`).join(', ')}`);
  }
  lines.push('sample   points   labelled   mean confidence   trials   stop   seconds   output');
  for (const e of s.samples) {
    if (e.error) {
      lines.push(`${e.id}   ${e.points}   FAILED: ${e.error}`);
      continue;
    }
    lines.push(
      `${e.id}   ${e.points}   ${e.proposed}   ${e.meanConfidence === null ? '-' : e.meanConfidence.toFixed(3)}   ${e.trials}   ${e.stopReason}   ${e.seconds === undefined ? '-' : e.seconds.toFixed(2)}   ${path.join(dir, e.output ?? '')}`,
    );
  }
  const crowded = s.samples.filter((e) => (e.crowded ?? 0) > 0);
  if (crowded.length > 0) {
    lines.push(
      `crowded points left out of the pose search (packed more densely than any part of the template, most likely a clump of outliers; they still get proposals): ${crowded.map((e) => `${e.id} ${e.crowded}`).join(', ')}`,
    );
  }
  const unsettled = s.samples.filter((e) => poseUnsettled(e.poseMargin));
  if (unsettled.length > 0) {
    lines.push(
      `orientation not settled (another pose scores within ${POSE_MARGIN_SETTLED} nats; give a few labels in the sample file and match again): ${unsettled.map((e) => `${e.id} ${(e.poseMargin as number).toFixed(1)}`).join(', ')}`,
    );
  }
  lines.push('Labels are proposals to verify, not identifications.');
  return lines.join('\n') + '\n';
}

export const registerMatch: CommandRegistrar = (program: Command, io: CliIo) => {
  program
    .command('match')
    .description('propose cell labels, with confidences, for samples against a template')
    .argument('<template>', 'template file (.json) written by cairn build or cairn add')
    .argument('<samples...>', 'sample files (CSV or JSON)')
    .requiredOption('-o, --output <dir>', 'folder for <sample id>.csv and summary.json (created when missing)')
    .addOption(new Option('--method <name>', 'pose search: ransac (default) or the icp / cpd baselines').choices(['ransac', 'icp', 'cpd']).default('ransac'))
    .option('--seed <n>', 'seed for every random choice (each sample gets its own, from this and its id)', integerOption(0), 1)
    .option('--hit-radius <r>', `gate of the assignment in Mahalanobis units, or "auto" to choose it by cross-validation on the template members (default ${DEFAULT_HIT_RADIUS})`, hitRadiusOption)
    .option('--jobs <n>', 'worker threads (results are identical to --jobs 1)', integerOption(1), 1)
    .option('--max-trials <n>', 'cap on pose hypotheses per sample', integerOption(1))
    .option('--nonrigid', 'add a smooth non-rigid correction after the pose fit (off by default)')
    .option('--no-nonrigid', 'no non-rigid correction (the default)')
    .option('--no-bend', 'no bend correction (by default a bend along the template\'s long axis is fitted after the pose and kept when it pays)')
    .addOption(assignOption())
    .option('--abstain-below <p>', 'leave points unlabelled when the confidence of their proposal is below p (default 0)', positiveNumberOption(true))
    .option('--alternatives <n>', `add to each CSV row the n most probable other labels and their posterior probabilities (columns alternative_1, alternative_1_probability, ...; n from 0 to ${MAX_ALTERNATIVES}, default 0)`, integerOption(0))
    .option('--force', 'replace existing output files')
    .option('--json', 'print the summary as JSON on stdout')
    .option('--voxel-size <x,y[,z]>', 'micrometres per pixel along each axis; coordinates are multiplied by it', voxelSizeOption)
    .option('--no-timestamp', 'leave the creation time and the per-sample timings out of summary.json (reproducible bytes)')
    .option('--html <file>', 'also write a self-contained HTML page: summary, cautions, a table of samples, figures of the first 12 samples')
    .option('--accuracy-from <eval.json>', 'quote on the --html page the accuracy measured by `cairn evaluate --json` (its saved output)')
    .action(async (templatePath: string, samplePaths: string[], o: MatchCommandOptions) => {
      if (o.abstainBelow !== undefined && o.abstainBelow > 1) throw new UsageError(`--abstain-below must be in [0, 1], got ${o.abstainBelow}`);
      if (o.alternatives !== undefined && o.alternatives > MAX_ALTERNATIVES) throw new UsageError(`--alternatives must be from 0 to ${MAX_ALTERNATIVES} (the matcher keeps the 3 most probable labels per point), got ${o.alternatives}`);
      // SIGINT: stop taking samples, terminate the workers, keep the complete CSVs; a second SIGINT ends the process at once.
      const controller = new AbortController();
      const onSigint = (): void => {
        if (controller.signal.aborted) {
          process.removeListener('SIGINT', onSigint);
          process.kill(process.pid, 'SIGINT');
          return;
        }
        controller.abort();
      };
      process.on('SIGINT', onSigint);
      let summary: MatchSummary;
      try {
        summary = await runMatch(templatePath, samplePaths, o, io, controller.signal);
      } catch (e) {
        if (e instanceof MatchInterrupted) {
          io.stderr(`cairn match: interrupted; ${e.written} of ${e.total} sample outputs were written and are complete, summary.json was not written\n`);
          throw new CommandFailed('interrupted');
        }
        throw e;
      } finally {
        process.removeListener('SIGINT', onSigint);
      }
      io.stdout(o.json ? JSON.stringify(summary, null, 2) + '\n' : renderText(summary, o.output));
      if (o.html !== undefined) io.stderr(`cairn match: wrote ${o.html}\n`);
      const failed = summary.samples.filter((e) => e.error !== null);
      if (failed.length > 0) {
        io.stderr(`cairn match: ${failed.length} sample${failed.length === 1 ? '' : 's'} could not be matched: ${failed.map((e) => `${e.id} (${e.error})`).join('; ')}\n`);
        throw new CommandFailed('some samples could not be matched');
      }
    });
};
