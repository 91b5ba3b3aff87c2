/**
 * The comparison figure: orthogonal projections of A's frame (x-y, x-z, y-z;
 * one panel in 2-D), an arrow per tested cell from its mean in A to its mean in
 * B (after alignment), coloured by q-value, and both templates' covariance
 * ellipses; a legend explains the line styles, the arrow scale and the colours.
 *
 * Colours: the viridis scale (van der Walt & Smith 2015; perceptually uniform,
 * readable with common colour-vision deficiencies), from the control points of
 * src/report/colour.ts (R viridisLite 0.4.1), mapped on -log10(q): q <= 0.001
 * is the dark end, q = 1 the light end, so strong evidence is the most visible
 * on a white page. The lightest tenth of the scale is not used (too faint).
 * The two templates are told apart by line style (A dashed, B solid), not by
 * colour.
 *
 * Ellipses: the projection of each cell's spread across animals (its
 * covariance, shrunk in the template) onto the panel's plane, drawn at
 * probability `probability` (default 0.95) of the projected 2-D Gaussian:
 * radius^2 = chi-square(2) quantile (src/report/ellipse.ts).
 */
import { UsageError } from '../errors.js';
import { colourAt } from '../report/colour.js';
import { covarianceEllipse, marginalCovariance } from '../report/ellipse.js';
import { escapeXml, fixed, px, svgOpen } from '../report/svg/common.js';
import { ellipseElement, layoutProjections, panelClipId, panelFrame, toPanel, type ProjectionPanel } from '../report/svg/projection.js';
import type { CellComparison, TemplateComparison } from './compare.js';

export interface CompareFigureOptions {
  /** Probability held by each ellipse (default 0.95). */
  readonly probability?: number;
  /** Multiply arrow lengths by this factor (default 1: true scale). The legend states it. */
  readonly arrowScale?: number;
  /** Names of the two templates for the legend (default "A", "B"). */
  readonly nameA?: string;
  readonly nameB?: string;
  /** Largest plot width in px (default 560). */
  readonly plotWidth?: number;
  /** Prefix for element ids, unique on a page (default "cmp"). */
  readonly idPrefix?: string;
}

/** -log10(q) above which the colour saturates (q <= 0.001). */
const Q_SATURATION = 3;
/** Part of the viridis scale used: dark end (strong evidence) to 0.9. */
const SCALE_LIGHT_END = 0.9;

/**
 * Colour of a q-value: viridis at t = SCALE_LIGHT_END * (1 - min(1, -log10(q) / 3)).
 * @throws UsageError for q outside [0, 1].
 */
export function qValueColour(q: number): string {
  if (!(q >= 0 && q <= 1)) throw new UsageError(`qValueColour: q must lie in [0, 1], got ${q}`);
  const strength = q === 0 ? 1 : Math.min(1, -Math.log10(q) / Q_SATURATION);
  return colourAt('viridis', SCALE_LIGHT_END * (1 - strength));
}

/**
 * The comparison figure as a standalone SVG string (see the module comment).
 * @throws UsageError for a probability outside (0, 1) or a non-positive arrow scale.
 */
