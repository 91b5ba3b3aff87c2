/**
 * The HTML report of `cairn match`: the cautions first, a summary of the
 * batch (samples, points, proposals, mean confidence, stop reasons, samples
 * whose orientation is not settled), a table of every sample, the closest calls (the proposals whose runner-up label is
 * nearly as probable, to verify first), and the matched-sample figure for the
 * first MATCH_REPORT_FIGURES samples. Built from compact per-sample rows so that a
 * streaming batch keeps only what the page needs.
 */
import { applyToPoint } from '../geometry/transform.js';
import { POSE_MARGIN_SETTLED, poseUnsettled, type MatchResult } from '../match/match-sample.js';
import type { Sample, Template } from '../types.js';
import {
  paragraph,
  proposalCautions,
  renderFigure,
  renderHtmlReport,
  renderTable,
  type MeasuredAccuracy,
  type ReportPage,
} from './html.js';
import { fixed } from './svg/common.js';
import { matchedSampleFigureSvg, type MatchedFigureInput } from './svg/matched-figure.js';

/** How many samples get a figure on the page. */
export const MATCH_REPORT_FIGURES = 12;

/** How many closest calls the page lists (over all samples). */
export const MATCH_REPORT_CLOSE_CALLS = 30;

/** A proposal whose most probable other label comes close to it. */
export interface CloseCall {
  readonly sampleId: string;
  /** The point's line in its input file. */
  readonly row: number;
  readonly label: string;
  readonly confidence: number;
  readonly runnerUp: string;
  readonly runnerUpProbability: number;
}

/**
 * The proposals of one matched sample that have a runner-up label (the most
 * probable label other than the proposed one), ordered by the margin
 * confidence - runner-up probability, smallest first (ties: by row); at most
 * `limit`. Points left unlabelled and given labels (no runner-up)
 * are not listed.
 */
export function closeCalls(sample: Sample, result: MatchResult, limit = MATCH_REPORT_CLOSE_CALLS): CloseCall[] {
  const out: CloseCall[] = [];
  result.proposals.forEach((p, i) => {
    if (p.label === null) return;
    const other = p.alternatives.find((a) => a.label !== p.label);
    if (other === undefined || !(other.probability > 0)) return;
    out.push({ sampleId: sample.id, row: sample.rows[i], label: p.label, confidence: p.confidence, runnerUp: other.label, runnerUpProbability: other.probability });
  });
  return mergeCloseCalls([], out, limit);
}

/**
 * The `limit` closest calls of two lists (each from closeCalls or an earlier
 * merge): smallest margin first, ties by sample id, then row. The order is
 * total, so merging the samples of a batch in any order (worker threads
 * finish in any order) gives the same list.
 */
export function mergeCloseCalls(a: readonly CloseCall[], b: readonly CloseCall[], limit = MATCH_REPORT_CLOSE_CALLS): CloseCall[] {
  const margin = (c: CloseCall): number => c.confidence - c.runnerUpProbability;
  return [...a, ...b]
    .sort((x, y) => margin(x) - margin(y) || (x.sampleId < y.sampleId ? -1 : x.sampleId > y.sampleId ? 1 : 0) || x.row - y.row)
    .slice(0, limit);
}

/** One sample's line in the report (what summary.json keeps, minus the transform). */
export interface MatchReportRow {
  readonly id: string;
  readonly source: string;
  readonly points: number;
  readonly proposed: number;
  readonly meanConfidence: number | null;
  readonly stopReason: string | null;
  /** MatchResult.poseMargin (nats); null when no other pose mode was screened or the sample failed. */
  readonly poseMargin: number | null;
  readonly error: string | null;
}

export interface MatchReportInput {
  readonly template: Template;
  readonly templatePath: string;
  readonly method: string;
  readonly hitRadius: number;
  readonly seed: number;
  /** Every sample, in input order. */
  readonly rows: readonly MatchReportRow[];
  /** Figures of the first samples matched (at most MATCH_REPORT_FIGURES are drawn). */
  readonly figures: readonly MatchedFigureInput[];
  /** Accuracy `cairn evaluate` measured on the lab's own data, when given. */
  readonly measured?: MeasuredAccuracy;
  /** The closest calls over the batch (mergeCloseCalls), when collected. */
  readonly closeCalls?: readonly CloseCall[];
  readonly toolLine?: string;
}

/**
 * The figure input for one matched sample: each sample point mapped into the
 * template frame by the result's (affine) transform, y = A x + t, with its
 * proposed label and confidence, named by its input row ("row N").
 */
export function matchedFigureInput(sample: Sample, result: MatchResult): MatchedFigureInput {
  return {
    sampleId: sample.id,
    points: sample.coords.map((x, i) => ({
      coords: applyToPoint(result.transform, x),
      label: result.proposals[i].label,
      confidence: result.proposals[i].confidence,
      name: `row ${sample.rows[i]}`,
    })),
  };
}

