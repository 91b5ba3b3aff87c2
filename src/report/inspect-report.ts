/**
 * The `inspect` report: assembles a ReportPage (summary, cautions, figures,
 * sortable cell table, flagged hand labels, members) for one template.
 */
import type { Template } from '../types.js';
import { VERSION } from '../version.js';
import { type CellSummary, cellTable, describeCells, leastSeparableCells, mostVariableCells, sortCellSummaries } from './cell-table.js';
import { type MeasuredAccuracy, type ReportPage, paragraph, proposalCautions, renderFigure, renderHtmlReport, renderTable } from './html.js';
import { fixed } from './svg/common.js';
import { spreadChartSvg } from './svg/spread-chart.js';
import { percent, templateFigureSvg } from './svg/template-figure.js';

export interface InspectReportOptions {
  /** Accuracy measured by `cairn evaluate` on the lab's data, when known. */
  readonly accuracy?: MeasuredAccuracy;
  /** Probability held by the covariance ellipses; default 0.95. */
  readonly probability?: number;
  /** The template file's name, shown in the summary and the title. */
  readonly source?: string;
  /** Summaries already computed by describeCells (computed when absent). */
  readonly summaries?: readonly CellSummary[];
  /** Rows in the "most variable" and "least separable" views; default 10. */
  readonly topCount?: number;
}

function median(values: readonly number[]): number {
  const s = values.slice().sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : 0.5 * (s[m - 1] + s[m]);
}

/** The summary facts of a template, shared by the HTML page and the text output. */
export function templateFacts(template: Template, summaries: readonly CellSummary[], source?: string): { term: string; value: string }[] {
  const facts: { term: string; value: string }[] = [];
  if (source !== undefined) facts.push({ term: 'template file', value: source });
  const sparse = summaries.filter((s) => s.sparse).length;
  facts.push(
    { term: 'cells', value: `${template.cells.length} (${sparse} sparse: seen fewer than ${template.settings.minCount} times)` },
    { term: 'dimension', value: `${template.dim}-D, ${template.units === 'um' ? 'µm' : template.units}` },
    { term: 'members', value: `${template.members.length} animals, ${template.cells.reduce((a, c) => a + c.count, 0)} cell observations` },
    { term: 'flagged hand labels', value: String(template.flagged.length) },
  );
  if (summaries.length > 0) {
    const largest = summaries.map((s) => s.principalSds[0]);
    facts.push({
      term: 'largest principal sd',
      value: `median ${fixed(median(largest), 2)} µm, range ${fixed(Math.min(...largest), 2)}–${fixed(Math.max(...largest), 2)} µm`,
    });
    const seps = summaries.filter((s) => s.leastSeparated !== null).map((s) => s.leastSeparated!.separation);
    if (seps.length > 0) {
      const below2 = seps.filter((v) => v < 2).length;
      facts.push({
        term: 'Mahalanobis separation',
        value: `median ${fixed(median(seps), 2)}; ${below2} cells within 2 of a neighbour`,
      });
    }
  }
  facts.push(
    {
      term: 'alignment, prior',
      value: `${template.settings.alignment}; covariance prior strength ${template.settings.priorStrength} pseudo-observations`,
    },
    { term: 'made by', value: `${template.tool.name} ${template.tool.version}${template.created ? `, ${template.created}` : ''}` },
  );
  return facts;
}

