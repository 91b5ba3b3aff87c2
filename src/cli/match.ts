/**
 * `cairn match TEMPLATE SAMPLES... -o DIR [--method ransac|icp|cpd] [--seed N]
 *  [--hit-radius R|auto] [--jobs N] [--max-trials N] [--nonrigid | --no-nonrigid]
 *  [--abstain-below P] [--force] [--json] [--voxel-size X,Y[,Z]]`:
 * propose labels for samples against a template. Writes DIR/<id>.csv per
 * sample (docs/formats.md, "Match output") and DIR/summary.json; prints a
 * short table, or the summary as JSON under --json.
 *
 * Shape: read (src/io) -> [chooseHitRadius] -> match (src/match, serial or
 * worker threads; each sample's generator is seeded from --seed and its id, so
 * --jobs never changes a result) -> write everything atomically -> print.
 */
import { Option, type Command } from 'commander';
import { UsageError } from '../errors.js';
import { chooseHitRadius, type HitRadiusChoice } from '../evaluate/hit-radius.js';
import { sampleSeed } from '../evaluate/cross-validate.js';
import { ensureOutputDir, formatMatchCsv, readSamples, readTemplate, assertWritable, writeFileAtomic } from '../io/index.js';
import { DEFAULT_HIT_RADIUS, type MatchOptions } from '../match/match-sample.js';
import { matchSamplesParallel, matchSamplesSerial, type TimedResult } from '../match/parallel.js';
import type { Sample, Template } from '../types.js';
import { VERSION } from '../version.js';
import { hitRadiusOption, integerOption, positiveNumberOption, voxelSizeOption } from './options.js';
import { CommandFailed, type CliIo, type CommandRegistrar } from './main.js';
import * as path from 'node:path';

export interface MatchCommandOptions {
  readonly output: string;
  readonly method: 'ransac' | 'icp' | 'cpd';
  readonly seed: number;
  readonly hitRadius?: number | 'auto';
  readonly jobs: number;
  readonly maxTrials?: number;
  readonly nonrigid?: boolean;
  readonly abstainBelow?: number;
  readonly force?: boolean;
  readonly json?: boolean;
  readonly voxelSize?: number[];
}

export interface MatchSampleSummary {
  readonly id: string;
  readonly source: string;
  readonly output: string | null;
  readonly points: number;
  readonly proposed: number;
  readonly meanConfidence: number | null;
  readonly transform: { kind: string; linear: number[][]; translation: number[] } | null;
  readonly hits: number | null;
  readonly score: number | null;
  readonly trials: number | null;
  readonly stopReason: string | null;
  readonly nonRigid: boolean | null;
  readonly seconds: number;
  /** Why the sample could not be matched, or null. */
  readonly error: string | null;
}

