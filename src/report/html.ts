/**
 * The self-contained HTML report: one page with inline CSS, inline SVG figures
 * and a small inline script that sorts tables. It loads nothing from the
 * network or the disk (a Content-Security-Policy forbids it). The page builder
 * is shared by `inspect`, `evaluate` and `match`: each command assembles a
 * ReportPage (summary, cautions, sections) and calls renderHtmlReport.
 */
import { InputError, UsageError } from '../errors.js';
import { escapeXml, fixed } from './svg/common.js';

/** One fact of the summary block. */
export interface SummaryItem {
  readonly term: string;
  readonly value: string;
}

export interface ReportSection {
  readonly heading: string;
  /** Trusted HTML made by this module's helpers or the figure functions (not escaped). */
  readonly html: string;
  /** Anchor id; default derived from the heading. */
  readonly id?: string;
}

export interface ReportPage {
  readonly title: string;
  /** Key facts, shown first as a definition list (plain text, escaped). */
  readonly summary: readonly SummaryItem[];
  /** Cautions, shown prominently at the top (plain text, escaped). At least one. */
  readonly cautions: readonly string[];
  readonly sections: readonly ReportSection[];
  /** Plain-text line at the foot, e.g. the tool version and input file. */
  readonly footer?: string;
}

/**
 * Accuracy that `cairn evaluate` measured by cross-validation on the lab's
 * own labelled samples, to be quoted in the cautions.
 */
export interface MeasuredAccuracy {
  /** Fraction of held-out labelled points whose proposed label was right, in [0, 1]. */
  readonly accuracy: number;
  /** Labelled points the fraction is over. */
  readonly points: number;
  /** Samples held out. */
  readonly samples: number;
  /** Cross-validation scheme, e.g. "leave-one-out" or "5-fold". */
  readonly scheme: string;
  /** Fraction of labelled held-out points given no label, when measured. */
  readonly abstained?: number;
  /** Wrong proposals / proposals made, when measured. */
  readonly falseLabelRate?: number;
}

/**
 * MeasuredAccuracy from the accuracy report of `cairn evaluate`
 * (src/evaluate/metrics.ts AccuracyReport, typed structurally here):
 * accuracy and points as reported, samples = number of per-sample rows,
 * abstained = 1 - coverage, falseLabelRate as reported.
 */
export function measuredAccuracyFromReport(
  report: {
    readonly accuracy: number;
    readonly points: number;
    readonly coverage: number;
    readonly falseLabelRate: number;
    readonly perSample: readonly unknown[];
  },
  scheme: string,
): MeasuredAccuracy {
  return {
    accuracy: report.accuracy,
    points: report.points,
    samples: report.perSample.length,
    scheme,
    abstained: 1 - report.coverage,
    falseLabelRate: report.falseLabelRate,
  };
}

/**
 * MeasuredAccuracy from the JSON `cairn evaluate --json` prints: its
 * top-level `report` object (accuracy, points, coverage, falseLabelRate,
 * perSample) and `scheme`. Throws InputError naming `file` when the text is
 * not such a document.
 */
export function measuredAccuracyFromEvaluateJson(text: string, file: string): MeasuredAccuracy {
  let doc: unknown;
  try {
    doc = JSON.parse(text.replace(/^\uFEFF/, ''));
  } catch (e) {
    throw new InputError({ file }, `is not valid JSON (${(e as Error).message}); expected the output of \`cairn evaluate --json\``);
  }
  const report = (doc as { report?: unknown } | null)?.report as Record<string, unknown> | undefined;
  if (typeof report !== 'object' || report === null) {
    throw new InputError({ file }, 'has no "report" object; expected the output of `cairn evaluate --json`');
  }
  for (const key of ['accuracy', 'points', 'coverage', 'falseLabelRate'] as const) {
    if (typeof report[key] !== 'number' || !Number.isFinite(report[key])) {
      throw new InputError({ file }, `report.${key} must be a finite number; expected the output of \`cairn evaluate --json\``);
    }
  }
  if (!Array.isArray(report.perSample)) throw new InputError({ file }, 'report.perSample must be an array; expected the output of `cairn evaluate --json`');
  const accuracy = report.accuracy as number;
  const points = report.points as number;
  if (!(accuracy >= 0 && accuracy <= 1)) throw new InputError({ file }, `report.accuracy must be in [0, 1], got ${accuracy}`);
  if (!(Number.isInteger(points) && points > 0) || report.perSample.length === 0) {
    throw new InputError({ file }, 'reports no labelled points or samples; evaluate measured nothing to quote');
  }
  const scheme = typeof (doc as { scheme?: unknown }).scheme === 'string' ? (doc as { scheme: string }).scheme : 'cross-validation';
  return measuredAccuracyFromReport(
    {
      accuracy,
      points,
      coverage: report.coverage as number,
      falseLabelRate: report.falseLabelRate as number,
      perSample: report.perSample as unknown[],
    },
    scheme,
  );
}