/** The page for `cairn inspect --html`. */
export function buildInspectReport(template: Template, options: InspectReportOptions = {}): ReportPage {
  const p = options.probability ?? 0.95;
  const summaries = options.summaries ?? describeCells(template);
  const top = options.topCount ?? 10;
  const pct = percent(p);
  const cautions = [
    ...proposalCautions(options.accuracy),
    `Spreads and separations describe the ${template.members.length} member animals of this template. Cells seen fewer than ` +
      `${template.settings.minCount} times are marked sparse; their covariances lean on the pooled covariance and are less certain.`,
    'Flagged hand labels are candidates for a second look, not proven errors.',
  ];
  const sections = [];
  if (summaries.length > 0) {
    sections.push({
      heading: 'Cell positions',
      html: renderFigure(
        templateFigureSvg(template, { probability: p, idPrefix: 'inspect-tpl' }),
        `Cell means in the template frame, projected onto its coordinate planes. Each ellipse holds ${pct} of the cell's ` +
          `positions projected onto that plane (radius² = −2 ln(1 − p), the chi-square quantile with 2 degrees of freedom). ` +
          'Colour: largest principal standard deviation, viridis (van der Walt & Smith 2015). Hover a cell for its label.',
      ),
    });
    sections.push({
      heading: 'Spread per cell',
      html: renderFigure(
        spreadChartSvg(summaries),
        'Standard deviation along each principal axis of each cell’s covariance (square roots of its eigenvalues), most ' +
          'variable cell first. Marker colours: cividis (Nuñez, Anderton & Renslow 2018). Hover a column for its label.',
      ),
    });
    const table = cellTable(sortCellSummaries(summaries, 'variability'), template.dim);
    sections.push({
      heading: 'Cells',
      html:
        paragraph(
          'All cells, most variable first. Click a column heading to sort. D this: the nearest cell’s mean in Mahalanobis ' +
            'units under this cell’s covariance; D other: this mean under the nearest cell’s covariance; sep. D: the smallest ' +
            'of these over all other cells.',
        ) + renderTable({ columns: table.columns, rows: table.rows }),
    });
    const variable = cellTable(mostVariableCells(summaries, top), template.dim);
    const separable = cellTable(leastSeparableCells(summaries, top), template.dim);
    const pick = (t: typeof variable, keys: string[]) => {
      const idx = keys.map((k) => t.columns.findIndex((c) => c.key === k));
      return { columns: idx.map((i) => t.columns[i]), rows: t.rows.map((r) => idx.map((i) => r[i])) };
    };
    const sdKeys = Array.from({ length: template.dim }, (_, k) => `sd_${k + 1}`);
    sections.push({
      heading: 'Sorted views',
      html:
        renderTable({
          caption: `The ${Math.min(top, summaries.length)} most variable cells (largest principal sd)`,
          ...pick(variable, ['label', 'count', ...sdKeys, 'sd_generalised']),
        }) +
        '<div style="height:14px"></div>' +
        renderTable({
          caption: `The ${Math.min(top, summaries.length)} least separable cells (smallest Mahalanobis separation)`,
          ...pick(separable, ['label', 'count', 'least_separable', 'separation_mahalanobis', 'nearest', 'nearest_distance_um']),
        }),
    });
  } else {
    sections.push({ heading: 'Cells', html: paragraph('This template has no cells.') });
  }
  sections.push({
    heading: 'Flagged hand labels',
    html:
      template.flagged.length === 0
        ? paragraph(
            `No hand label was flagged (flag threshold: chi-square tail probability below ${template.settings.flagProbability}).`,
          )
        : paragraph(
            `Hand labels whose position is improbable under their cell's distribution (chi-square tail probability below ` +
              `${template.settings.flagProbability}, distance computed without the sample itself). Check these in the images.`,
          ) +
          renderTable({
            columns: [
              { heading: 'sample', numeric: false },
              { heading: 'row', numeric: true, digits: 0, description: 'line in the sample file (header = 1)' },
              { heading: 'label', numeric: false },
              { heading: 'D', numeric: true, digits: 2, description: 'Mahalanobis distance to the labelled cell' },
              { heading: 'likelier label', numeric: false, description: 'a cell under which the point is more probable' },
              { heading: 'D likelier', numeric: true, digits: 2 },
            ],
            rows: template.flagged.map((f) => [f.sample, f.row, f.label, f.distance, f.likelierLabel, f.likelierDistance]),
          }),
  });
  sections.push({
    heading: 'Members',
    html: renderTable({
      columns: [
        { heading: 'sample', numeric: false },
        { heading: 'labelled points', numeric: true, digits: 0 },
        { heading: 'residual µm', numeric: true, digits: 2, description: 'root-mean-square residual of its labelled points after alignment' },
      ],
      rows: template.members.map((m) => [m.id, m.labelled, m.residual]),
    }),
  });
  return {
    title: `Template report${options.source ? `: ${options.source}` : ''}`,
    summary: templateFacts(template, summaries, options.source),
    cautions,
    sections,
    footer: `Written by cairn ${VERSION} inspect. Ellipses at ${pct}. Self-contained page: no network, no external files.`,
  };
}

/** `buildInspectReport` rendered to one self-contained HTML string. */
export function renderInspectHtml(template: Template, options: InspectReportOptions = {}): string {
  return renderHtmlReport(buildInspectReport(template, options));
}