export interface MatchSummary {
  readonly format: 'cairn-match';
  readonly version: 1;
  readonly template: string;
  readonly seed: number;
  readonly method: string;
  readonly hitRadius: number;
  readonly hitRadiusChoice: HitRadiusChoice | null;
  readonly samples: readonly MatchSampleSummary[];
  readonly note: string;
  readonly tool: { name: 'cairn'; version: string };
  readonly created: string;
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

export async function runMatch(templatePath: string, samplePaths: readonly string[], o: MatchCommandOptions, io: CliIo): Promise<MatchSummary> {
  const template = readTemplate(templatePath);
  const samples = readSamples(samplePaths, { voxelSize: o.voxelSize });
  for (const s of samples) {
    if (s.dim !== template.dim) throw new UsageError(`sample ${s.id} (${s.source}) is ${s.dim}-D but the template is ${template.dim}-D`);
  }
  const ids = new Set<string>();
  for (const s of samples) {
    if (ids.has(s.id)) throw new UsageError(`two samples are named ${JSON.stringify(s.id)}; their outputs would collide`);
    ids.add(s.id);
  }
  const inputs = [templatePath, ...samplePaths];
  ensureOutputDir(o.output, { inputs });
  const csvPaths = samples.map((s) => path.join(o.output, `${s.id}.csv`));
  const summaryPath = path.join(o.output, 'summary.json');
  // Refuse existing outputs before any work (nothing half-written).
  for (const p of [...csvPaths, summaryPath]) assertWritable(p, { force: o.force, inputs });

  let hitRadius = o.hitRadius === 'auto' || o.hitRadius === undefined ? DEFAULT_HIT_RADIUS : o.hitRadius;
  let choice: HitRadiusChoice | null = null;
  const base: Omit<MatchOptions, 'rng'> = { method: o.method, maxTrials: o.maxTrials, nonRigid: o.nonrigid, abstainBelow: o.abstainBelow };
  if (o.hitRadius === 'auto') {
    const members = memberSamples(template);
    if (members.length < 3) {
      throw new UsageError(`--hit-radius auto needs at least 3 template members with labelled positions, the template has ${members.length}`);
    }
    choice = chooseHitRadius(members, { seed: o.seed, folds: Math.min(5, members.length), match: base });
    hitRadius = choice.hitRadius;
  }
  const options = { ...base, hitRadius };
  const jobs = samples.map((sample) => ({ sample, seed: sampleSeed(o.seed, sample.id) }));
  const timed: TimedResult[] = o.jobs > 1 ? await matchSamplesParallel(template, jobs, options, o.jobs) : matchSamplesSerial(template, jobs, options);

  const entries: MatchSampleSummary[] = [];
  timed.forEach((t, i) => {
    const s = samples[i];
    const r = t.result;
    if (r) writeFileAtomic(csvPaths[i], formatMatchCsv(s, r.proposals), { force: o.force, inputs });
    const labelled = r ? r.proposals.filter((p) => p.label !== null) : [];
    entries.push({
      id: s.id,
      source: s.source,
      output: r ? csvPaths[i] : null,
      points: s.coords.length,
      proposed: labelled.length,
      meanConfidence: labelled.length ? labelled.reduce((a, p) => a + p.confidence, 0) / labelled.length : null,
      transform: r ? { kind: r.transform.kind, linear: r.transform.linear.map((row) => row.slice()), translation: r.transform.translation.slice() } : null,
      hits: r ? r.hits : null,
      score: r ? r.score : null,
      trials: r ? r.trials : null,
      stopReason: r ? r.stopReason : null,
      nonRigid: r ? r.nonRigid : null,
      seconds: t.seconds,
      error: t.error,
    });
  });
  const summary: MatchSummary = {
    format: 'cairn-match',
    version: 1,
    template: templatePath,
    seed: o.seed,
    method: o.method,
    hitRadius,
    hitRadiusChoice: choice,
    samples: entries,
    note: 'Labels are proposals to verify, not identifications.',
    tool: { name: 'cairn', version: VERSION },
    created: new Date().toISOString(),
  };
  writeFileAtomic(summaryPath, JSON.stringify(summary, null, 2) + '\n', { force: o.force, inputs });
  void io;
  return summary;
}

function renderText(s: MatchSummary): string {
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
      `${e.id}   ${e.points}   ${e.proposed}   ${e.meanConfidence === null ? '-' : e.meanConfidence.toFixed(3)}   ${e.trials}   ${e.stopReason}   ${e.seconds.toFixed(2)}   ${e.output}`,
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
    .option('--nonrigid', 'add a smooth non-rigid correction after the affine fit (off by default)')
    .option('--no-nonrigid', 'no non-rigid correction (the default)')
    .option('--abstain-below <p>', 'leave points unlabelled when the confidence of their proposal is below p (default 0)', positiveNumberOption(true))
    .option('--force', 'replace existing output files')
    .option('--json', 'print the summary as JSON on stdout')
    .option('--voxel-size <x,y[,z]>', 'micrometres per pixel along each axis; coordinates are multiplied by it', voxelSizeOption)
    .action(async (templatePath: string, samplePaths: string[], o: MatchCommandOptions) => {
      if (o.abstainBelow !== undefined && o.abstainBelow > 1) throw new UsageError(`--abstain-below must be in [0, 1], got ${o.abstainBelow}`);
      const summary = await runMatch(templatePath, samplePaths, o, io);
      io.stdout(o.json ? JSON.stringify(summary, null, 2) + '\n' : renderText(summary));
      const failed = summary.samples.filter((e) => e.error !== null);
      if (failed.length > 0) {
        io.stderr(`cairn match: ${failed.length} sample${failed.length === 1 ? '' : 's'} could not be matched: ${failed.map((e) => `${e.id} (${e.error})`).join('; ')}\n`);
        throw new CommandFailed('some samples could not be matched');
      }
    });
};
