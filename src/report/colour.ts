/**
 * Perceptually uniform, colour-blind-safe colour scales for the figures.
 *
 * - viridis: van der Walt & Smith (2015), "mpl colormaps", designed for
 *   matplotlib 2.0; uniform in CAM02-UCS lightness and readable with the common
 *   forms of colour-vision deficiency.
 * - cividis: Nuñez, Anderton & Renslow (2018), "Optimizing colormaps with
 *   consideration for color vision deficiency to enable accurate interpretation
 *   of scientific data", PLoS ONE 13(7): e0199239; a blue-to-yellow scale that
 *   looks nearly the same to viewers with and without red-green deficiency.
 *
 * Each scale is stored as 17 equally spaced control points (t = 0, 1/16, ..., 1)
 * taken from R viridisLite 0.4.1 (`viridis(17)`, `cividis(17)`), and is
 * interpolated linearly in sRGB between them. The test compares the
 * interpolation with viridisLite's own 101-colour output
 * (test/fixtures/colour-scales.json, made by scripts/fixtures/colour-scales.R).
 */
import { UsageError } from '../errors.js';

export type ColourScaleName = 'viridis' | 'cividis';

const CONTROL_POINTS: Readonly<Record<ColourScaleName, readonly string[]>> = {
  // R 4.2.2 viridisLite 0.4.1: viridis(17)
  viridis: [
    '#440154', '#48186A', '#472D7B', '#424086', '#3B528B', '#33638D', '#2C728E', '#26828E', '#21908C',
    '#1F9F88', '#27AD81', '#3EBC74', '#5DC863', '#82D34D', '#AADC32', '#D5E21A', '#FDE725',
  ],
  // R 4.2.2 viridisLite 0.4.1: cividis(17)
  cividis: [
    '#00204D', '#002C69', '#05366E', '#2D426C', '#414D6B', '#52596C', '#61646F', '#6F7073', '#7C7B78',
    '#8B8779', '#9B9477', '#ACA174', '#BCAF6F', '#CEBC68', '#E0CB5E', '#F2DA50', '#FFEA46',
  ],
};

/** Citation text for a scale, for figure captions and legends. */
export const COLOUR_SCALE_SOURCES: Readonly<Record<ColourScaleName, string>> = {
  viridis: 'viridis (van der Walt & Smith 2015)',
  cividis: 'cividis (Nuñez, Anderton & Renslow 2018)',
};

function parseHex(hex: string): [number, number, number] {
  return [parseInt(hex.slice(1, 3), 16), parseInt(hex.slice(3, 5), 16), parseInt(hex.slice(5, 7), 16)];
}

function toHex(rgb: readonly number[]): string {
  return '#' + rgb.map((v) => Math.round(Math.min(255, Math.max(0, v))).toString(16).padStart(2, '0')).join('');
}

/**
 * Colour of the scale at position t in [0, 1], as `#rrggbb`: linear
 * interpolation in sRGB between the two neighbouring control points
 * (k = floor(t * 16), weight t * 16 - k). Throws UsageError for a t outside
 * [0, 1] or not finite.
 */
export function colourAt(scale: ColourScaleName, t: number): string {
  if (!Number.isFinite(t) || t < 0 || t > 1) throw new UsageError(`colourAt: t must be in [0, 1], got ${t}`);
  const stops = CONTROL_POINTS[scale];
  const m = stops.length - 1;
  const k = Math.min(m - 1, Math.floor(t * m));
  const w = t * m - k;
  const a = parseHex(stops[k]);
  const b = parseHex(stops[k + 1]);
  return toHex([0, 1, 2].map((c) => a[c] + w * (b[c] - a[c])));
}

/**
 * A map from data values in [min, max] onto the scale: t = (v - min) / (max - min),
 * clamped to [0, 1]; when max = min every value maps to t = 0.5. `range` is
 * restricted to part of the scale when the light end would be too faint on a
 * white page (for example [0, 0.9]).
 */
export interface ColourMap {
  readonly scale: ColourScaleName;
  readonly min: number;
  readonly max: number;
  /** Sub-range of the scale used, [t0, t1] with 0 <= t0 < t1 <= 1. */
  readonly range: readonly [number, number];
}

/** Build a ColourMap; throws UsageError for non-finite bounds or max < min. */
export function colourMap(
  scale: ColourScaleName,
  min: number,
  max: number,
  range: readonly [number, number] = [0, 1],
): ColourMap {
  if (!Number.isFinite(min) || !Number.isFinite(max) || max < min) {
    throw new UsageError(`colourMap: bounds must be finite with min <= max, got [${min}, ${max}]`);
  }
  if (!(range[0] >= 0 && range[1] <= 1 && range[0] < range[1])) {
    throw new UsageError(`colourMap: range must satisfy 0 <= t0 < t1 <= 1, got [${range[0]}, ${range[1]}]`);
  }
  return { scale, min, max, range };
}

/** Colour of value v under the map (clamped to the map's bounds). */
export function mapColour(map: ColourMap, v: number): string {
  const u = map.max > map.min ? Math.min(1, Math.max(0, (v - map.min) / (map.max - map.min))) : 0.5;
  return colourAt(map.scale, map.range[0] + u * (map.range[1] - map.range[0]));
}
