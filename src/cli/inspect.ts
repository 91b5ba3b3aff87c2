/**
 * `cairn inspect TEMPLATE [--csv | --json] [--sort label|variability|separability]
 *  [--html FILE [--accuracy-from EVAL.json]] [--ellipse-probability P] [--force]`: per-cell variability
 * and separability of a template, as a text table (default), CSV or JSON on
 * stdout, and optionally the self-contained HTML report.
 *
 * Shape: read (src/io) -> describeCells (src/report) -> render -> print.
 */
import { Option, type Command } from 'commander';
import { readTemplate } from '../io/template-file.js';
import { formatCsv, writeFileAtomic } from '../io/write.js';
import { type CellSortKey, type CellSummary, cellTable, describeCells, sortCellSummaries } from '../report/cell-table.js';
import { renderInspectHtml, templateFacts } from '../report/inspect-report.js';
import { fixed } from '../report/svg/common.js';
import type { Template } from '../types.js';
import type { CliIo, CommandRegistrar } from './main.js';
import { accuracyFromOption, probabilityOption } from './options.js';

export interface InspectOptions {
  readonly csv?: boolean;
  readonly json?: boolean;
  readonly sort: CellSortKey;
  readonly html?: string;
  /** Saved output of `cairn evaluate --json`, quoted on the --html page. */
  readonly accuracyFrom?: string;
  readonly force?: boolean;
  readonly ellipseProbability: number;
}

/** The cell table as aligned text, numbers to each column's stated decimals; a dash for missing values. */
export function renderInspectText(template: Template, summaries: readonly CellSummary[], source: string, sort: CellSortKey): string {
  let out = '';
  for (const f of templateFacts(template, summaries, source)) out += `${f.term}: ${f.value}\n`;
  if (summaries.length === 0) return out + '\nthe template has no cells\n';
  const table = cellTable(sortCellSummaries(summaries, sort), template.dim);
  const header = table.columns.map((c) => c.heading);
  const rows = table.rows.map((r) =>
    r.map((v, j) => (v === null ? '-' : typeof v === 'number' ? fixed(v, table.columns[j].digits ?? 2) : v)),
  );
  const widths = header.map((h, j) => Math.max(h.length, ...rows.map((r) => r[j].length)));
  const line = (cells: readonly string[]) =>
    cells.map((c, j) => (table.columns[j].numeric ? c.padStart(widths[j]) : c.padEnd(widths[j]))).join('  ').trimEnd() + '\n';
  const order = { label: 'by label', variability: 'most variable first', separability: 'least separable first' }[sort];
  out += `\ncells, ${order} (sd: standard deviations along principal axes, µm; D: Mahalanobis distance)\n`;
  return out + line(header) + rows.map(line).join('');
}

/** The JSON document printed under --json. */
export function renderInspectJson(template: Template, summaries: readonly CellSummary[], source: string, sort: CellSortKey): string {
  const doc = {
    template: source,
    dim: template.dim,
    units: template.units,
    members: template.members.length,
    sort,
    cells: sortCellSummaries(summaries, sort),
    flagged: template.flagged,
  };
  return JSON.stringify(doc, null, 2) + '\n';
}

/** The CSV printed under --csv: one row per cell, full precision, header = column keys. */
export function renderInspectCsv(template: Template, summaries: readonly CellSummary[], sort: CellSortKey): string {
  const table = cellTable(sortCellSummaries(summaries, sort), template.dim);
  return formatCsv(
    table.columns.map((c) => c.key),
    table.rows,
  );
}

/** Run `inspect`: read, summarise, print; write the HTML report when asked. */
export function runInspect(path: string, options: InspectOptions, io: CliIo): void {
  const accuracy = accuracyFromOption(options.accuracyFrom, options.html);
  const template = readTemplate(path);
  const summaries = describeCells(template);
  let html: string | undefined;
  if (options.html !== undefined) {
    html = renderInspectHtml(template, { summaries, source: path, probability: options.ellipseProbability, accuracy });
  }
  const stdout = options.json
    ? renderInspectJson(template, summaries, path, options.sort)
    : options.csv
      ? renderInspectCsv(template, summaries, options.sort)
      : renderInspectText(template, summaries, path, options.sort);
  if (options.html !== undefined && html !== undefined) {
    writeFileAtomic(options.html, html, { force: options.force, inputs: options.accuracyFrom === undefined ? [path] : [path, options.accuracyFrom] });
  }
  io.stdout(stdout);
  if (options.html !== undefined) io.stderr(`cairn inspect: wrote ${options.html}\n`);
}

/** Adds `inspect` to the program. */
export function registerInspect(program: Command, io: CliIo): void {
  program
    .command('inspect')
    .description('per-cell variability and separability of a template; figures and an HTML report')
    .argument('<template>', 'template file (.json) written by cairn build or cairn add')
    .addOption(new Option('--csv', 'print the cell table as CSV on stdout').conflicts('json'))
    .addOption(new Option('--json', 'print the cell summaries as JSON on stdout').conflicts('csv'))
    .addOption(
      new Option('--sort <key>', 'row order: label, variability (most variable first) or separability (least separable first)')
        .choices(['label', 'variability', 'separability'])
        .default('label'),
    )
    .option('--html <file>', 'also write the self-contained HTML report (figures, sortable tables, cautions) to this file')
    .addOption(
      new Option('--ellipse-probability <p>', 'probability held by each covariance ellipse in the figures')
        .argParser(probabilityOption)
        .default(0.95),
    )
    .option('--accuracy-from <eval.json>', 'quote on the --html page the accuracy measured by `cairn evaluate --json` (its saved output)')
    .option('--force', 'overwrite the --html file when it exists')
    .action((template: string, opts: InspectOptions) => {
      runInspect(template, opts, io);
    });
}
const _typed: CommandRegistrar = registerInspect;
void _typed;
