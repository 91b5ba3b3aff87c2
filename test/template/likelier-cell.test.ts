import { describe, it, expect } from 'vitest';
import { gaussianLogDensity } from '../../src/geometry/index.js';
import { likelierCell, likelierCellFinder } from '../../src/template/likelier-cell.js';
import type { TemplateCell } from '../../src/types.js';

function cell(label: string, mean: number[], variance: number, count = 9): TemplateCell {
  return { label, mean, covariance: [[variance, 0], [0, variance]], count, sum: [0, 0], sumOfSquares: [[0, 0], [0, 0]], sparse: false };
}

describe('likelierCell', () => {
  const cells = [cell('A', [0, 0], 1), cell('B', [10, 0], 1), cell('C', [0, 30], 4)];
  it('names the cell under which the point is more probable, with its predictive Mahalanobis distance', () => {
    const r = likelierCell([9, 0], 'A', cells);
    expect(r.likelierLabel).toBe('B');
    // (1 + 1/9) * 1 = 10/9 predictive variance; distance 1 / sqrt(10/9).
    expect(r.likelierDistance!).toBeCloseTo(1 / Math.sqrt(10 / 9), 12);
  });
  it('returns nulls when the labelled cell is the likeliest', () => {
    expect(likelierCell([1, 0.5], 'A', cells)).toEqual({ likelierLabel: null, likelierDistance: null });
  });
});


describe('likelierCellFinder (one set of cells, many points)', () => {
  const cells = [cell('A', [0, 0], 1), cell('B', [10, 0], 1), cell('C', [0, 30], 4, 3), cell('D', [6, 6], 2, 1)];
  const points: [number[], string][] = [[[9, 0], 'A'], [[1, 0.5], 'A'], [[0, 25], 'B'], [[5, 5], 'C'], [[0, 1], 'D'], [[2, 0], 'E']];

  it('gives, point after point, the answers of likelierCell called afresh', () => {
    const find = likelierCellFinder(cells);
    for (const [y, label] of points) expect(find(y, label)).toEqual(likelierCell(y, label, cells));
  });

  it('picks the other cell of largest log N(y; m_k, (1 + 1/n_k) Sigma_k) when it beats the own cell (densities by gaussianLogDensity)', () => {
    const find = likelierCellFinder(cells);
    for (const [y, label] of points) {
      const logs = cells.map((c) => gaussianLogDensity(y, c.mean, c.covariance.map((row) => row.map((v) => v * (1 + 1 / c.count)))));
      let best = -1;
      cells.forEach((c, k) => {
        if (c.label !== label && (best < 0 || logs[k] > logs[best])) best = k;
      });
      const own = cells.findIndex((c) => c.label === label);
      const r = find(y, label);
      if (own >= 0 && !(logs[best] > logs[own])) expect(r).toEqual({ likelierLabel: null, likelierDistance: null });
      else {
        expect(r.likelierLabel).toBe(cells[best].label);
        // Isotropic predictive variance v (1 + 1/n): distance |y - m| / sqrt(v (1 + 1/n)) (hand derivation).
        const c = cells[best];
        const dist = Math.hypot(y[0] - c.mean[0], y[1] - c.mean[1]) / Math.sqrt(c.covariance[0][0] * (1 + 1 / c.count));
        expect(r.likelierDistance!).toBeCloseTo(dist, 12);
      }
    }
  });
});
