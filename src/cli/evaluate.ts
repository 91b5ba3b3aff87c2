/**
 * `cairn evaluate SAMPLES... [--folds K] [--seed N] [--method ...]
 *  [--hit-radius R|auto] [--json | --csv] [--html FILE]`: cross-validate
 * build + match on labelled samples and report how accurate the proposals are.
 *
 * Shape: read (src/io) -> [chooseHitRadius] -> crossValidate (src/evaluate) -> render -> print.
 */
import { Option, type Command } from 'commander';
import { readSamples } from '../io/sample-reader.js';
import { formatCsv, writeFileAtomic } from '../io/write.js';
import { crossValidate, type CrossValidationResult } from '../evaluate/cross-validate.js';
import { chooseHitRadius, type HitRadiusChoice } from '../evaluate/hit-radius.js';
import type { AccuracyReport } from '../evaluate/metrics.js';
import { POSE_MARGIN_SETTLED, poseUnsettled, type Assignment } from '../match/match-sample.js';
import { crossValidationScheme, renderEvaluateHtml } from '../report/evaluate-report.js';
import { fixed } from '../report/svg/common.js';
import { VERSION } from '../version.js';
import { assignOption, hitRadiusOption, integerOption, voxelSizeOption } from './options.js';
import type { CliIo, CommandRegistrar } from './main.js';

export interface EvaluateOptions {
  readonly folds?: number;
  readonly seed: number;
  readonly method: 'ransac' | 'icp' | 'cpd';
  readonly hitRadius?: number | 'auto';
  readonly maxTrials?: number;
  readonly nonrigid?: boolean;
  /** The final labelling rule (MatchOptions.assignment). */
  readonly assign?: Assignment;
  readonly json?: boolean;
  readonly csv?: boolean;
  readonly html?: string;
  readonly force?: boolean;
  readonly voxelSize?: number[];
}

const pct = (v: number) => `${fixed(100 * v, 1)}%`;

/**
 * The five headline lines of the summary (accuracy, top-3 accuracy, given a
 * label, false-label rate, calibration error); also what `npm run demo`
 * prints from evaluate's JSON report, which has the same fields.
 */
export function accuracySummaryLines(
  r: Pick<AccuracyReport, 'accuracy' | 'top3Accuracy' | 'coverage' | 'falseLabelRate' | 'expectedCalibrationError'>,
): string[] {
  return [
    `accuracy            ${pct(r.accuracy)}`,
    `top-3 accuracy      ${pct(r.top3Accuracy)}`,
    `given a label       ${pct(r.coverage)}`,
    `false-label rate    ${pct(r.falseLabelRate)} of proposals made`,
    `calibration error   ${fixed(r.expectedCalibrationError, 3)} (ECE, 10 bins)`,
  ];
}

/** The plain-text summary printed by default. */
export function renderEvaluateText(result: CrossValidationResult, choice: HitRadiusChoice | null): string {
  const r: AccuracyReport = result.report;
  const lines: string[] = [];
  lines.push(`cross-validation: ${crossValidationScheme(result)} over ${result.samples.length} labelled samples, ${r.points} labelled points scored`);
  if (choice) lines.push(`hit radius chosen by cross-validation: ${choice.hitRadius} (${choice.trials.map((t) => `${t.hitRadius}: ${pct(t.accuracy)}`).join(', ')})`);
  lines.push(...accuracySummaryLines(r));
  lines.push('');
  lines.push('confidence   proposals   mean confidence   observed accuracy');
  for (const b of r.calibration) {
    if (b.count === 0) continue;
    lines.push(`${fixed(b.lower, 1)}-${fixed(b.upper, 1)}   ${String(b.count).padStart(9)}   ${fixed(b.meanConfidence, 3).padStart(15)}   ${fixed(b.accuracy, 3).padStart(17)}`);
  }
  lines.push('');
  lines.push('per sample: ' + r.perSample.map((s) => `${s.key} ${pct(s.accuracy)}`).join(', '));
  const worst = r.perCell.slice(0, 10);
  lines.push('least accurate cells: ' + worst.map((c) => `${c.key} ${c.correct}/${c.points}`).join(', '));
  if (r.confusedPairs.length) lines.push('most confused (hand label -> proposed): ' + r.confusedPairs.slice(0, 10).map((p) => `${p.truth}->${p.proposed} x${p.count}`).join(', '));
  for (const s of result.samples) if (s.skipped) lines.push(`not scored: ${s.sample}: ${s.skipped}`);
  const unsettled = result.samples.filter((s) => poseUnsettled(s.poseMargin));
  if (unsettled.length > 0) {
    const accuracyOf = new Map(r.perSample.map((s) => [s.key, s.accuracy]));
    lines.push(
      `orientation not settled (pose margin below ${POSE_MARGIN_SETTLED} nats) when matched: ` +
        unsettled.map((s) => `${s.sample} ${(s.poseMargin as number).toFixed(1)} (accuracy ${pct(accuracyOf.get(s.sample) ?? 0)})`).join(', '),
    );
  }
  lines.push('');
  lines.push('Proposals are to be verified by a person; these figures say how often they were right on these samples.');
  return lines.join('\n') + '\n';
}

