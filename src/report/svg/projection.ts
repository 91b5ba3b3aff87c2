/**
 * Orthogonal projections of a template's frame onto its coordinate planes
 * (x-y, x-z, y-z for 3-D; x-y for 2-D), placed left to right in rows (a panel
 * that fits beside the previous one goes there: for an elongated template the
 * y-z panel sits beside the x-z panel, sharing its vertical z axis). All panels
 * share one scale (px per µm) so that spreads can be compared across panels,
 * and the vertical axis points up.
 */
import { escapeXml, fixed, niceTicks, px, stepDigits } from './common.js';

const AXIS_NAMES = ['x', 'y', 'z'];

export interface ProjectionPanel {
  /** Indices of the horizontal (u) and vertical (v) coordinates. */
  readonly axes: readonly [number, number];
  /** Plot area in SVG pixels. */
  readonly left: number;
  readonly top: number;
  readonly width: number;
  readonly height: number;
  /** Data bounds shown, µm. */
  readonly uMin: number;
  readonly uMax: number;
  readonly vMin: number;
  readonly vMax: number;
  /** Pixels per µm, the same in every panel. */
  readonly scale: number;
}

export interface ProjectionLayout {
  readonly panels: readonly ProjectionPanel[];
  readonly width: number;
  readonly height: number;
}

export interface ProjectionLayoutOptions {
  /** y of the first panel's title, px. */
  readonly top: number;
  /** Largest plot-area width, px. */
  readonly plotWidth: number;
  /** Largest plot-area height, px. */
  readonly maxPanelHeight: number;
  /** Widest the figure may grow when panels sit side by side, px; default one panel's width. */
  readonly maxWidth?: number;
}

const MARGIN_LEFT = 52;
const MARGIN_RIGHT = 16;
const TITLE_HEIGHT = 18;
const AXIS_HEIGHT = 36;
const GAP = 10;

/** The planes drawn for a dimension: pairs of coordinate indices. */
export function projectionPlanes(dim: number): [number, number][] {
  return dim === 3 ? [[0, 1], [0, 2], [1, 2]] : [[0, 1]];
}

/**
 * Lay out the panels for data within the box [min, max] (per coordinate, µm).
 * Each range is padded by 4% on both sides (at least 0.5 µm). The scale is
 * the largest that fits every panel into plotWidth x maxPanelHeight; panels
 * then flow into rows no wider than maxWidth.
 */
export function layoutProjections(
  dim: number,
  box: { readonly min: readonly number[]; readonly max: readonly number[] },
  options: ProjectionLayoutOptions,
): ProjectionLayout {
  const lo: number[] = [];
  const hi: number[] = [];
  for (let k = 0; k < dim; k++) {
    const span = Math.max(box.max[k] - box.min[k], 0);
    const pad = Math.max(0.04 * span, 0.5);
    lo.push(box.min[k] - pad);
    hi.push(box.max[k] + pad);
  }
  const planes = projectionPlanes(dim);
  let scale = Infinity;
  for (const [u, v] of planes) {
    scale = Math.min(scale, options.plotWidth / (hi[u] - lo[u]), options.maxPanelHeight / (hi[v] - lo[v]));
  }
  // Flow the panels left to right, starting a new row when the next one would pass maxWidth.
  const maxWidth = options.maxWidth ?? MARGIN_LEFT + options.plotWidth + MARGIN_RIGHT;
  const panels: ProjectionPanel[] = [];
  let rowTop = options.top;
  let rowHeight = 0;
  let x = 0;
  let width = 0;
  for (const [u, v] of planes) {
    const w = (hi[u] - lo[u]) * scale;
    const h = (hi[v] - lo[v]) * scale;
    const footprint = MARGIN_LEFT + w + MARGIN_RIGHT;
    if (x > 0 && x + footprint > maxWidth) {
      rowTop += rowHeight;
      rowHeight = 0;
      x = 0;
    }
    panels.push({
      axes: [u, v],
      left: x + MARGIN_LEFT,
      top: rowTop + TITLE_HEIGHT,
      width: w,
      height: h,
      uMin: lo[u],
      uMax: hi[u],
      vMin: lo[v],
      vMax: hi[v],
      scale,
    });
    x += footprint;
    width = Math.max(width, x);
    rowHeight = Math.max(rowHeight, TITLE_HEIGHT + h + AXIS_HEIGHT + GAP);
  }
  return { panels, width, height: rowTop + rowHeight };
}

