import { describe, expect, it } from 'vitest';
import { layoutProjections, projectionPlanes, toPanel } from '../../../src/report/svg/projection.js';

describe('layoutProjections', () => {
  // An elongated box: 100 um along x, 20 um along y and z (padding 4% each side).
  const box = { min: [-50, -10, -10], max: [50, 10, 10] };

  it('uses one scale for every panel, the largest that fits the widest and tallest panel', () => {
    const layout = layoutProjections(3, box, { top: 0, plotWidth: 520, maxPanelHeight: 300 });
    const scales = layout.panels.map((p) => p.scale);
    expect(new Set(scales).size).toBe(1);
    expect(scales[0]).toBeCloseTo(520 / 108, 10);
    expect(layout.panels[0].width).toBeCloseTo(520, 8);
    expect(layout.panels[2].width).toBeCloseTo(21.6 * (520 / 108), 8);
  });

  it('stacks the panels when only one fits per row, and puts y-z beside x-z when there is room', () => {
    const narrow = layoutProjections(3, box, { top: 10, plotWidth: 520, maxPanelHeight: 300 });
    expect(new Set(narrow.panels.map((p) => p.left)).size).toBe(1);
    expect(narrow.panels[1].top).toBeGreaterThan(narrow.panels[0].top + narrow.panels[0].height);
    const wide = layoutProjections(3, box, { top: 10, plotWidth: 520, maxPanelHeight: 300, maxWidth: 900 });
    const [, xz, yz] = wide.panels;
    expect(yz.top).toBe(xz.top);
    expect(yz.left).toBeGreaterThan(xz.left + xz.width);
    expect(wide.height).toBeLessThan(narrow.height);
  });

  it('maps data to pixels with u to the right and v upwards', () => {
    const [xy] = layoutProjections(3, box, { top: 0, plotWidth: 540, maxPanelHeight: 300 }).panels;
    const [x0, y0] = toPanel(xy, xy.uMin, xy.vMin);
    const [x1, y1] = toPanel(xy, xy.uMax, xy.vMax);
    expect(x0).toBeCloseTo(xy.left, 10);
    expect(y0).toBeCloseTo(xy.top + xy.height, 10);
    expect(x1).toBeCloseTo(xy.left + xy.width, 10);
    expect(y1).toBeCloseTo(xy.top, 10);
  });

  it('draws x-y, x-z and y-z for 3-D and x-y for 2-D', () => {
    expect(projectionPlanes(3)).toEqual([[0, 1], [0, 2], [1, 2]]);
    expect(projectionPlanes(2)).toEqual([[0, 1]]);
  });
});
