import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { UsageError } from '../../src/errors.js';
import { colourAt, colourMap, mapColour } from '../../src/report/colour.js';

// R 4.2.2 viridisLite 0.4.1: viridis(101), cividis(101); fixture test/fixtures/colour-scales.json,
// made by scripts/fixtures/colour-scales.R
const reference = JSON.parse(readFileSync(new URL('../fixtures/colour-scales.json', import.meta.url), 'utf8')) as {
  viridis: string[];
  cividis: string[];
};

function rgb(hex: string): number[] {
  return [1, 3, 5].map((i) => parseInt(hex.slice(i, i + 2), 16));
}

describe('colourAt', () => {
  for (const scale of ['viridis', 'cividis'] as const) {
    // Linear interpolation between 33 stops: within 5/255 per channel everywhere (the worst places are
    // cividis's ends, where the scale bends at the edge of the sRGB gamut) and within 1/255 on average.
    it(`follows R viridisLite's ${scale} within 5/255 per channel (1/255 on average) at 101 points`, () => {
      const ref = reference[scale];
      expect(ref).toHaveLength(101);
      let worst = 0;
      let total = 0;
      ref.forEach((hex, i) => {
        const got = rgb(colourAt(scale, i / 100));
        const want = rgb(hex);
        for (let c = 0; c < 3; c++) {
          worst = Math.max(worst, Math.abs(got[c] - want[c]));
          total += Math.abs(got[c] - want[c]);
        }
      });
      expect(worst).toBeLessThanOrEqual(5);
      expect(total / (3 * ref.length)).toBeLessThanOrEqual(1);
    });

    it(`gives ${scale}'s end colours exactly at t = 0 and t = 1`, () => {
      expect(colourAt(scale, 0).toUpperCase()).toBe(reference[scale][0]);
      expect(colourAt(scale, 1).toUpperCase()).toBe(reference[scale][100]);
    });
  }

  it('grows monotonically lighter along viridis (sum of channels weighted as luma)', () => {
    // Perceptual uniformity implies monotone lightness (van der Walt & Smith 2015); Rec. 601 luma as a proxy.
    let last = -1;
    for (let i = 0; i <= 50; i++) {
      const [r, g, b] = rgb(colourAt('viridis', i / 50));
      const luma = 0.299 * r + 0.587 * g + 0.114 * b;
      expect(luma).toBeGreaterThan(last);
      last = luma;
    }
  });

  it('rejects t outside [0, 1] and NaN with a UsageError', () => {
    expect(() => colourAt('viridis', 1.01)).toThrow(UsageError);
    expect(() => colourAt('viridis', -0.1)).toThrow(/t must be in \[0, 1\], got -0.1/);
    expect(() => colourAt('cividis', Number.NaN)).toThrow(UsageError);
  });
});

describe('mapColour', () => {
  it('maps min and max to the ends of the chosen range and clamps outside values', () => {
    const m = colourMap('viridis', 2, 4, [0, 0.5]);
    expect(mapColour(m, 2)).toBe(colourAt('viridis', 0));
    expect(mapColour(m, 4)).toBe(colourAt('viridis', 0.5));
    expect(mapColour(m, 3)).toBe(colourAt('viridis', 0.25));
    expect(mapColour(m, 100)).toBe(colourAt('viridis', 0.5));
    expect(mapColour(m, -5)).toBe(colourAt('viridis', 0));
  });

  it('maps every value to the middle of the range when min = max', () => {
    expect(mapColour(colourMap('cividis', 1, 1), 1)).toBe(colourAt('cividis', 0.5));
  });

  it('rejects reversed bounds and a bad range', () => {
    expect(() => colourMap('viridis', 3, 2)).toThrow(/min <= max, got \[3, 2\]/);
    expect(() => colourMap('viridis', 0, 1, [0.6, 0.2])).toThrow(UsageError);
  });
});