export function compareFigureSvg(result: TemplateComparison, options: CompareFigureOptions = {}): string {
  const probability = options.probability ?? 0.95;
  const arrowScale = options.arrowScale ?? 1;
  const nameA = options.nameA ?? 'A';
  const nameB = options.nameB ?? 'B';
  const id = options.idPrefix ?? 'cmp';
  if (!(probability > 0 && probability < 1)) throw new UsageError(`compareFigureSvg: probability must lie in (0, 1), got ${probability}`);
  if (!(arrowScale > 0) || !Number.isFinite(arrowScale)) throw new UsageError(`compareFigureSvg: arrowScale must be a positive number, got ${arrowScale}`);
  const dim = result.dim;
  const cells = result.cells.slice().sort((a, b) => b.qValue - a.qValue); // strongest drawn last, on top
  const tips = cells.map((c) => c.meanA.map((v, j) => v + arrowScale * c.displacement[j]));
  const box = { min: new Array<number>(dim).fill(Infinity), max: new Array<number>(dim).fill(-Infinity) };
  const grow = (p: readonly number[], r = 0): void => {
    for (let j = 0; j < dim; j++) {
      box.min[j] = Math.min(box.min[j], p[j] - r);
      box.max[j] = Math.max(box.max[j], p[j] + r);
    }
  };
  cells.forEach((c, i) => {
    const spread = Math.sqrt(Math.max(...c.covarianceA.map((row, j) => row[j]), ...c.covarianceB.map((row, j) => row[j])));
    grow(c.meanA, 2.5 * spread);
    grow(c.meanB, 2.5 * spread);
    grow(tips[i]);
  });
  if (cells.length === 0) {
    box.min.fill(-1);
    box.max.fill(1);
  }
  const legendHeight = 96;
  const layout = layoutProjections(dim, box, { top: 34, plotWidth: options.plotWidth ?? 560, maxPanelHeight: 300 });
  const width = Math.max(layout.width, 520);
  const height = layout.height + legendHeight;
  const significant = result.significant;
  const title = `Cell displacements from ${nameA} to ${nameB}`;
  const description =
    `${cells.length} shared cells, ${significant} with q < ${result.alpha}. Arrows from each cell's mean in ${nameA} to its mean in ${nameB} ` +
    `(aligned to ${nameA}'s frame), coloured by Benjamini-Hochberg q-value; ellipses hold ${fixed(100 * probability, 0)}% of animals.`;
  const parts: string[] = [svgOpen(width, height, title, description, 'compare-figure')];
  parts.push(
    `<defs>${arrowMarkers(id, cells)}</defs>`,
    `<text x="12" y="18" font-weight="bold" font-size="13">${escapeXml(title)}</text>`,
  );
  for (const panel of layout.panels) parts.push(drawPanel(panel, cells, tips, probability, id));
  parts.push(legend(layout.height + 8, width, probability, arrowScale, nameA, nameB, result.alpha, id));
  parts.push('</svg>');
  return parts.join('');
}

function markerId(id: string, colour: string): string {
  return `${id}-arrow-${colour.slice(1)}`;
}

function arrowMarkers(id: string, cells: readonly CellComparison[]): string {
  const colours = new Set(cells.map((c) => qValueColour(c.qValue)));
  return [...colours]
    .map(
      (c) =>
        `<marker id="${markerId(id, c)}" viewBox="0 0 10 10" refX="9" refY="5" markerWidth="5" markerHeight="5" orient="auto-start-reverse">` +
        `<path d="M0 0 L10 5 L0 10 z" fill="${c}"/></marker>`,
    )
    .join('');
}

function drawPanel(panel: ProjectionPanel, cells: readonly CellComparison[], tips: readonly number[][], probability: number, id: string): string {
  const [u, v] = panel.axes;
  const parts: string[] = [panelFrame(panel, id)];
  const ellipses: string[] = [];
  const arrows: string[] = [];
  cells.forEach((c, i) => {
    const ea = covarianceEllipse([c.meanA[u], c.meanA[v]], marginalCovariance(c.covarianceA, u, v), probability);
    const eb = covarianceEllipse([c.meanB[u], c.meanB[v]], marginalCovariance(c.covarianceB, u, v), probability);
    ellipses.push(
      ellipseElement(panel, ea, 'fill="none" stroke="#8a8a8a" stroke-width="0.8" stroke-dasharray="3 2"'),
      ellipseElement(panel, eb, 'fill="none" stroke="#3a3a3a" stroke-width="0.8"'),
    );
    const colour = qValueColour(c.qValue);
    const [x1, y1] = toPanel(panel, c.meanA[u], c.meanA[v]);
    const [x2, y2] = toPanel(panel, tips[i][u], tips[i][v]);
    const strong = c.qValue < 0.05;
    const lengthPx = Math.hypot(x2 - x1, y2 - y1);
    const label = `${c.label}: ${fixed(c.length, 2)} µm, q = ${formatQ(c.qValue)}`;
    arrows.push(
      `<g><title>${escapeXml(label)}</title>` +
        `<circle cx="${px(x1)}" cy="${px(y1)}" r="1.6" fill="${colour}"/>` +
        (lengthPx >= 0.5
          ? `<line x1="${px(x1)}" y1="${px(y1)}" x2="${px(x2)}" y2="${px(y2)}" stroke="${colour}" stroke-width="${strong ? 2.2 : 1.2}" marker-end="url(#${markerId(id, colour)})"/>`
          : '') +
        `</g>`,
    );
  });
  parts.push(`<g clip-path="url(#${panelClipId(id, panel)})">${ellipses.join('')}${arrows.join('')}</g>`);
  return parts.join('');
}

