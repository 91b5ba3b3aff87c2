/**
 * Figure: a matched sample over the template. The sample's points, already
 * mapped into the template frame, are drawn over the template's cell ellipses
 * (grey); each point is coloured by the confidence of its proposed label
 * (cividis on [0, 1]); points with no proposal are black crosses; a thin line
 * joins a labelled point to its proposed cell's mean. Details on hover.
 */
import { UsageError } from '../../errors.js';
import type { Template } from '../../types.js';
import { COLOUR_SCALE_SOURCES, colourMap, mapColour } from '../colour.js';
import { chiSquare2Quantile, covarianceEllipse, marginalCovariance } from '../ellipse.js';
import { colourBar, escapeXml, fixed, px, svgOpen } from './common.js';
import { ellipseElement, layoutProjections, panelClipId, panelFrame, toPanel } from './projection.js';
import { ellipseBoundingBox, percent } from './template-figure.js';

/** One point of a matched sample, in the template frame. */
export interface MatchedPoint {
  /** Coordinates in the template frame (after the match's transform), µm. */
  readonly coords: readonly number[];
  /** Proposed label, or null when the matcher proposes none (outlier or abstention). */
  readonly label: string | null;
  /** Confidence of the proposal in [0, 1] (a posterior); ignored when label is null. */
  readonly confidence: number;
  /** How to name the point on hover, e.g. "row 17"; default "point i" (1-based). */
  readonly name?: string;
}

export interface MatchedFigureInput {
  readonly sampleId: string;
  readonly points: readonly MatchedPoint[];
}

export interface MatchedFigureOptions {
  readonly probability?: number;
  readonly plotWidth?: number;
  readonly maxPanelHeight?: number;
  readonly maxWidth?: number;
  readonly idPrefix?: string;
}

/**
 * The matched-sample figure as an SVG string. Throws UsageError when a point's
 * dimension differs from the template's, a coordinate is not finite, or a
 * confidence is outside [0, 1].
 */
