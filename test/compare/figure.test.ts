import { describe, expect, it } from 'vitest';
import { compareTemplates } from '../../src/compare/compare.js';
import { compareFigureSvg, qValueColour } from '../../src/compare/figure.js';
import { UsageError } from '../../src/errors.js';
import { createRng } from '../../src/random.js';
import { colourAt } from '../../src/report/colour.js';
import { randomSimilarity, simulateTemplate, syntheticLayout } from './synthetic.js';

function comparison(dim: 2 | 3 = 3) {
  const rng = createRng(31);
  const layout = syntheticLayout(rng, 12, dim, dim === 3 ? [2.5, 1.75, 1] : [2.5, 1.75]);
  const displaced = new Map([[layout.labels[0], dim === 3 ? [8, 0, 0] : [8, 0]]]);
  const a = simulateTemplate(rng, layout, { animals: 10, keepPositions: false });
  const b = simulateTemplate(rng, layout, { animals: 10, displaced, frame: randomSimilarity(rng, dim, 1), keepPositions: false });
  return { result: compareTemplates(a, b, { permutations: 0 }), layout };
}

const count = (text: string, pattern: RegExp): number => (text.match(pattern) ?? []).length;

describe('qValueColour', () => {
  it('is the dark end of viridis (R viridisLite #440154) for q <= 0.001 and 90% along it for q = 1', () => {
    expect(qValueColour(0.001)).toBe('#440154');
    expect(qValueColour(0)).toBe('#440154');
    expect(qValueColour(1)).toBe(colourAt('viridis', 0.9));
  });
  it('rejects q outside [0, 1]', () => {
    expect(() => qValueColour(1.2)).toThrow(new UsageError('qValueColour: q must lie in [0, 1], got 1.2'));
  });
});

describe('compareFigureSvg', () => {
  it('draws three projections in 3-D with two ellipses per cell in each, and one arrow per cell that moved visibly', () => {
    const { result } = comparison();
    const svg = compareFigureSvg(result);
    expect(count(svg, /plane<\/text>/g)).toBe(3);
    expect(count(svg, /<ellipse /g)).toBe(2 * result.cells.length * 3);
    expect(count(svg, /marker-end=/g)).toBeGreaterThanOrEqual(result.cells.length); // at least one panel shows each arrow
    expect(svg).toContain('95% ellipse of animals (projected)');
    expect(svg).toContain('Benjamini-Hochberg q-value (viridis)');
    expect(svg).toContain('(true length)');
  });
  it('colours the displaced cell by its q-value, with its label and length in the tooltip', () => {
    const { result, layout } = comparison();
    const cell = result.cells.find((c) => c.label === layout.labels[0])!;
    expect(cell.qValue).toBeLessThan(0.05);
    const svg = compareFigureSvg(result);
    expect(svg).toContain(`<title>${cell.label}: ${cell.length.toFixed(2)} µm, q = `);
    expect(svg).toContain(`stroke="${qValueColour(cell.qValue)}" stroke-width="2.2"`);
  });
  it('draws one panel for a 2-D comparison', () => {
    const { result } = comparison(2);
    expect(count(compareFigureSvg(result), /plane<\/text>/g)).toBe(1);
  });
  it('states a magnified arrow scale in the legend', () => {
    const { result } = comparison();
    expect(compareFigureSvg(result, { arrowScale: 5 })).toContain('drawn 5.0× its length');
  });
  it('is deterministic and rejects a probability outside (0, 1)', () => {
    const { result } = comparison();
    expect(compareFigureSvg(result)).toBe(compareFigureSvg(result));
    expect(() => compareFigureSvg(result, { probability: 1 })).toThrow(UsageError);
  });
});
