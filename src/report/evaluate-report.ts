/**
 * The HTML report of `cairn evaluate`: cross-validated accuracy, calibration,
 * per-cell and per-sample tables (with each held-out sample's pose margin)
 * and the most confused pairs, with the cautions first.
 */
import type { CrossValidationResult } from '../evaluate/cross-validate.js';
import { POSE_MARGIN_SETTLED } from '../match/match-sample.js';
import { measuredAccuracyFromReport, paragraph, proposalCautions, renderFigure, renderHtmlReport, renderTable, type ReportPage } from './html.js';
import { fixed } from './svg/common.js';
import { reliabilityFigureSvg } from './svg/reliability-figure.js';

export function crossValidationScheme(result: Pick<CrossValidationResult, 'folds' | 'samples'>): string {
  return result.folds === result.samples.length ? 'leave-one-out' : `${result.folds}-fold`;
}

const pct = (v: number) => `${fixed(100 * v, 1)}%`;

/** The evaluate report as a ReportPage (render with renderHtmlReport). */
export function buildEvaluateReport(result: CrossValidationResult, options: { sources?: readonly string[]; toolLine?: string } = {}): ReportPage {
  const r = result.report;
  const scheme = crossValidationScheme(result);
  const marginOf = new Map(result.samples.map((s) => [s.sample, s.poseMargin]));
  const sections = [
    {
      heading: 'Calibration',
      html:
        renderFigure(reliabilityFigureSvg(r.calibration, r.expectedCalibrationError), 'Observed accuracy of proposals per confidence bin; points on the dashed diagonal are perfectly calibrated.') +
        renderTable({
          columns: [
            { heading: 'confidence from', numeric: true, digits: 1 },
            { heading: 'to', numeric: true, digits: 1 },
            { heading: 'proposals', numeric: true, digits: 0 },
            { heading: 'mean confidence', numeric: true, digits: 3 },
            { heading: 'observed accuracy', numeric: true, digits: 3 },
          ],
          rows: r.calibration.map((b) => [b.lower, b.upper, b.count, b.count ? b.meanConfidence : null, b.count ? b.accuracy : null]),
          sortable: false,
        }),
    },
    {
      heading: 'Accuracy per cell',
      html:
        paragraph('Cells with the lowest accuracy first. Click a heading to sort.') +
        renderTable({
          columns: [
            { heading: 'cell', numeric: false },
            { heading: 'labelled points', numeric: true, digits: 0 },
            { heading: 'correct', numeric: true, digits: 0 },
            { heading: 'given a label', numeric: true, digits: 0 },
            { heading: 'accuracy', numeric: true, digits: 3 },
          ],
          rows: r.perCell.map((c) => [c.key, c.points, c.correct, c.proposed, c.accuracy]),
        }),
    },
    {
      heading: 'Accuracy per sample',
      html: renderTable({
        columns: [
          { heading: 'sample', numeric: false },
          { heading: 'labelled points', numeric: true, digits: 0 },
          { heading: 'correct', numeric: true, digits: 0 },
          { heading: 'accuracy', numeric: true, digits: 3 },
          {
            heading: 'pose margin',
            numeric: true,
            digits: 1,
            description: `nats by which the chosen pose led the best other pose when the sample was matched; below ${POSE_MARGIN_SETTLED} its orientation was not settled`,
          },
        ],
        rows: r.perSample.map((s) => [s.key, s.points, s.correct, s.accuracy, marginOf.get(s.key) ?? null]),
      }),
    },
    {
      heading: 'Most confused pairs',
      html: r.confusedPairs.length
        ? renderTable({
            columns: [
              { heading: 'hand label', numeric: false },
              { heading: 'proposed instead', numeric: false },
              { heading: 'times', numeric: true, digits: 0 },
            ],
            rows: r.confusedPairs.map((p) => [p.truth, p.proposed, p.count]),
          })
        : paragraph('No labelled point received a wrong proposal.'),
    },
  ];
  const skipped = result.samples.filter((s) => s.skipped !== null);
  if (skipped.length) {
    sections.push({
      heading: 'Samples not scored',
      html: renderTable({
        columns: [
          { heading: 'sample', numeric: false },
          { heading: 'reason', numeric: false },
        ],
        rows: skipped.map((s) => [s.sample, s.skipped ?? '']),
      }),
    });
  }
  return {
    title: 'cairn evaluate: cross-validated accuracy of label proposals',
    summary: [
      { term: 'scheme', value: `${scheme} over ${result.samples.length} labelled samples` },
      { term: 'labelled points scored', value: String(r.points) },
      { term: 'accuracy', value: pct(r.accuracy) },
      { term: 'top-3 accuracy', value: pct(r.top3Accuracy) },
      { term: 'given a label', value: pct(r.coverage) },
      { term: 'false-label rate (wrong / proposals made)', value: pct(r.falseLabelRate) },
      { term: 'expected calibration error', value: fixed(r.expectedCalibrationError, 3) },
    ],
    cautions: proposalCautions(measuredAccuracyFromReport(r, scheme)),
    sections,
    footer: options.toolLine,
  };
}

export function renderEvaluateHtml(result: CrossValidationResult, options: { toolLine?: string } = {}): string {
  return renderHtmlReport(buildEvaluateReport(result, options));
}
