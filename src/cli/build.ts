/**
 * `cairn build SAMPLES... -o TEMPLATE`: co-register partly labelled samples
 * and write a template. Prints a short summary (members, cells, sparse cells,
 * flagged hand labels as sample:row, skipped samples with reasons), or a JSON
 * summary under --json. Never overwrites an input; the write is atomic.
 *
 * Shape: read (src/io) -> buildTemplate (src/template) -> stamp time -> write -> print.
 * Also exports `handLabelCheckSection`, the hand-label part of `cairn check`.
 */
import { Option, type Command } from 'commander';
import { readSamples } from '../io/sample-reader.js';
import { serializeTemplate } from '../io/template-file.js';
import { writeFileAtomic } from '../io/write.js';
import { buildTemplate, checkHandLabels } from '../template/index.js';
import type { BuildOptions, IterationDiagnostics, SkippedSample } from '../template/index.js';
import type { FlaggedLabel, Sample, Template } from '../types.js';
import type { CliIo, CommandRegistrar } from './main.js';

export interface TemplateCommandOptions {
  readonly output: string;
  readonly seed?: number;
  readonly tolerance?: number;
  readonly maxIterations?: number;
  readonly alignment?: 'similarity' | 'rigid' | 'affine';
  readonly minCount?: number;
  readonly priorStrength?: number;
  readonly flagProbability?: number;
  readonly timestamp: boolean;
  readonly force?: boolean;
  readonly json?: boolean;
  readonly quiet?: boolean;
  readonly voxelSize?: number[];
}

import { integerOption, positiveNumberOption, probabilityOption, voxelSizeOption } from './options.js';

/** The library options named on the command line (undefined ones keep their defaults). */
export function buildOptionsFrom(o: TemplateCommandOptions): BuildOptions {
  return {
    tolerance: o.tolerance,
    maxIterations: o.maxIterations,
    alignment: o.alignment,
    minCount: o.minCount,
    priorStrength: o.priorStrength,
    flagProbability: o.flagProbability,
  };
}

/** Add the options shared by build and add. */
export function addTemplateOptions(cmd: Command): Command {
  return cmd
    .requiredOption('-o, --output <file>', 'template file to write (.json); never one of the inputs')
    .option('--seed <n>', 'seed for random choices (building is deterministic; accepted for symmetry with other commands)', integerOption(0))
    .option('--tolerance <um>', 'stop when the consensus moves less than this, um RMS over cells (default 0.001)', positiveNumberOption(true))
    .option('--max-iterations <n>', 'iteration cap of the co-registration (default 100)', integerOption(1))
    .addOption(new Option('--alignment <kind>', 'transform family that aligns each sample (default similarity)').choices(['similarity', 'rigid', 'affine']))
    .option('--min-count <n>', 'cells seen by fewer samples are marked sparse (default 5)', integerOption(1))
    .option('--prior-strength <n>', 'pseudo-observations of the pooled covariance in each cell covariance (default 10)', positiveNumberOption())
    .option('--flag-probability <p>', 'tail probability of the cell\'s predictive distribution below which a hand label is flagged (default 0.001)', probabilityOption)
    .option('--no-timestamp', 'leave the creation time out of the template (reproducible bytes)')
    .option('--force', 'replace the output file when it exists')
    .option('--json', 'print the summary as JSON on stdout')
    .option('--quiet', 'print nothing on success (warnings still go to stderr)')
    .option('--voxel-size <x,y[,z]>', 'micrometres per pixel along each axis; coordinates are multiplied by it', voxelSizeOption);
}

function plural(n: number, word: string): string {
  return `${n} ${word}${n === 1 ? '' : 's'}`;
}

function fmt(x: number | null, digits = 2): string {
  return x === null || !Number.isFinite(x) ? '-' : x.toFixed(digits);
}

/** One line per flagged label: sample:row, label, distance, likelier cell. */
export function flaggedLines(flagged: readonly FlaggedLabel[]): string[] {
  return flagged.map(
    (f) => `${f.sample}:${f.row}  ${f.label}  D = ${fmt(f.distance)}${f.likelierLabel !== null ? `  likelier: ${f.likelierLabel} (D = ${fmt(f.likelierDistance)})` : ''}`,
  );
}

export interface TemplateSummary {
  readonly output: string;
  readonly members: number;
  readonly cells: number;
  readonly sparseCells: readonly string[];
  readonly minCount: number;
  readonly flagged: readonly FlaggedLabel[];
  readonly skipped: readonly SkippedSample[];
  readonly iterations: readonly IterationDiagnostics[];
  readonly converged: boolean | null;
}

