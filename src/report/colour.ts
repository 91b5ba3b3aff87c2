/**
 * Perceptually uniform, colour-blind-safe colour scales for the figures.
 *
 * - viridis: van der Walt & Smith (2015), designed as matplotlib's default
 *   colour map; uniform in CAM02-UCS lightness and readable with the common
 *   forms of colour-vision deficiency.
 * - cividis: Nuñez, Anderton & Renslow (2018), "Optimizing colormaps with
 *   consideration for color vision deficiency to enable accurate interpretation
 *   of scientific data", PLoS ONE 13(7): e0199239; a blue-to-yellow scale that
 *   looks nearly the same to viewers with and without red-green deficiency.
 *   (Both citations are given from memory; the colours themselves come from
 *   viridisLite, below.)
 *
 * Each scale is stored as 33 equally spaced control points (t = 0, 1/32, ..., 1)
 * taken from R viridisLite 0.4.1 (`viridis(33)`, `cividis(33)`), and is
 * interpolated linearly in sRGB between them. The test compares the
 * interpolation with viridisLite's own 101-colour output (within 5/255 per
 * channel, 1/255 on average)
 * (test/fixtures/colour-scales.json, made by scripts/fixtures/colour-scales.R).
 */
import { UsageError } from '../errors.js';

export type ColourScaleName = 'viridis' | 'cividis';

const CONTROL_POINTS: Readonly<Record<ColourScaleName, readonly string[]>> = {
  // R 4.2.2 viridisLite 0.4.1: viridis(33)
  viridis: [
    '#440154', '#470D60', '#48186A', '#482374', '#472D7B', '#453781', '#424086', '#3E4989', '#3B528B',
    '#375B8D', '#33638D', '#2F6B8E', '#2C728E', '#297A8E', '#26828E', '#23898E', '#21908C', '#1F978B',
    '#1F9F88', '#21A685', '#27AD81', '#31B57B', '#3EBC74', '#4DC26C', '#5DC863', '#6ECE58', '#82D34D',
    '#95D840', '#AADC32', '#C0DF25', '#D5E21A', '#EAE51A', '#FDE725',
  ],
  // R 4.2.2 viridisLite 0.4.1: cividis(33)
  cividis: [
    '#00204D', '#00265A', '#002C69', '#00306F', '#05366E', '#1F3C6D', '#2D426C', '#38486B', '#414D6B',
    '#4A536B', '#52596C', '#595F6D', '#61646F', '#686A71', '#6F7073', '#767676', '#7C7B78', '#848179',
    '#8B8779', '#938E78', '#9B9477', '#A39A76', '#ACA174', '#B4A872', '#BCAF6F', '#C5B56C', '#CEBC68',
    '#D7C463', '#E0CB5E', '#E9D358', '#F2DA50', '#FBE248', '#FFEA46',
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
 * (k = floor(t * 32), weight t * 32 - k). Throws UsageError for a t outside
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