/** SVG coordinates of the data point (u, v) in a panel (v points up). */
export function toPanel(panel: ProjectionPanel, u: number, v: number): [number, number] {
  return [panel.left + (u - panel.uMin) * panel.scale, panel.top + panel.height - (v - panel.vMin) * panel.scale];
}

/** Unique clip-path id for a panel. */
export function panelClipId(idPrefix: string, panel: ProjectionPanel): string {
  return `${idPrefix}-clip-${AXIS_NAMES[panel.axes[0]]}${AXIS_NAMES[panel.axes[1]]}`;
}

/** Frame, ticks, axis names and title of a panel, plus its clip path. */
export function panelFrame(panel: ProjectionPanel, idPrefix: string): string {
  const [u, v] = panel.axes;
  const un = AXIS_NAMES[u];
  const vn = AXIS_NAMES[v];
  const parts: string[] = [];
  parts.push(
    `<clipPath id="${panelClipId(idPrefix, panel)}"><rect x="${px(panel.left)}" y="${px(panel.top)}" width="${px(panel.width)}" height="${px(panel.height)}"/></clipPath>`,
  );
  parts.push(
    `<text x="${px(panel.left)}" y="${px(panel.top - 5)}" font-weight="bold">${un}–${vn} plane</text>`,
    `<rect x="${px(panel.left)}" y="${px(panel.top)}" width="${px(panel.width)}" height="${px(panel.height)}" fill="#fafafa" stroke="#888" stroke-width="0.8"/>`,
  );
  const uTicks = niceTicks(panel.uMin, panel.uMax, Math.max(2, Math.round(panel.width / 70)));
  const ud = stepDigits(uTicks.step);
  for (const t of uTicks.ticks) {
    const [x] = toPanel(panel, t, panel.vMin);
    const yb = panel.top + panel.height;
    parts.push(
      `<line x1="${px(x)}" y1="${px(yb)}" x2="${px(x)}" y2="${px(yb + 4)}" stroke="#555"/>`,
      `<text x="${px(x)}" y="${px(yb + 15)}" text-anchor="middle" fill="#333">${fixed(t, ud)}</text>`,
    );
  }
  const vTicks = niceTicks(panel.vMin, panel.vMax, Math.max(2, Math.round(panel.height / 45)));
  const vd = stepDigits(vTicks.step);
  for (const t of vTicks.ticks) {
    const [, y] = toPanel(panel, panel.uMin, t);
    parts.push(
      `<line x1="${px(panel.left - 4)}" y1="${px(y)}" x2="${px(panel.left)}" y2="${px(y)}" stroke="#555"/>`,
      `<text x="${px(panel.left - 6)}" y="${px(y + 4)}" text-anchor="end" fill="#333">${fixed(t, vd)}</text>`,
    );
  }
  parts.push(
    `<text x="${px(panel.left + panel.width / 2)}" y="${px(panel.top + panel.height + 30)}" text-anchor="middle">${un} (µm)</text>`,
    `<text transform="translate(${px(panel.left - 38)} ${px(panel.top + panel.height / 2)}) rotate(-90)" text-anchor="middle">${vn} (µm)</text>`,
  );
  return parts.join('');
}

/** An SVG ellipse element for an ellipse in data units drawn in a panel. */
export function ellipseElement(
  panel: ProjectionPanel,
  e: { centre: readonly number[]; semiAxes: readonly number[]; angle: number },
  attributes: string,
): string {
  const [cx, cy] = toPanel(panel, e.centre[0], e.centre[1]);
  // v points up in data but down in SVG, so a counter-clockwise data angle is a negative SVG rotation.
  const deg = (-e.angle * 180) / Math.PI;
  return (
    `<ellipse cx="${px(cx)}" cy="${px(cy)}" rx="${px(Math.max(0.5, e.semiAxes[0] * panel.scale))}" ` +
    `ry="${px(Math.max(0.5, e.semiAxes[1] * panel.scale))}" transform="rotate(${px(deg)} ${px(cx)} ${px(cy)})" ${attributes}/>`
  );
}

export { escapeXml };
