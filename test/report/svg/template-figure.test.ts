import { describe, expect, it } from 'vitest';
import { UsageError } from '../../../src/errors.js';
import { colourAt } from '../../../src/report/colour.js';
import { percent, templateFigureSvg } from '../../../src/report/svg/template-figure.js';
import { makeCell, makeTemplate, testTemplate } from '../support/template.js';
import { wellFormedProblems } from '../support/xml.js';

function cellGroups(svg: string): string[] {
  return [...svg.matchAll(/<g class="cell" data-label="[^"]*">.*?<\/g>/g)].map((m) => m[0]);
}

function ellipseOf(group: string): { rx: number; ry: number; rotate: number; stroke: string } {
  const m = group.match(/<ellipse [^>]*rx="([^"]+)" ry="([^"]+)" transform="rotate\(([^ ]+) [^)]*\)"[^>]*stroke="([^"]+)"/);
  if (!m) throw new Error(`no ellipse in ${group}`);
  return { rx: Number(m[1]), ry: Number(m[2]), rotate: Number(m[3]), stroke: m[4] };
}

describe('templateFigureSvg', () => {
  const template = testTemplate({ cells: 30 });
  const svg = templateFigureSvg(template);

  it('is well-formed SVG with a title, a description and a legend', () => {
    expect(wellFormedProblems(svg)).toEqual([]);
    expect(svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg"')).toBe(true);
    expect(svg).toMatch(/<title>Template cells in the template frame, 95% covariance ellipses<\/title>/);
    expect(svg).toContain('class="legend-colour"');
    expect(svg).toContain('colour: largest principal sd (µm)');
    expect(svg).toContain('ellipse holding 95% of its positions (projected)');
  });

  it('draws three planes of a 3-D template with one hoverable ellipse per cell in each', () => {
    for (const plane of ['x–y plane', 'x–z plane', 'y–z plane']) expect(svg).toContain(plane);
    const groups = cellGroups(svg);
    expect(groups).toHaveLength(3 * template.cells.length);
    for (const cell of template.cells) {
      const mine = groups.filter((g) => g.includes(`data-label="${cell.label}"`));
      expect(mine).toHaveLength(3);
      expect(mine[0]).toContain(`<title>${cell.label}: n = ${cell.count}`);
    }
  });

  it('draws one plane for a 2-D template', () => {
    const t2 = testTemplate({ cells: 10, dim: 2 });
    const s2 = templateFigureSvg(t2);
    expect(s2).toContain('x–y plane');
    expect(s2).not.toContain('x–z plane');
    expect(cellGroups(s2)).toHaveLength(10);
  });

  it('sizes ellipses by the projected covariance at one scale shared by all planes', () => {
    // One cell with Sigma = diag(4, 1, 9): projected semi-axes r*(2, 1) in x-y, r*(3, 2) in x-z, r*(3, 1) in y-z.
    const t = makeTemplate(
      [
        makeCell('Wide', [0, 0, 0], [[4, 0, 0], [0, 1, 0], [0, 0, 9]], 8),
        makeCell('Far', [20, 5, 5], [[1, 0, 0], [0, 1, 0], [0, 0, 1]], 8),
      ],
      3,
    );
    const groups = cellGroups(templateFigureSvg(t)).filter((g) => g.includes('data-label="Wide"'));
    const [xy, xz, yz] = groups.map(ellipseOf);
    expect(xy.rx / xy.ry).toBeCloseTo(2, 1);
    expect(xz.rx / xz.ry).toBeCloseTo(1.5, 1);
    expect(yz.rx / yz.ry).toBeCloseTo(3, 1);
    expect(xy.rx / yz.rx).toBeCloseTo(2 / 3, 1);
    // Major axis along x in x-y (no rotation), along z (vertical) in x-z and y-z.
    expect(Math.abs(xy.rotate)).toBeCloseTo(0, 6);
    expect(Math.abs(xz.rotate)).toBeCloseTo(90, 6);
  });

  it('draws the ellipse radius r = sqrt(-2 ln(1 - p)) standard deviations for the stated probability', () => {
    // Two unit-covariance cells 100 um apart: semi-axis / distance between the mean dots = r / 100, whatever the scale.
    const t = makeTemplate([makeCell('P', [0, 0], [[1, 0], [0, 1]], 8), makeCell('Q', [100, 0], [[1, 0], [0, 1]], 8)], 2);
    for (const p of [0.5, 0.95, 0.99]) {
      const s = templateFigureSvg(t, { probability: p });
      const groups = cellGroups(s);
      const cx = groups.map((g) => Number(g.match(/<circle cx="([^"]+)"/)![1]));
      const e = ellipseOf(groups[0]);
      expect(e.rx).toBeCloseTo(e.ry, 6);
      expect((100 * e.rx) / Math.abs(cx[1] - cx[0])).toBeCloseTo(Math.sqrt(-2 * Math.log(1 - p)), 2);
      expect(s).toContain(`holding ${percent(p)} of its positions`);
    }
    expect(percent(0.999)).toBe('99.9%');
  });

  it('colours the least variable cell with the dark end of viridis and the most variable at t = 0.88', () => {
    const t = makeTemplate(
      [
        makeCell('Calm', [0, 0], [[0.25, 0], [0, 0.25]], 8),
        makeCell('Mid', [5, 0], [[1, 0], [0, 0.25]], 8),
        makeCell('Wild', [10, 0], [[4, 0], [0, 0.25]], 8),
      ],
      2,
    );
    const strokes = Object.fromEntries(
      cellGroups(templateFigureSvg(t)).map((g) => [g.match(/data-label="([^"]+)"/)![1], ellipseOf(g).stroke]),
    );
    expect(strokes.Calm).toBe(colourAt('viridis', 0));
    expect(strokes.Wild).toBe(colourAt('viridis', 0.88));
    expect(strokes.Mid).toBe(colourAt('viridis', 0.88 / 3));
  });

  it('marks sparse cells with a dashed outline', () => {
    const t = makeTemplate([makeCell('Rare', [0, 0], [[1, 0], [0, 1]], 2), makeCell('Common', [5, 0], [[1, 0], [0, 1]], 9)], 2);
    const groups = cellGroups(templateFigureSvg(t));
    expect(groups.find((g) => g.includes('"Rare"'))).toContain('stroke-dasharray');
    expect(groups.find((g) => g.includes('"Common"'))).not.toContain('stroke-dasharray');
  });

  it('escapes labels in titles and attributes', () => {
    const t = makeTemplate([makeCell('A<&"B', [0, 0], [[1, 0], [0, 1]], 8)], 2);
    const s = templateFigureSvg(t);
    expect(wellFormedProblems(s)).toEqual([]);
    expect(s).toContain('data-label="A&lt;&amp;&quot;B"');
    expect(s).toContain('<title>A&lt;&amp;&quot;B: n = 8');
  });

  it('gives the same string for the same input, and leaves the input unchanged', () => {
    const frozen = JSON.parse(JSON.stringify(template));
    const freeze = (o: unknown): unknown => {
      if (o && typeof o === 'object') {
        Object.values(o).forEach(freeze);
        Object.freeze(o);
      }
      return o;
    };
    freeze(frozen);
    expect(templateFigureSvg(frozen)).toBe(svg);
    expect(templateFigureSvg(template)).toBe(svg);
  });

  it('rejects an empty template and a probability outside (0, 1)', () => {
    expect(() => templateFigureSvg(makeTemplate([], 3))).toThrow(/the template has no cells/);
    expect(() => templateFigureSvg(template, { probability: 1 })).toThrow(UsageError);
  });
});
