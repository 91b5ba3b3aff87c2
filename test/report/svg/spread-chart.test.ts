import { describe, expect, it } from 'vitest';
import { describeCells, sortCellSummaries } from '../../../src/report/cell-table.js';
import { axisColour, spreadChartSvg } from '../../../src/report/svg/spread-chart.js';
import { colourAt } from '../../../src/report/colour.js';
import { makeCell, makeTemplate, testTemplate } from '../support/template.js';
import { wellFormedProblems } from '../support/xml.js';

describe('spreadChartSvg', () => {
  const template = testTemplate({ cells: 24 });
  const summaries = describeCells(template);
  const svg = spreadChartSvg(summaries);
  const columns = [...svg.matchAll(/<g class="cell" data-label="([^"]+)">(.*?)<\/g>/g)];

  it('is well-formed SVG with a legend naming each principal axis and the sparse marker', () => {
    expect(wellFormedProblems(svg)).toEqual([]);
    expect(svg).toContain('largest principal sd');
    expect(svg).toContain('middle principal sd');
    expect(svg).toContain('smallest principal sd');
    expect(svg).toContain('hollow: sparse cell');
    expect(svg).toContain('sd (µm)');
  });

  it('has one column per cell, most variable first, each with a hover title and d markers', () => {
    expect(columns.map((m) => m[1])).toEqual(sortCellSummaries(summaries, 'variability').map((s) => s.label));
    for (const m of columns) {
      expect(m[2]).toMatch(/^<title>[^<]+: principal sds [\d., ]+ µm; n = \d+/);
      const markers = (m[2].match(/<circle|<rect x="[^"]*" y="[^"]*" width="5.4"|<path/g) ?? []).length;
      expect(markers).toBe(3);
    }
  });

  it('places markers at heights proportional to the sds (same pixel per µm for all cells)', () => {
    // Two cells with sds (2, 1) and (1, 0.5): marker heights above the baseline scale by 2.
    const t = makeTemplate([makeCell('A', [0, 0], [[4, 0], [0, 1]], 8), makeCell('B', [9, 0], [[1, 0], [0, 0.25]], 8)], 2);
    const s = spreadChartSvg(describeCells(t), { plotHeight: 200 });
    const cy = (label: string) => Number(s.match(new RegExp(`data-label="${label}">.*?<circle cx="[^"]+" cy="([^"]+)"`))![1]);
    const baseline = 62 + 200;
    expect((baseline - cy('A')) / (baseline - cy('B'))).toBeCloseTo(2, 2);
  });

  it('writes labels under the columns when they fit, and only on hover when there are many cells', () => {
    expect(svg).toMatch(/rotate\(-60\)" text-anchor="end" font-size="9.5">/);
    const many = spreadChartSvg(describeCells(testTemplate({ cells: 150 })));
    expect(many).not.toMatch(/rotate\(-60\)/);
    expect(many).toContain('cells, most variable first');
    expect([...many.matchAll(/<g class="cell"/g)]).toHaveLength(150);
  });

  it('uses cividis colours for the axes, from dark to light', () => {
    expect(axisColour(0, 3)).toBe(colourAt('cividis', 0.05));
    expect(axisColour(2, 3)).toBe(colourAt('cividis', 0.9));
  });

  it('rejects an empty list', () => {
    expect(() => spreadChartSvg([])).toThrow(/no cells/);
  });
});