const EVALUATE_HINT =
  "To measure it, run `cairn evaluate` on the lab's labelled samples: each sample is held out in turn, matched " +
  'against a template built without it, and its proposals are compared with its hand labels.';

/**
 * The standard cautions for any page that shows or concerns label proposals.
 * Without a measured accuracy it says that accuracy has not been measured on
 * this lab's data and how to measure it. Throws UsageError for an accuracy
 * outside [0, 1] or non-positive counts.
 */
export function proposalCautions(measured?: MeasuredAccuracy): string[] {
  const first = 'Label proposals are proposals, not results: a person must check every proposed label before it is used.';
  if (measured === undefined) {
    return [first, `The accuracy of proposals has not been measured on this lab's data. ${EVALUATE_HINT}`];
  }
  const { accuracy, points, samples } = measured;
  if (!(accuracy >= 0 && accuracy <= 1)) throw new UsageError(`proposalCautions: accuracy must be in [0, 1], got ${accuracy}`);
  if (!(Number.isInteger(points) && points > 0 && Number.isInteger(samples) && samples > 0)) {
    throw new UsageError(`proposalCautions: points and samples must be positive integers, got ${points} and ${samples}`);
  }
  const missed = 1 - accuracy;
  const oneIn = missed > 0 ? ` (about 1 in ${Math.max(1, Math.round(1 / missed))} did not)` : '';
  const abstained =
    measured.abstained !== undefined ? `; ${fixed(100 * measured.abstained, 1)}% got no proposal` : '';
  const wrong =
    measured.falseLabelRate !== undefined ? `; ${fixed(100 * measured.falseLabelRate, 1)}% of the proposals made were wrong` : '';
  return [
    first,
    `On this lab's own labelled data, \`cairn evaluate\` (${measured.scheme}, ${samples} samples, ${points} labelled points) ` +
      `gave the right label to ${fixed(100 * accuracy, 1)}% of labelled points${oneIn}${abstained}${wrong}. New animals ` +
      'that differ from those samples (stage, strain, imaging) may fare worse.',
  ];
}

/** A figure with a caption (the svg is trusted markup from the figure functions). */
export function renderFigure(svg: string, caption: string): string {
  return `<figure>${svg}<figcaption>${escapeXml(caption)}</figcaption></figure>`;
}

/** A column of an HTML table. */
export interface TableColumn {
  readonly heading: string;
  /** Numeric columns sort by value and are right-aligned. */
  readonly numeric: boolean;
  /** Decimal places shown for numbers (the full value is kept for sorting). */
  readonly digits?: number;
  /** Tooltip for the heading: what the column means, with units. */
  readonly description?: string;
}

export type TableValue = string | number | null;

export interface TableSpec {
  readonly columns: readonly TableColumn[];
  readonly rows: readonly (readonly TableValue[])[];
  readonly caption?: string;
  /** When true (default) the headers sort the table on click. */
  readonly sortable?: boolean;
}

function cell(value: TableValue, column: TableColumn): string {
  if (value === null) return `<td class="${column.numeric ? 'num ' : ''}missing" data-value="">–</td>`;
  if (typeof value === 'number') {
    const shown = Number.isFinite(value) ? (column.digits !== undefined ? fixed(value, column.digits) : String(value)) : String(value);
    return `<td class="num" data-value="${Number.isFinite(value) ? String(value) : ''}">${escapeXml(shown)}</td>`;
  }
  return `<td data-value="${escapeXml(value)}">${escapeXml(value)}</td>`;
}

/**
 * An HTML table; sortable by clicking a heading (the page's inline script).
 * Numbers show `digits` decimals but sort by their full value; null shows as
 * a dash and sorts last in both directions. Throws UsageError when a row's
 * length differs from the number of columns.
 */
