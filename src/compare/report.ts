/**
 * The HTML page for `cairn compare --html`: assembled as a ReportPage and
 * rendered by the shared page builder of src/report/html.ts.
 */
import { paragraph, renderFigure, renderHtmlReport, renderTable, type ReportPage } from '../report/html.js';
import { fixed } from '../report/svg/common.js';
import type { TemplateComparison } from './compare.js';
import { compareFigureSvg, type CompareFigureOptions } from './figure.js';
import { comparisonTable } from './table.js';

export interface CompareReportOptions extends CompareFigureOptions {
  readonly sourceA: string;
  readonly sourceB: string;
  /** Footer line, e.g. the tool version. */
  readonly footer?: string;
}

/** Plain-text cautions for any presentation of a comparison. */
export function comparisonCautions(result: TemplateComparison): string[] {
  return [
    `Displacements are measured after aligning B to A on the shared cells (${result.alignment.kind} fit). A change spread evenly over many cells is partly absorbed by the alignment; the overall shape difference (Procrustes distance and permutation test) speaks to that.`,
    `p-values are approximate: ${
      result.alignmentUncertainty
        ? "each cell is measured with the alignment refitted without it, and that alignment's uncertainty is included"
        : 'the alignment is treated as known'
    }; the test uses each template's stored covariance${
      result.covariance === 'template' ? ' (shrunk toward the pooled covariance, which makes it conservative)' : ' (recomputed sample covariance)'
    } and count. q-values control the expected share of false calls among the cells called different, not the error of any one cell.`,
    'A cell called different is a proposal to look at in the images, not a finding by itself.',
  ];
}

/** Build the report page for a comparison. */
export function buildCompareReport(result: TemplateComparison, options: CompareReportOptions): ReportPage {
  const table = comparisonTable(result);
  const figure = compareFigureSvg(result, { ...options, nameA: options.nameA ?? 'A', nameB: options.nameB ?? 'B' });
  const a = result.alignment;
  const shape = result.shape;
  const summary = [
    { term: 'A', value: options.sourceA },
    { term: 'B', value: options.sourceB },
    { term: 'cells tested', value: String(result.cells.length) },
    { term: `cells with q < ${result.alpha}`, value: String(result.significant) },
    { term: 'only in A', value: result.onlyInA.length ? result.onlyInA.join(', ') : 'none' },
    { term: 'only in B', value: result.onlyInB.length ? result.onlyInB.join(', ') : 'none' },
    { term: 'alignment', value: `${a.kind}, scale ${fixed(a.scale, 4)}, ${a.excluded.length} cell(s) left out as displaced` },
    {
      term: 'shape difference',
      value:
        `full Procrustes distance ${shape.distances.full.toPrecision(3)}` +
        (shape.permutation
          ? `, permutation p = ${fixed(shape.permutation.pValue, 4)} (${shape.permutation.permutations} permutations)`
          : shape.permutationNote
            ? ` (permutation test ${shape.permutationNote})`
            : ''),
    },
  ];
  const sections = [
    {
      heading: 'Displacements',
      html: renderFigure(
        figure,
        `Arrows from each shared cell's mean in A to its mean in B (B aligned to A), coloured by q-value; ellipses hold ${fixed(
          100 * (options.probability ?? 0.95),
          0,
        )}% of animals (dashed: A, solid: B).`,
      ),
    },
    {
      heading: 'Cells, by q-value',
      html: renderTable({
        columns: table.columns.map((c) => ({ heading: c.heading, numeric: c.numeric, digits: c.digits, description: c.description })),
        rows: table.rows,
        caption: `Two-sample Hotelling T² (${result.form === 'unequal' ? 'unequal covariances, Krishnamoorthy & Yu 2004' : 'pooled covariance'}), Benjamini-Hochberg q-values.`,
      }),
    },
  ];
  if (result.untested.length > 0) {
    sections.push({
      heading: 'Shared cells not tested',
      html: renderTable({
        columns: [
          { heading: 'cell', numeric: false },
          { heading: 'n A', numeric: true, digits: 0 },
          { heading: 'n B', numeric: true, digits: 0 },
          { heading: 'reason', numeric: false },
        ],
        rows: result.untested.map((u) => [u.label, u.countA, u.countB, u.reason]),
      }),
    });
  }
  sections.push({
    heading: 'Method',
    html: paragraph(
      `B's frame was aligned to A's by a ${a.kind} fit on the shared cells, weighted by each cell's precision, started from a trimmed fit and reweighted by a Tukey biweight on the standardized residuals, so that displaced cells do not drag the alignment (residual scale ${fixed(
        a.residualScale,
        2,
      )}). Each cell was then measured with the alignment refitted without it. Each cell's displacement was tested with a two-sample Hotelling T² from the templates' means, covariances and counts; length intervals are the range of lengths inside the ${Math.round(
        100 * result.level,
      )}% confidence ellipsoid of the displacement.`,
    ),
  });
  return { title: 'cairn compare: which cells sit differently', summary, cautions: comparisonCautions(result), sections, footer: options.footer };
}

/** The whole HTML page. */
export function renderCompareHtml(result: TemplateComparison, options: CompareReportOptions): string {
  return renderHtmlReport(buildCompareReport(result, options));
}
