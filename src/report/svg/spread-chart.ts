/**
 * Figure: per-cell spread chart. One column per cell, cells sorted by their
 * largest principal standard deviation (most variable on the left); markers
 * give the sd along each principal axis, a grey line joins a cell's smallest
 * and largest sd. Cell details on hover (<title>).
 */
import { UsageError } from '../../errors.js';
import type { CellSummary } from '../cell-table.js';
import { sortCellSummaries } from '../cell-table.js';
import { COLOUR_SCALE_SOURCES, colourAt } from '../colour.js';
import { escapeXml, fixed, niceTicks, px, stepDigits, svgOpen } from './common.js';

export interface SpreadChartOptions {
  /** Largest plot width, px; default 700. */
  readonly plotWidth?: number;
  /** Plot height, px; default 220. */
  readonly plotHeight?: number;
}

/** Colour of principal axis k (0-based) of d: cividis at evenly spaced points in [0.05, 0.9]. */
export function axisColour(k: number, d: number): string {
  return colourAt('cividis', d <= 1 ? 0.05 : 0.05 + (0.85 * k) / (d - 1));
}

function marker(k: number, x: number, y: number, colour: string, hollow: boolean): string {
  const fill = hollow ? '#ffffff' : colour;
  const stroke = `stroke="${colour}" stroke-width="1.2"`;
  if (k === 0) return `<circle cx="${px(x)}" cy="${px(y)}" r="3" fill="${fill}" ${stroke}/>`;
  if (k === 1) return `<rect x="${px(x - 2.7)}" y="${px(y - 2.7)}" width="5.4" height="5.4" fill="${fill}" ${stroke}/>`;
  return `<path d="M${px(x)} ${px(y - 3.4)}L${px(x + 3.2)} ${px(y + 2.4)}L${px(x - 3.2)} ${px(y + 2.4)}Z" fill="${fill}" ${stroke}/>`;
}

const AXIS_WORDS = ['largest', 'middle', 'smallest'];

/**
 * The spread chart as an SVG string. The y axis starts at 0 µm. Labels are
 * written under the columns when there is room (column step >= 9 px);
 * otherwise they are available on hover only. Sparse cells have hollow markers.
 * Throws UsageError when there are no cells.
 */
export function spreadChartSvg(summaries: readonly CellSummary[], options: SpreadChartOptions = {}): string {
  if (summaries.length === 0) throw new UsageError('spreadChartSvg: there are no cells to draw');
  const cells = sortCellSummaries(summaries, 'variability');
  const d = cells[0].principalSds.length;
  const plotWidthMax = options.plotWidth ?? 700;
  const plotHeight = options.plotHeight ?? 220;
  const step = Math.max(2, Math.min(16, plotWidthMax / cells.length));
  const plotWidth = step * cells.length;
  const showLabels = step >= 9;
  const left = 56;
  const top = 62;
  const labelSpace = showLabels ? Math.min(90, 8 + 6.2 * Math.max(...cells.map((c) => c.label.length))) : 26;
  const width = Math.max(left + plotWidth + 16, 560);
  const height = top + plotHeight + labelSpace + 20;
  const maxSd = Math.max(...cells.map((c) => c.principalSds[0]));
  const ticks = niceTicks(0, maxSd * 1.05, 5);
  const yMax = Math.max(ticks.ticks[ticks.ticks.length - 1], maxSd * 1.05);
  const y = (v: number) => top + plotHeight - (v / yMax) * plotHeight;
  const parts: string[] = [];
  parts.push(
    svgOpen(
      width,
      height,
      'Spread of each cell along its principal axes',
      `Standard deviation (µm) of each of ${cells.length} cells along its ${d} principal axes, cells sorted by the largest; ` +
        `marker colours ${COLOUR_SCALE_SOURCES.cividis}, shapes distinguish the axes.`,
      'cairn-spread-chart',
    ),
  );
  // Legend.
  let lx = 16;
  for (let k = 0; k < d; k++) {
    parts.push(marker(k, lx + 4, 18, axisColour(k, d), false), `<text x="${lx + 12}" y="22">${AXIS_WORDS[d === 2 && k === 1 ? 2 : k]} principal sd</text>`);
    lx += 150;
  }
  parts.push(
    marker(0, 20, 40, axisColour(0, d), true),
    `<text x="28" y="44">hollow: sparse cell · grey line: range of a cell's sds · hover a column for its label</text>`,
  );
  // Axes.
  const yd = stepDigits(ticks.step);
  for (const t of ticks.ticks) {
    parts.push(
      `<line x1="${left}" y1="${px(y(t))}" x2="${px(left + plotWidth)}" y2="${px(y(t))}" stroke="#e4e4e4"/>`,
      `<text x="${left - 6}" y="${px(y(t) + 4)}" text-anchor="end" fill="#333">${fixed(t, yd)}</text>`,
    );
  }
  parts.push(
    `<rect x="${left}" y="${top}" width="${px(plotWidth)}" height="${plotHeight}" fill="none" stroke="#888" stroke-width="0.8"/>`,
    `<text transform="translate(${left - 40} ${px(top + plotHeight / 2)}) rotate(-90)" text-anchor="middle">sd (µm)</text>`,
  );
  if (!showLabels) {
    parts.push(`<text x="${px(left + plotWidth / 2)}" y="${px(top + plotHeight + 18)}" text-anchor="middle">cells, most variable first</text>`);
  }
  cells.forEach((c, i) => {
    const x = left + (i + 0.5) * step;
    const sdsText = c.principalSds.map((s) => fixed(s, 2)).join(', ');
    const tip = `${c.label}: principal sds ${sdsText} µm; n = ${c.count}${c.sparse ? ' (sparse)' : ''}`;
    const lo = Math.min(...c.principalSds);
    const hi = Math.max(...c.principalSds);
    parts.push(
      `<g class="cell" data-label="${escapeXml(c.label)}"><title>${escapeXml(tip)}</title>`,
      `<rect x="${px(left + i * step)}" y="${top}" width="${px(step)}" height="${plotHeight}" fill="#ffffff" fill-opacity="0"/>`,
      `<line x1="${px(x)}" y1="${px(y(lo))}" x2="${px(x)}" y2="${px(y(hi))}" stroke="#aaa" stroke-width="1"/>`,
    );
    for (let k = d - 1; k >= 0; k--) parts.push(marker(k, x, y(c.principalSds[k]), axisColour(k, d), c.sparse));
    if (showLabels) {
      parts.push(
        `<text transform="translate(${px(x + 3)} ${px(top + plotHeight + 6)}) rotate(-60)" text-anchor="end" font-size="9.5">${escapeXml(c.label)}</text>`,
      );
    }
    parts.push('</g>');
  });
  parts.push('</svg>');
  return parts.join('');
}