export function renderTable(spec: TableSpec): string {
  const n = spec.columns.length;
  spec.rows.forEach((row, i) => {
    if (row.length !== n) throw new UsageError(`renderTable: row ${i + 1} has ${row.length} values for ${n} columns`);
  });
  const sortable = spec.sortable ?? true;
  const head = spec.columns
    .map((c) => {
      const title = c.description ? ` title="${escapeXml(c.description)}"` : '';
      const type = c.numeric ? 'number' : 'text';
      const label = escapeXml(c.heading);
      return sortable
        ? `<th scope="col" data-type="${type}" aria-sort="none"${title}${c.numeric ? ' class="num"' : ''}><button type="button">${label}<span class="arrow" aria-hidden="true"></span></button></th>`
        : `<th scope="col"${title}${c.numeric ? ' class="num"' : ''}>${label}</th>`;
    })
    .join('');
  const body = spec.rows.map((row) => `<tr>${row.map((v, j) => cell(v, spec.columns[j])).join('')}</tr>`).join('\n');
  const caption = spec.caption ? `<caption>${escapeXml(spec.caption)}</caption>` : '';
  return `<div class="table-wrap"><table${sortable ? ' class="sortable"' : ''}>${caption}<thead><tr>${head}</tr></thead><tbody>\n${body}\n</tbody></table></div>`;
}

/** A paragraph of plain text (escaped). */
export function paragraph(text: string): string {
  return `<p>${escapeXml(text)}</p>`;
}

function slug(text: string, used: Set<string>): string {
  const base = text.toLowerCase().replace(/[^a-z0-9]+/g, '-').replace(/^-|-$/g, '') || 'section';
  let id = base;
  for (let k = 2; used.has(id); k++) id = `${base}-${k}`;
  used.add(id);
  return id;
}

const STYLE = `
:root { color-scheme: light; }
* { box-sizing: border-box; }
body { margin: 0; background: #ffffff; color: #1d1d1d; font: 15px/1.45 "DejaVu Sans", "Liberation Sans", Arial, sans-serif; }
main { max-width: 1180px; margin: 0 auto; padding: 20px 28px 40px; }
h1 { font-size: 1.45em; margin: 0.2em 0 0.6em; font-weight: 600; }
h2 { font-size: 1.15em; margin: 1.8em 0 0.6em; padding-bottom: 3px; border-bottom: 1px solid #cfcfcf; font-weight: 600; }
.cautions { border: 2px solid #8a5a00; background: #fff6e0; padding: 10px 16px 10px 16px; margin: 0 0 18px; }
.cautions strong { display: block; margin-bottom: 4px; color: #5c3c00; letter-spacing: 0.02em; }
.cautions ul { margin: 0; padding-left: 20px; }
.cautions li { margin: 3px 0; }
dl.summary { display: grid; grid-template-columns: max-content 1fr; gap: 3px 18px; margin: 0; }
dl.summary dt { color: #555; }
dl.summary dd { margin: 0; font-variant-numeric: tabular-nums; }
nav.toc { font-size: 0.92em; margin: 12px 0 0; color: #555; }
nav.toc a { color: #1f4e79; margin-right: 14px; }
figure { margin: 10px 0 22px; overflow-x: auto; }
figcaption { font-size: 0.88em; color: #444; max-width: 760px; margin-top: 4px; }
svg.cairn-figure { display: block; }
svg.cairn-figure g.cell:hover ellipse { stroke-width: 2.6; fill-opacity: 0.35; }
svg.cairn-figure g.cell:hover circle, svg.cairn-figure g.point:hover circle { stroke: #000; stroke-width: 1.5; }
.table-wrap { overflow: auto; max-height: 640px; border: 1px solid #d6d6d6; width: fit-content; max-width: 100%; }
table { border-collapse: collapse; font-size: 0.82em; font-variant-numeric: tabular-nums; width: auto; min-width: 50%; }
caption { text-align: left; padding: 6px 8px; color: #444; caption-side: top; }
th, td { padding: 3px 6px; border-bottom: 1px solid #ececec; text-align: left; white-space: nowrap; }
th { position: sticky; top: 0; background: #f1f1f1; font-weight: 600; border-bottom: 1px solid #bdbdbd; }
th.num, td.num { text-align: right; }
td.missing { color: #999; }
th button { font: inherit; background: none; border: 0; padding: 0; cursor: pointer; color: inherit; }
th button:focus-visible { outline: 2px solid #1f4e79; }
th .arrow { display: inline-block; width: 1em; color: #555; }
th[aria-sort="ascending"] .arrow::after { content: "▲"; font-size: 0.75em; }
th[aria-sort="descending"] .arrow::after { content: "▼"; font-size: 0.75em; }
tbody tr:nth-child(even) { background: #fafafa; }
tbody tr:hover { background: #eef3f8; }
footer { margin-top: 32px; font-size: 0.82em; color: #666; }
code { font-family: "DejaVu Sans Mono", monospace; font-size: 0.92em; }
`;

