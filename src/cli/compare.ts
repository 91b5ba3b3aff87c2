/**
 * `cairn compare A B [--csv | --json] [--no-scale] [--test unequal|pooled]
 *  [--covariance template|sample] [--level P] [--alpha Q] [--permutations N]
 *  [--seed N] [--svg FILE] [--html FILE] [--arrow-scale K]
 *  [--ellipse-probability P] [--force]`: which cells sit differently between
 * two templates. Table sorted by q-value on stdout (text, CSV or JSON); the
 * figure and the HTML page on request.
 *
 * Shape: read (src/io) -> compareTemplates (src/compare) -> render -> write files -> print.
 */
import { Option, type Command } from 'commander';
import { compareTemplates, type TemplateComparison } from '../compare/compare.js';
import { compareFigureSvg } from '../compare/figure.js';
import { comparisonCautions, renderCompareHtml } from '../compare/report.js';
import { comparisonTable } from '../compare/table.js';
import { readTemplate } from '../io/template-file.js';
import { formatCsv, writeFileAtomic } from '../io/write.js';
import { createRng } from '../random.js';
import { fixed } from '../report/svg/common.js';
import type { Template } from '../types.js';
import { VERSION } from '../version.js';
import { integerOption, positiveNumberOption, probabilityOption } from './options.js';
import type { CliIo, CommandRegistrar } from './main.js';

export interface CompareCliOptions {
  readonly csv?: boolean;
  readonly json?: boolean;
  readonly scale: boolean;
  readonly test: 'unequal' | 'pooled';
  readonly covariance: 'template' | 'sample';
  readonly level: number;
  readonly alpha: number;
  readonly permutations: number;
  readonly seed: number;
  readonly svg?: string;
  readonly html?: string;
  readonly arrowScale: number;
  readonly ellipseProbability: number;
  readonly force?: boolean;
}

function formatP(p: number): string {
  return p < 1e-4 ? p.toExponential(1) : fixed(p, 4);
}

/** The comparison as aligned text: facts, the table by q-value, the lists, the overall shape difference, cautions. */
export function renderCompareText(result: TemplateComparison, a: { path: string; template: Template }, b: { path: string; template: Template }, seed: number): string {
  const lines: string[] = [];
  const al = result.alignment;
  lines.push(`A: ${a.path} (${a.template.cells.length} cells, ${a.template.members.length} members)`);
  lines.push(`B: ${b.path} (${b.template.cells.length} cells, ${b.template.members.length} members)`);
  lines.push(
    `alignment of B to A: ${al.kind}, scale ${fixed(al.scale, 4)}, residual scale ${fixed(al.residualScale, 2)}, ${al.iterations} iterations` +
      (al.converged ? '' : ' (not converged)'),
  );
  lines.push(`left out of the alignment as displaced: ${al.excluded.length ? al.excluded.join(', ') : 'none'}`);
  lines.push(
    `test: two-sample Hotelling T², ${result.form === 'unequal' ? 'unequal covariances (Krishnamoorthy & Yu 2004)' : 'pooled covariance (Hotelling 1931)'}; ` +
      `covariances: ${result.covariance === 'template' ? "the templates' (shrunk)" : 'sample, from the stored sums'}; q: Benjamini-Hochberg`,
  );
  lines.push(`cells tested: ${result.cells.length}; q < ${result.alpha}: ${result.significant}`);
  lines.push('');
  if (result.cells.length > 0) {
    const table = comparisonTable(result);
    const header = table.columns.map((c) => c.heading);
    const rows = table.rows.map((r) =>
      r.map((v, j) => {
        if (v === null) return '-';
        if (typeof v === 'string') return v;
        const key = table.columns[j].key;
        if (key === 'p_value' || key === 'q_value') return formatP(v);
        return fixed(v, table.columns[j].digits ?? 2);
      }),
    );
    const widths = header.map((h, j) => Math.max(h.length, ...rows.map((r) => r[j].length)));
    const line = (cells: readonly string[]): string =>
      cells.map((c, j) => (table.columns[j].numeric ? c.padStart(widths[j]) : c.padEnd(widths[j]))).join('  ').trimEnd();
    lines.push(`cells by q-value (displacement d and length in µm, A's frame; ${Math.round(result.level * 100)}% interval of the length)`);
    lines.push(line(header));
    for (const r of rows) lines.push(line(r));
    lines.push('');
  }
  lines.push(`only in A: ${result.onlyInA.length ? result.onlyInA.join(', ') : 'none'}`);
  lines.push(`only in B: ${result.onlyInB.length ? result.onlyInB.join(', ') : 'none'}`);
  if (result.untested.length) {
    lines.push('shared but not tested:');
    for (const u of result.untested) lines.push(`  ${u.label} (n A ${u.countA}, n B ${u.countB}): ${u.reason}`);
  }
  const s = result.shape;
  lines.push(
    `overall shape difference over ${s.cells} shared cells: full Procrustes distance ${s.distances.full.toPrecision(4)} ` +
      `(Riemannian ${s.distances.riemannian.toPrecision(4)} rad)`,
  );
  if (s.permutation) {
    lines.push(
      `permutation test on members' positions: p = ${fixed(s.permutation.pValue, 4)} (${s.permutation.permutations} permutations, seed ${seed}` +
        (s.permutation.skipped ? `, ${s.permutation.skipped} skipped` : '') +
        ')',
    );
  } else if (s.permutationNote) {
    lines.push(`permutation test ${s.permutationNote}`);
  }
  lines.push('');
  for (const c of comparisonCautions(result)) lines.push(`note: ${c}`);
  return lines.join('\n') + '\n';
}