export function summarise(output: string, t: Template, flagged: readonly FlaggedLabel[], skipped: readonly SkippedSample[], iterations: readonly IterationDiagnostics[], converged: boolean | null): TemplateSummary {
  return {
    output,
    members: t.members.length,
    cells: t.cells.length,
    sparseCells: t.cells.filter((c) => c.sparse).map((c) => c.label),
    minCount: t.settings.minCount,
    flagged,
    skipped,
    iterations,
    converged,
  };
}

/** The human summary printed by build and add. `lead` is the first line. */
export function renderSummaryText(lead: string, s: TemplateSummary, flagWord = 'flagged'): string {
  let out = `${lead}\n`;
  out += `${plural(s.members, 'member')}, ${plural(s.cells, 'cell')} (${s.sparseCells.length} sparse: seen by fewer than ${s.minCount} members)\n`;
  const last = s.iterations[s.iterations.length - 1];
  if (last) {
    out += `co-registration ${s.converged ? 'converged' : 'did NOT converge'} after ${plural(s.iterations.length, 'iteration')} ` +
      `(last consensus move ${last.meanShift.toExponential(2)} um, RMS residual ${fmt(last.rmsResidual)} um)\n`;
  }
  if (s.flagged.length > 0) {
    out += `${plural(s.flagged.length, `${flagWord} hand label`)} (left out of the statistics; D = leave-one-sample-out Mahalanobis distance; suspicions to verify, not verdicts):\n`;
    for (const line of flaggedLines(s.flagged)) out += `  ${line}\n`;
  } else out += `no ${flagWord} hand labels\n`;
  if (s.skipped.length > 0) {
    out += `${plural(s.skipped.length, 'skipped sample')}:\n`;
    for (const k of s.skipped) out += `  ${k.sample}: ${k.reason}\n`;
  }
  return out;
}

/** Stamp the creation time unless --no-timestamp. */
export function stamped(t: Template, timestamp: boolean, now: () => Date = () => new Date()): Template {
  return timestamp ? { ...t, created: now().toISOString() } : t;
}

/** Run `build`. */
export function runBuild(paths: readonly string[], o: TemplateCommandOptions, io: CliIo): void {
  const samples: Sample[] = readSamples(paths, { voxelSize: o.voxelSize });
  const r = buildTemplate(samples, buildOptionsFrom(o));
  const template = stamped(r.template, o.timestamp);
  writeFileAtomic(o.output, serializeTemplate(template), { force: o.force, inputs: paths });
  const s = summarise(o.output, template, r.flagged, r.skipped, r.iterations, r.converged);
  if (!o.quiet || o.json) io.stdout(o.json ? JSON.stringify(s, null, 2) + '\n' : renderSummaryText(`cairn build: wrote ${o.output}`, s));
  if (!r.converged) io.stderr(`cairn build: warning: co-registration stopped at the iteration cap (${r.iterations.length}) before reaching the tolerance\n`);
}

/**
 * The hand-label section for `cairn check` (see CheckSection in check.ts):
 * flagged labels are warnings (no problems), skipped samples are listed.
 * With fewer than two alignable samples the section says so instead.
 */
export function handLabelCheckSection(samples: readonly Sample[], options: BuildOptions = {}) {
  if (samples.length < 2) {
    return { key: 'handLabels', title: 'suspicious hand labels', lines: ['not checked: needs at least 2 samples'], data: { flagged: [], skipped: [] } };
  }
  try {
    const { flagged, skipped } = checkHandLabels(samples, options);
    const lines = flagged.length === 0 ? ['none flagged'] : flaggedLines(flagged);
    for (const k of skipped) lines.push(`not checked: ${k.sample}: ${k.reason}`);
    return { key: 'handLabels', title: 'suspicious hand labels (leave-one-sample-out Mahalanobis distance D; to verify)', lines, data: { flagged, skipped } };
  } catch (e) {
    const message = e instanceof Error ? e.message : String(e);
    return { key: 'handLabels', title: 'suspicious hand labels', lines: [`not checked: ${message}`], data: { flagged: [], skipped: [], error: message } };
  }
}

/** Adds `build` to the program. */
export function registerBuild(program: Command, io: CliIo): void {
  addTemplateOptions(
    program
      .command('build')
      .description('co-register partly labelled samples and write a probabilistic template')
      .argument('<samples...>', 'sample files (.csv or .json), one animal per file or a long table with a sample column'),
  ).action((samples: string[], opts: TemplateCommandOptions) => {
    runBuild(samples, opts, io);
  });
}
const _typed: CommandRegistrar = registerBuild;
void _typed;
