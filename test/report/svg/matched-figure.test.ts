import { describe, expect, it } from 'vitest';
import { UsageError } from '../../../src/errors.js';
import { colourAt } from '../../../src/report/colour.js';
import { matchedSampleFigureSvg, type MatchedPoint } from '../../../src/report/svg/matched-figure.js';
import { makeCell, makeTemplate, testTemplate } from '../support/template.js';
import { wellFormedProblems } from '../support/xml.js';

describe('matchedSampleFigureSvg', () => {
  const template = testTemplate({ cells: 20 });
  const points: MatchedPoint[] = [
    ...template.cells.slice(0, 15).map((c, i) => ({
      coords: c.mean.map((m, k) => m + 0.3 * (k + 1) * (i % 2 ? 1 : -1)),
      label: c.label,
      confidence: i / 14,
      name: `row ${i + 2}`,
    })),
    { coords: [30, 0, 0], label: null, confidence: 0 },
    { coords: [0, 12, -3], label: 'Not-A-Cell', confidence: 0.4 },
  ];
  const svg = matchedSampleFigureSvg(template, { sampleId: 'gk-14', points });

  it('is well-formed SVG with a legend for confidence, template ellipses, and unlabelled points', () => {
    expect(wellFormedProblems(svg)).toEqual([]);
    expect(svg).toContain('colour: confidence of the proposed label');
    expect(svg).toContain('template cell, ellipse holding 95% (projected)');
    expect(svg).toContain('point with no label proposed');
    expect(svg).toContain('proposals are to be checked by a person');
    expect(svg).toContain('<title>Sample gk-14 over the template, with proposed labels</title>');
  });

  it('draws every point in every plane with its proposal and confidence on hover', () => {
    const titles = [...svg.matchAll(/<g class="point"[^>]*><title>([^<]*)<\/title>/g)].map((m) => m[1]);
    expect(titles).toHaveLength(3 * points.length);
    expect(titles).toContain(`row 2: proposed ${template.cells[0].label} (confidence 0.00)`);
    expect(titles).toContain(`row 16: proposed ${template.cells[14].label} (confidence 1.00)`);
    expect(titles).toContain('point 16: no label proposed');
    expect(titles).toContain('point 17: proposed Not-A-Cell (confidence 0.40) — not a cell of this template');
  });

  it('colours points by confidence on cividis over [0, 1]', () => {
    const fills = [...svg.matchAll(/<g class="point" data-label="[^"]+"><title>row 16:[^<]*<\/title><line[^>]*\/><circle [^>]*fill="([^"]+)"/g)];
    expect(fills[0][1]).toBe(colourAt('cividis', 1));
  });

  it('extends the plot to include points outside the template', () => {
    const t = makeTemplate([makeCell('A', [0, 0], [[1, 0], [0, 1]], 8)], 2);
    const s = matchedSampleFigureSvg(t, { sampleId: 's', points: [{ coords: [40, 0], label: null, confidence: 0 }] });
    expect(s).toMatch(/>40<\/text>/);
  });

  it('rejects a point of the wrong dimension and a confidence outside [0, 1]', () => {
    expect(() => matchedSampleFigureSvg(template, { sampleId: 's', points: [{ coords: [1, 2], label: null, confidence: 0 }] })).toThrow(
      /point 1 of sample "s" needs 3 finite coordinates/,
    );
    expect(() =>
      matchedSampleFigureSvg(template, { sampleId: 's', points: [{ coords: [1, 2, 3], label: 'x', confidence: 1.2 }] }),
    ).toThrow(UsageError);
  });
});
