/**
 * Small building blocks shared by the SVG figures: escaping, number
 * formatting, tick choice and legend pieces. Pure functions returning strings.
 */
import { type ColourMap, colourAt, mapColour } from '../colour.js';

/** Escape text for XML/HTML content and attribute values. */
export function escapeXml(text: string): string {
  return text
    .replace(/&/g, '&amp;')
    .replace(/</g, '&lt;')
    .replace(/>/g, '&gt;')
    .replace(/"/g, '&quot;')
    .replace(/'/g, '&#39;');
}

/** A coordinate for SVG output: at most 2 decimals, no trailing zeros, no "-0". */
export function px(v: number): string {
  const r = Math.round(v * 100) / 100;
  return Object.is(r, -0) ? '0' : String(r);
}

/** A number for a label with a fixed number of decimals. */
export function fixed(v: number, digits: number): string {
  const s = v.toFixed(digits);
  return /^-0(\.0*)?$/.test(s) ? s.slice(1) : s;
}

/**
 * About `count` "nice" tick values (1, 2 or 5 times a power of ten) covering
 * [min, max] (Heckbert, "Nice numbers for graph labels", Graphics Gems, 1990).
 * Returns the ticks inside [min, max] and the step.
 */
export function niceTicks(min: number, max: number, count: number): { ticks: number[]; step: number } {
  if (!(max > min)) return { ticks: [min], step: 1 };
  const raw = (max - min) / Math.max(1, count);
  const mag = Math.pow(10, Math.floor(Math.log10(raw)));
  const f = raw / mag;
  const step = (f < 1.5 ? 1 : f < 3 ? 2 : f < 7 ? 5 : 10) * mag;
  const ticks: number[] = [];
  for (let t = Math.ceil(min / step - 1e-9) * step; t <= max + step * 1e-9; t += step) ticks.push(Math.round(t / step) * step);
  return { ticks, step };
}

/** Decimal places suited to a tick step. */
export function stepDigits(step: number): number {
  return Math.max(0, -Math.floor(Math.log10(step) + 1e-9));
}

/** The shared opening of every figure: accessible name and description. */
export function svgOpen(width: number, height: number, title: string, description: string, className: string): string {
  return (
    `<svg xmlns="http://www.w3.org/2000/svg" class="cairn-figure ${className}" width="${px(width)}" height="${px(height)}" ` +
    `viewBox="0 0 ${px(width)} ${px(height)}" role="img" font-family="DejaVu Sans, Arial, sans-serif" font-size="11">` +
    `<title>${escapeXml(title)}</title><desc>${escapeXml(description)}</desc>` +
    `<rect x="0" y="0" width="${px(width)}" height="${px(height)}" fill="#ffffff"/>`
  );
}

/**
 * A horizontal colour bar legend at (x, y) of the given size, with tick labels
 * below and a caption above. The gradient uses 17 stops of the map's scale.
 * `id` must be unique on the page (the gradient's element id).
 */
export function colourBar(
  map: ColourMap,
  x: number,
  y: number,
  width: number,
  height: number,
  caption: string,
  digits: number,
  id: string,
): string {
  const stops: string[] = [];
  for (let k = 0; k <= 16; k++) {
    const u = k / 16;
    const t = map.range[0] + u * (map.range[1] - map.range[0]);
    stops.push(`<stop offset="${px(u * 100)}%" stop-color="${colourAt(map.scale, t)}"/>`);
  }
  const { ticks } = niceTicks(map.min, map.max, 4);
  const span = map.max - map.min;
  const tickMarks =
    span > 0
      ? ticks
          .map((t) => {
            const tx = x + ((t - map.min) / span) * width;
            return (
              `<line x1="${px(tx)}" y1="${px(y + height)}" x2="${px(tx)}" y2="${px(y + height + 3)}" stroke="#333"/>` +
              `<text x="${px(tx)}" y="${px(y + height + 13)}" text-anchor="middle">${fixed(t, digits)}</text>`
            );
          })
          .join('')
      : `<text x="${px(x + width / 2)}" y="${px(y + height + 13)}" text-anchor="middle">${fixed(map.min, digits)}</text>`;
  return (
    `<g class="legend-colour">` +
    `<defs><linearGradient id="${id}" x1="0" y1="0" x2="1" y2="0">${stops.join('')}</linearGradient></defs>` +
    `<text x="${px(x)}" y="${px(y - 4)}">${escapeXml(caption)}</text>` +
    `<rect x="${px(x)}" y="${px(y)}" width="${px(width)}" height="${px(height)}" fill="url(#${id})" stroke="#555" stroke-width="0.5"/>` +
    tickMarks +
    `</g>`
  );
}

/** Colour for a value, re-exported for figure modules. */
export { mapColour };