/** The JSON document printed under --json. */
export function renderEvaluateJson(result: CrossValidationResult, choice: HitRadiusChoice | null): string {
  const { points: _points, ...rest } = result;
  void _points;
  return JSON.stringify({ scheme: crossValidationScheme(result), hitRadius: choice, ...rest }, (_k, v) => (typeof v === 'number' && Number.isNaN(v) ? null : v), 2) + '\n';
}

/** The CSV printed under --csv: one row per held-out labelled point. */
export function renderEvaluateCsv(result: CrossValidationResult): string {
  return formatCsv(
    ['sample', 'hand_label', 'proposed', 'confidence', 'correct', 'top3'],
    result.points.map((p) => [p.sample, p.truth, p.proposed, p.confidence, p.proposed === p.truth ? 1 : 0, p.alternatives.slice(0, 3).includes(p.truth) ? 1 : 0]),
  );
}

export function runEvaluate(paths: readonly string[], o: EvaluateOptions, io: CliIo): void {
  const samples = readSamples(paths, { voxelSize: o.voxelSize });
  const base = {
    folds: o.folds,
    seed: o.seed,
    match: { method: o.method, maxTrials: o.maxTrials, nonRigid: o.nonrigid, assignment: o.assign },
  };
  let choice: HitRadiusChoice | null = null;
  let hitRadius: number | undefined;
  if (o.hitRadius === 'auto') {
    choice = chooseHitRadius(samples, base);
    hitRadius = choice.hitRadius;
  } else hitRadius = o.hitRadius;
  const result = crossValidate(samples, { ...base, match: { ...base.match, hitRadius } });
  if (o.html !== undefined) {
    writeFileAtomic(o.html, renderEvaluateHtml(result, { toolLine: `cairn ${VERSION}; inputs: ${paths.join(', ')}` }), { force: o.force, inputs: paths });
  }
  io.stdout(o.json ? renderEvaluateJson(result, choice) : o.csv ? renderEvaluateCsv(result) : renderEvaluateText(result, choice));
  if (o.html !== undefined) io.stderr(`cairn evaluate: wrote ${o.html}\n`);
}

export function registerEvaluate(program: Command, io: CliIo): void {
  program
    .command('evaluate')
    .description('cross-validate on labelled samples: how often proposals match the hand labels')
    .argument('<samples...>', 'labelled sample files (.csv or .json)')
    .option('--folds <k>', 'k-fold cross-validation (default: leave-one-out)', integerOption(2))
    .option('--seed <n>', 'seed for folds and matching', integerOption(0), 1)
    .addOption(new Option('--method <name>', 'matching method').choices(['ransac', 'icp', 'cpd']).default('ransac'))
    .option('--hit-radius <r>', 'hit radius in Mahalanobis units, or "auto" to choose it by cross-validation', hitRadiusOption)
    .option('--max-trials <n>', 'cap on hypotheses per sample', integerOption(1))
    .option('--nonrigid', 'add a smooth non-rigid correction after the pose fit (off by default)')
    .option('--no-nonrigid', 'no non-rigid correction (the default)')
    .addOption(assignOption())
    .addOption(new Option('--json', 'print the full report as JSON').conflicts('csv'))
    .addOption(new Option('--csv', 'print one row per scored point as CSV').conflicts('json'))
    .option('--html <file>', 'also write the self-contained HTML report')
    .option('--force', 'overwrite the --html file when it exists')
    .option('--voxel-size <x,y[,z]>', 'micrometres per pixel along each axis', voxelSizeOption)
    .action((samples: string[], opts: EvaluateOptions) => runEvaluate(samples, opts, io));
}
const _typed: CommandRegistrar = registerEvaluate;
void _typed;