export function matchedSampleFigureSvg(
  template: Template,
  sample: MatchedFigureInput,
  options: MatchedFigureOptions = {},
): string {
  const p = options.probability ?? 0.95;
  chiSquare2Quantile(p);
  const idPrefix = options.idPrefix ?? 'match';
  const d = template.dim;
  sample.points.forEach((pt, i) => {
    if (pt.coords.length !== d || !pt.coords.every(Number.isFinite)) {
      throw new UsageError(`matchedSampleFigureSvg: point ${i + 1} of sample "${sample.sampleId}" needs ${d} finite coordinates`);
    }
    if (pt.label !== null && !(pt.confidence >= 0 && pt.confidence <= 1)) {
      throw new UsageError(`matchedSampleFigureSvg: point ${i + 1} of sample "${sample.sampleId}" has confidence ${pt.confidence}, outside [0, 1]`);
    }
  });
  const box =
    template.cells.length > 0
      ? ellipseBoundingBox(template, p)
      : { min: new Array<number>(d).fill(Infinity), max: new Array<number>(d).fill(-Infinity) };
  for (const pt of sample.points) {
    for (let k = 0; k < d; k++) {
      box.min[k] = Math.min(box.min[k], pt.coords[k]);
      box.max[k] = Math.max(box.max[k], pt.coords[k]);
    }
  }
  if (!box.min.every(Number.isFinite)) throw new UsageError('matchedSampleFigureSvg: nothing to draw (no cells and no points)');
  const map = colourMap('cividis', 0, 1);
  const legendHeight = 74;
  const layout = layoutProjections(d, box, {
    top: legendHeight,
    plotWidth: options.plotWidth ?? 660,
    maxPanelHeight: options.maxPanelHeight ?? 300,
    maxWidth: options.maxWidth ?? 1100,
  });
  const width = Math.max(layout.width, 560);
  const pct = percent(p);
  const byLabel = new Map(template.cells.map((c) => [c.label, c]));
  const labelled = sample.points.filter((pt) => pt.label !== null).length;
  const parts: string[] = [];
  parts.push(
    svgOpen(
      width,
      layout.height,
      `Sample ${sample.sampleId} over the template, with proposed labels`,
      `${sample.points.length} points of sample ${sample.sampleId} in the template frame, ${labelled} with a proposed label; ` +
        `colour: confidence, ${COLOUR_SCALE_SOURCES.cividis}; grey ellipses hold ${pct} of each template cell's projected positions.`,
      'cairn-matched-figure',
    ),
  );
  parts.push(colourBar(map, 16, 22, 220, 12, 'colour: confidence of the proposed label', 1, `${idPrefix}-grad`));
  const lx = 270;
  parts.push(
    `<g class="legend-keys">`,
    `<ellipse cx="${lx + 14}" cy="18" rx="12" ry="6" fill="none" stroke="#9a9a9a" stroke-width="1"/>`,
    `<text x="${lx + 32}" y="22">template cell, ellipse holding ${escapeXml(pct)} (projected)</text>`,
    `<circle cx="${lx + 8}" cy="38" r="3.2" fill="#7c7b78" stroke="#222" stroke-width="0.6"/>`,
    `<line x1="${lx + 11}" y1="38" x2="${lx + 24}" y2="38" stroke="#666" stroke-width="0.7"/>`,
    `<text x="${lx + 32}" y="42">point with a proposed label, line to that cell's mean</text>`,
    `<path d="M${lx + 5} 51l6 6m0 -6l-6 6" stroke="#111" stroke-width="1.3"/>`,
    `<text x="${lx + 32}" y="58">point with no label proposed</text>`,
    `<text x="16" y="66" fill="#444">proposals are to be checked by a person</text>`,
    `</g>`,
  );
  for (const panel of layout.panels) {
    const [u, v] = panel.axes;
    parts.push(panelFrame(panel, idPrefix));
    parts.push(`<g clip-path="url(#${panelClipId(idPrefix, panel)})">`);
    for (const cell of template.cells) {
      const e = covarianceEllipse([cell.mean[u], cell.mean[v]], marginalCovariance(cell.covariance, u, v), p);
      parts.push(
        `<g class="cell" data-label="${escapeXml(cell.label)}"><title>${escapeXml(`template cell ${cell.label}`)}</title>`,
        ellipseElement(panel, e, 'fill="none" stroke="#9a9a9a" stroke-width="1"'),
        '</g>',
      );
    }
    sample.points.forEach((pt, i) => {
      const name = pt.name ?? `point ${i + 1}`;
      const [x, y] = toPanel(panel, pt.coords[u], pt.coords[v]);
      if (pt.label === null) {
        parts.push(
          `<g class="point"><title>${escapeXml(`${name}: no label proposed`)}</title>`,
          `<path d="M${px(x - 3)} ${px(y - 3)}l6 6m0 -6l-6 6" stroke="#111" stroke-width="1.3"/></g>`,
        );
        return;
      }
      const cell = byLabel.get(pt.label);
      const line = cell
        ? (() => {
            const [mx, my] = toPanel(panel, cell.mean[u], cell.mean[v]);
            return `<line x1="${px(x)}" y1="${px(y)}" x2="${px(mx)}" y2="${px(my)}" stroke="#666" stroke-width="0.7"/>`;
          })()
        : '';
      const tip = `${name}: proposed ${pt.label} (confidence ${fixed(pt.confidence, 2)})${cell ? '' : ' — not a cell of this template'}`;
      parts.push(
        `<g class="point" data-label="${escapeXml(pt.label)}"><title>${escapeXml(tip)}</title>`,
        line,
        `<circle cx="${px(x)}" cy="${px(y)}" r="3.2" fill="${mapColour(map, pt.confidence)}" stroke="#222" stroke-width="0.6"/></g>`,
      );
    });
    parts.push('</g>');
  }
  parts.push('</svg>');
  return parts.join('');
}