function formatQ(q: number): string {
  return q < 0.001 ? q.toExponential(1) : fixed(q, 3);
}

function legend(y: number, width: number, probability: number, arrowScale: number, nameA: string, nameB: string, alpha: number, id: string): string {
  const parts: string[] = ['<g class="legend">'];
  const x = 52;
  parts.push(
    `<line x1="${x}" y1="${px(y + 8)}" x2="${x + 26}" y2="${px(y + 8)}" stroke="#8a8a8a" stroke-dasharray="3 2"/>`,
    `<text x="${x + 32}" y="${px(y + 12)}">${escapeXml(nameA)}: ${fixed(100 * probability, 0)}% ellipse of animals (projected)</text>`,
    `<line x1="${x}" y1="${px(y + 24)}" x2="${x + 26}" y2="${px(y + 24)}" stroke="#3a3a3a"/>`,
    `<text x="${x + 32}" y="${px(y + 28)}">${escapeXml(nameB)}: ${fixed(100 * probability, 0)}% ellipse of animals (projected)</text>`,
    `<text x="${x}" y="${px(y + 44)}">arrow: mean in ${escapeXml(nameA)} → mean in ${escapeXml(nameB)}${
      arrowScale === 1 ? ' (true length)' : `, drawn ${fixed(arrowScale, arrowScale < 10 ? 1 : 0)}× its length`
    }; thick when q &lt; ${alpha}</text>`,
  );
  // Colour bar over -log10(q) from 0 (q = 1) to 3 (q <= 0.001).
  const bx = x;
  const by = y + 60;
  const bw = Math.min(260, width - bx - 40);
  const stops: string[] = [];
  for (let k = 0; k <= 16; k++) {
    const s = k / 16; // strength
    stops.push(`<stop offset="${px(s * 100)}%" stop-color="${colourAt('viridis', SCALE_LIGHT_END * (1 - s))}"/>`);
  }
  parts.push(
    `<defs><linearGradient id="${id}-qbar" x1="0" y1="0" x2="1" y2="0">${stops.join('')}</linearGradient></defs>`,
    `<text x="${bx + bw + 8}" y="${px(by + 9)}">Benjamini-Hochberg q-value (viridis)</text>`,
    `<rect x="${bx}" y="${px(by)}" width="${px(bw)}" height="10" fill="url(#${id}-qbar)" stroke="#555" stroke-width="0.5"/>`,
  );
  for (const q of [1, 0.1, 0.05, 0.01, 0.001]) {
    const tx = bx + (Math.min(Q_SATURATION, -Math.log10(q)) / Q_SATURATION) * bw;
    const text = q === 0.001 ? '≤0.001' : String(q);
    parts.push(
      `<line x1="${px(tx)}" y1="${px(by + 10)}" x2="${px(tx)}" y2="${px(by + 14)}" stroke="#333"/>`,
      `<text x="${px(tx)}" y="${px(by + 25)}" text-anchor="middle" font-size="9">${text}</text>`,
    );
  }
  parts.push('</g>');
  return parts.join('');
}