/** The match report as a ReportPage (render with renderHtmlReport). */
export function buildMatchReport(input: MatchReportInput): ReportPage {
  const rows = input.rows;
  const matched = rows.filter((r) => r.error === null);
  const failed = rows.length - matched.length;
  const points = rows.reduce((a, r) => a + r.points, 0);
  const proposed = matched.reduce((a, r) => a + r.proposed, 0);
  const confidenceSum = matched.reduce((a, r) => a + (r.meanConfidence === null ? 0 : r.meanConfidence * r.proposed), 0);
  const stops = new Map<string, number>();
  for (const r of matched) if (r.stopReason !== null) stops.set(r.stopReason, (stops.get(r.stopReason) ?? 0) + 1);
  const stopText = [...stops.entries()]
    .sort((a, b) => b[1] - a[1] || (a[0] < b[0] ? -1 : 1))
    .map(([reason, n]) => `${reason} (${n})`)
    .join(', ');
  const summary = [
    { term: 'template', value: input.templatePath },
    { term: 'samples', value: `${rows.length} (${matched.length} matched${failed ? `, ${failed} failed` : ''})` },
    { term: 'points', value: String(points) },
    { term: 'proposed labels', value: `${proposed}${points ? ` (${fixed((100 * proposed) / points, 1)}% of points)` : ''}` },
    { term: 'mean confidence of proposals', value: proposed ? fixed(confidenceSum / proposed, 3) : '–' },
    { term: 'pose search stopped', value: stopText || '–' },
    { term: `orientation not settled (pose margin < ${POSE_MARGIN_SETTLED} nats)`, value: unsettledText(matched) },
    { term: 'method, hit radius, seed', value: `${input.method}, ${input.hitRadius}, ${input.seed}` },
  ];
  const shown = input.figures.slice(0, MATCH_REPORT_FIGURES);
  const figureHtml = shown
    .map((f, i) =>
      renderFigure(
        matchedSampleFigureSvg(input.template, f, { idPrefix: `m${i}` }),
        `Sample ${f.sampleId}: its points mapped into the template frame with their proposed labels and confidences.`,
      ),
    )
    .join('\n');
  const more =
    matched.length > shown.length
      ? paragraph(`Figures are shown for the first ${shown.length} of ${matched.length} matched samples; every sample's proposals are in its CSV file.`)
      : '';
  const sections = [
    {
      heading: 'Samples',
      html:
        paragraph('One row per sample. Click a heading to sort.') +
        renderTable({
          columns: [
            { heading: 'sample', numeric: false },
            { heading: 'points', numeric: true, digits: 0 },
            { heading: 'proposed', numeric: true, digits: 0, description: 'points given a label' },
            { heading: 'mean confidence', numeric: true, digits: 3, description: 'mean posterior probability of the proposed labels' },
            { heading: 'stop reason', numeric: false, description: 'why the pose search stopped' },
            {
              heading: 'pose margin',
              numeric: true,
              digits: 1,
              description: `nats by which the chosen pose leads the best other pose; below ${POSE_MARGIN_SETTLED} the orientation is not settled: give a few labels and match again`,
            },
            { heading: 'error', numeric: false },
          ],
          rows: rows.map((r) => [r.id, r.points, r.error ? null : r.proposed, r.meanConfidence, r.stopReason, r.poseMargin, r.error]),
        }),
    },
    ...(input.closeCalls !== undefined
      ? [
          {
            heading: 'Closest calls',
            html:
              (input.closeCalls.length === 0
                ? paragraph('No proposal had another label with any posterior probability.')
                : paragraph(
                    `The ${input.closeCalls.length} proposals whose most probable other label came closest to them (smallest difference in posterior probability), over all samples: verify these first. ` +
                      'With --alternatives, each CSV lists the next labels of every point.',
                  ) +
                  renderTable({
                    columns: [
                      { heading: 'sample', numeric: false },
                      { heading: 'row', numeric: true, digits: 0, description: "the point's line in its input file" },
                      { heading: 'proposed', numeric: false },
                      { heading: 'confidence', numeric: true, digits: 3 },
                      { heading: 'runner-up', numeric: false, description: 'the most probable other label' },
                      { heading: 'its probability', numeric: true, digits: 3 },
                    ],
                    rows: input.closeCalls.map((c) => [c.sampleId, c.row, c.label, c.confidence, c.runnerUp, c.runnerUpProbability]),
                  })),
          },
        ]
      : []),
    { heading: 'Matched samples', html: (figureHtml || paragraph('No sample could be matched.')) + more },
  ];
  return {
    title: `cairn match: ${rows.length} sample${rows.length === 1 ? '' : 's'}`,
    summary,
    cautions: proposalCautions(input.measured),
    sections,
    footer: input.toolLine,
  };
}

/** The summary's line on unsettled orientations: how many samples, and the first few of them. */
function unsettledText(matched: readonly MatchReportRow[]): string {
  const ids = matched.filter((r) => poseUnsettled(r.poseMargin)).map((r) => r.id);
  if (ids.length === 0) return 'none';
  const shown = ids.slice(0, 5).join(', ');
  return `${ids.length} of ${matched.length}: ${shown}${ids.length > 5 ? ', …' : ''} (give a few labels and match again)`;
}

/** The self-contained HTML page of a match run. */
export function renderMatchHtml(input: MatchReportInput): string {
  return renderHtmlReport(buildMatchReport(input));
}