// Sorts a table when a heading button is clicked: numbers by value, text by
// localeCompare with numeric collation; empty values last in both directions.
const SCRIPT = `
(function () {
  function sortTable(th) {
    var table = th.closest('table');
    var index = Array.prototype.indexOf.call(th.parentNode.children, th);
    var numeric = th.getAttribute('data-type') === 'number';
    var ascending = th.getAttribute('aria-sort') !== 'ascending';
    var heads = th.parentNode.children;
    for (var i = 0; i < heads.length; i++) if (heads[i].hasAttribute('aria-sort')) heads[i].setAttribute('aria-sort', 'none');
    th.setAttribute('aria-sort', ascending ? 'ascending' : 'descending');
    var body = table.tBodies[0];
    var rows = Array.prototype.slice.call(body.rows);
    var keyed = rows.map(function (row, position) {
      var v = row.cells[index].getAttribute('data-value');
      return { row: row, position: position, empty: v === null || v === '', value: numeric ? Number(v) : v };
    });
    keyed.sort(function (a, b) {
      if (a.empty || b.empty) return a.empty === b.empty ? a.position - b.position : a.empty ? 1 : -1;
      var c = numeric ? a.value - b.value : String(a.value).localeCompare(String(b.value), undefined, { numeric: true });
      if (c === 0) return a.position - b.position;
      return ascending ? c : -c;
    });
    keyed.forEach(function (k) { body.appendChild(k.row); });
  }
  document.querySelectorAll('table.sortable th[data-type] button').forEach(function (button) {
    button.addEventListener('click', function () { sortTable(button.parentNode); });
  });
})();
`;

/**
 * The whole page as one HTML string: title, cautions (prominent, first),
 * summary, a short table of contents, the sections in order, and the footer.
 * Throws UsageError when there is no caution (every report must carry one).
 */
export function renderHtmlReport(page: ReportPage): string {
  if (page.cautions.length === 0) throw new UsageError('renderHtmlReport: a report needs at least one caution');
  const used = new Set<string>(['cautions', 'summary']);
  const sections = page.sections.map((s) => ({ ...s, anchor: s.id ?? slug(s.heading, used) }));
  const toc = sections.map((s) => `<a href="#${escapeXml(s.anchor)}">${escapeXml(s.heading)}</a>`).join('');
  const summary = page.summary.map((item) => `<dt>${escapeXml(item.term)}</dt><dd>${escapeXml(item.value)}</dd>`).join('');
  const cautions = page.cautions.map((c) => `<li>${inlineCode(c)}</li>`).join('');
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:">
<title>${escapeXml(page.title)}</title>
<style>${STYLE}</style>
</head>
<body>
<main>
<h1>${escapeXml(page.title)}</h1>
<section class="cautions" id="cautions" role="note" aria-label="Cautions"><strong>Read first</strong><ul>${cautions}</ul></section>
<section id="summary"><dl class="summary">${summary}</dl><nav class="toc">${toc}</nav></section>
${sections.map((s) => `<section id="${escapeXml(s.anchor)}"><h2>${escapeXml(s.heading)}</h2>\n${s.html}\n</section>`).join('\n')}
${page.footer ? `<footer>${escapeXml(page.footer)}</footer>` : ''}
</main>
<script>${SCRIPT}</script>
</body>
</html>
`;
}

/** Escape text and render `backticked` spans as <code>. */
function inlineCode(text: string): string {
  return escapeXml(text).replace(/`([^`]+)`/g, '<code>$1</code>');
}