/** The JSON document printed under --json. */
export function renderCompareJson(result: TemplateComparison, pathA: string, pathB: string, seed: number): string {
  return JSON.stringify({ a: pathA, b: pathB, seed, ...result, cautions: comparisonCautions(result) }, null, 2) + '\n';
}

/** The CSV printed under --csv: one row per tested cell, by q-value, full precision. */
export function renderCompareCsv(result: TemplateComparison): string {
  const table = comparisonTable(result);
  return formatCsv(
    table.columns.map((c) => c.key),
    table.rows,
  );
}

/** Run `compare`: read both templates, compare, render everything, write files, then print. */
export function runCompare(pathA: string, pathB: string, options: CompareCliOptions, io: CliIo): void {
  const a = readTemplate(pathA);
  const b = readTemplate(pathB);
  const result = compareTemplates(a, b, {
    scale: options.scale,
    form: options.test,
    covariance: options.covariance,
    level: options.level,
    alpha: options.alpha,
    permutations: options.permutations,
    rng: createRng(options.seed),
  });
  const figureOptions = { probability: options.ellipseProbability, arrowScale: options.arrowScale };
  const svg = options.svg !== undefined ? compareFigureSvg(result, figureOptions) : undefined;
  const html =
    options.html !== undefined
      ? renderCompareHtml(result, { ...figureOptions, sourceA: pathA, sourceB: pathB, footer: `cairn ${VERSION} compare, seed ${options.seed}` })
      : undefined;
  const stdout = options.json
    ? renderCompareJson(result, pathA, pathB, options.seed)
    : options.csv
      ? renderCompareCsv(result)
      : renderCompareText(result, { path: pathA, template: a }, { path: pathB, template: b }, options.seed);
  const inputs = [pathA, pathB];
  if (svg !== undefined && options.svg !== undefined) writeFileAtomic(options.svg, svg, { force: options.force, inputs });
  if (html !== undefined && options.html !== undefined) writeFileAtomic(options.html, html, { force: options.force, inputs });
  io.stdout(stdout);
  if (options.svg !== undefined) io.stderr(`cairn compare: wrote ${options.svg}\n`);
  if (options.html !== undefined) io.stderr(`cairn compare: wrote ${options.html}\n`);
}

/** Adds `compare` to the program. */
export function registerCompare(program: Command, io: CliIo): void {
  program
    .command('compare')
    .description('which cells sit differently between two templates: displacement, Hotelling test, FDR')
    .argument('<a>', 'reference template (.json); B is aligned to its frame')
    .argument('<b>', 'template to compare with A (.json)')
    .addOption(new Option('--csv', 'print the cell table as CSV on stdout').conflicts('json'))
    .addOption(new Option('--json', 'print the whole comparison as JSON on stdout').conflicts('csv'))
    .option('--no-scale', 'align B to A without a scale factor (rigid), when size itself is of interest')
    .addOption(
      new Option('--test <form>', "Hotelling T² form: unequal (Krishnamoorthy & Yu 2004 degrees of freedom) or pooled covariance")
        .choices(['unequal', 'pooled'])
        .default('unequal'),
    )
    .addOption(
      new Option('--covariance <source>', "each template's spread in the test: template (stored, shrunk) or sample (recomputed from the stored sums)")
        .choices(['template', 'sample'])
        .default('template'),
    )
    .addOption(new Option('--level <p>', 'confidence level of the displacement-length interval').argParser(probabilityOption).default(0.95))
    .addOption(new Option('--alpha <q>', 'q-value below which a cell counts as different').argParser(probabilityOption).default(0.05))
    .addOption(
      new Option('--permutations <n>', "permutations of the overall shape test (needs members' positions in both templates; 0 = none)")
        .argParser(integerOption(0))
        .default(999),
    )
    .addOption(new Option('--seed <n>', 'seed for the permutations').argParser(integerOption(0)).default(1))
    .option('--svg <file>', 'write the figure (three projections, arrows coloured by q-value, ellipses) to this SVG file')
    .option('--html <file>', 'write the self-contained HTML report to this file')
    .addOption(new Option('--arrow-scale <k>', 'draw arrows k times their length in the figure').argParser(positiveNumberOption()).default(1))
    .addOption(new Option('--ellipse-probability <p>', 'probability held by each ellipse in the figure').argParser(probabilityOption).default(0.95))
    .option('--force', 'overwrite the --svg / --html files when they exist')
    .action((pathA: string, pathB: string, opts: CompareCliOptions) => {
      runCompare(pathA, pathB, opts, io);
    });
}
const _typed: CommandRegistrar = registerCompare;
void _typed;
