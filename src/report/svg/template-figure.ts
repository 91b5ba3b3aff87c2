/**
 * Figure: the template in its frame, projected onto its coordinate planes,
 * with one covariance ellipse per cell at a stated probability, cells coloured
 * by variability (viridis), cell details on hover (<title>).
 */
import { UsageError } from '../../errors.js';
import { symmetricEigen } from '../../geometry/linear-algebra.js';
import type { Template } from '../../types.js';
import { COLOUR_SCALE_SOURCES, colourMap, mapColour } from '../colour.js';
import { chiSquare2Quantile, covarianceEllipse, marginalCovariance } from '../ellipse.js';
import { colourBar, escapeXml, fixed, px, svgOpen } from './common.js';
import { ellipseElement, layoutProjections, panelClipId, panelFrame, projectionPlanes, toPanel } from './projection.js';

export interface TemplateFigureOptions {
  /** Probability contained by each ellipse, in (0, 1); default 0.95. */
  readonly probability?: number;
  /** Largest plot width, px; default 660. */
  readonly plotWidth?: number;
  /** Largest panel height, px; default 300. */
  readonly maxPanelHeight?: number;
  /** Widest the figure may grow with panels side by side, px; default 1100. */
  readonly maxWidth?: number;
  /** Prefix for element ids, unique per page; default "tpl". */
  readonly idPrefix?: string;
}

/** Bounding box of every cell's p-ellipse in every coordinate: mu_k +- r sqrt(Sigma_kk), r^2 = chi2_2(p). */
export function ellipseBoundingBox(template: Template, probability: number): { min: number[]; max: number[] } {
  const r = Math.sqrt(chiSquare2Quantile(probability));
  const min = new Array<number>(template.dim).fill(Infinity);
  const max = new Array<number>(template.dim).fill(-Infinity);
  for (const cell of template.cells) {
    for (let k = 0; k < template.dim; k++) {
      const half = r * Math.sqrt(Math.max(0, cell.covariance[k][k]));
      min[k] = Math.min(min[k], cell.mean[k] - half);
      max[k] = Math.max(max[k], cell.mean[k] + half);
    }
  }
  return { min, max };
}

/** Percent text for a probability, e.g. 0.95 -> "95%", 0.5 -> "50%", 0.999 -> "99.9%". */
export function percent(p: number): string {
  return `${Number((p * 100).toPrecision(6))}%`;
}

/**
 * The template figure as an SVG string. Ellipse for cell k in plane (u, v):
 * the p-probability ellipse of the projected distribution N(mu_uv, Sigma_uv)
 * (see ellipse.ts; r^2 = -2 ln(1 - p)). Colour: largest principal sd of the
 * full covariance, on viridis (t in [0, 0.88], the
 * lightest part left out for contrast on white) over [min, max] of the template's cells.
 * Sparse cells are drawn with a dashed outline. Larger ellipses are drawn
 * first so that small ones stay visible and hoverable.
 * Throws UsageError for an empty template or p outside (0, 1).
 */
export function templateFigureSvg(template: Template, options: TemplateFigureOptions = {}): string {
  const p = options.probability ?? 0.95;
  chiSquare2Quantile(p); // validates p
  if (template.cells.length === 0) throw new UsageError('templateFigureSvg: the template has no cells');
  const idPrefix = options.idPrefix ?? 'tpl';
  const sds = template.cells.map((c) => symmetricEigen(c.covariance).values.map((v) => Math.sqrt(Math.max(0, v))));
  const variability = sds.map((s) => s[0]);
  // The lightest tenth of viridis is too faint for outlines on white, so the map uses t in [0, 0.88].
  const map = colourMap('viridis', Math.min(...variability), Math.max(...variability), [0, 0.88]);
  const legendHeight = 74;
  const layout = layoutProjections(template.dim, ellipseBoundingBox(template, p), {
    top: legendHeight,
    plotWidth: options.plotWidth ?? 660,
    maxPanelHeight: options.maxPanelHeight ?? 300,
    maxWidth: options.maxWidth ?? 1100,
  });
  const width = Math.max(layout.width, 560);
  const height = layout.height;
  const pct = percent(p);
  const parts: string[] = [];
  parts.push(
    svgOpen(
      width,
      height,
      `Template cells in the template frame, ${pct} covariance ellipses`,
      `Orthogonal projections of ${template.cells.length} cell means with ellipses containing ${pct} of each cell's projected positions; ` +
        `colour: largest principal standard deviation (µm), ${COLOUR_SCALE_SOURCES.viridis}; all panels share one scale.`,
      'cairn-template-figure',
    ),
  );
  // Legend.
  parts.push(colourBar(map, 16, 22, 220, 12, 'colour: largest principal sd (µm)', 2, `${idPrefix}-grad`));
  const lx = 270;
  parts.push(
    `<g class="legend-keys">`,
    `<ellipse cx="${lx + 14}" cy="22" rx="12" ry="6" fill="#21918c" fill-opacity="0.18" stroke="#21918c" stroke-width="1.4"/>`,
    `<circle cx="${lx + 14}" cy="22" r="2" fill="#222"/>`,
    `<text x="${lx + 32}" y="26">cell mean and ellipse holding ${escapeXml(pct)} of its positions (projected)</text>`,
    `<ellipse cx="${lx + 14}" cy="44" rx="12" ry="6" fill="none" stroke="#555" stroke-width="1.4" stroke-dasharray="3 2"/>`,
    `<text x="${lx + 32}" y="48">dashed: sparse cell (n below ${template.settings.minCount})</text>`,
    `<text x="${lx}" y="66" fill="#444">hover a cell for its label; all panels share one scale</text>`,
    `</g>`,
  );
  const order = template.cells
    .map((c, i) => ({ i, size: sds[i].reduce((a, b) => a * b, 1) }))
    .sort((a, b) => b.size - a.size || a.i - b.i)
    .map((o) => o.i);
  for (const panel of layout.panels) {
    parts.push(panelFrame(panel, idPrefix));
    parts.push(`<g clip-path="url(#${panelClipId(idPrefix, panel)})">`);
    const [u, v] = panel.axes;
    for (const i of order) {
      const cell = template.cells[i];
      const colour = mapColour(map, variability[i]);
      const e = covarianceEllipse([cell.mean[u], cell.mean[v]], marginalCovariance(cell.covariance, u, v), p);
      const [cx, cy] = toPanel(panel, cell.mean[u], cell.mean[v]);
      const tip =
        `${cell.label}: n = ${cell.count}${cell.sparse ? ' (sparse)' : ''}; ` +
        `mean (${cell.mean.map((m) => fixed(m, 1)).join(', ')}) µm; principal sds ${sds[i].map((s) => fixed(s, 2)).join(', ')} µm`;
      parts.push(
        `<g class="cell" data-label="${escapeXml(cell.label)}"><title>${escapeXml(tip)}</title>`,
        ellipseElement(
          panel,
          e,
          `fill="${colour}" fill-opacity="0.16" stroke="${colour}" stroke-width="1.4"${cell.sparse ? ' stroke-dasharray="3 2"' : ''}`,
        ),
        `<circle cx="${px(cx)}" cy="${px(cy)}" r="1.8" fill="#222"/>`,
        `</g>`,
      );
    }
    parts.push(`</g>`);
  }
  parts.push('</svg>');
  return parts.join('');
}

export { projectionPlanes };
