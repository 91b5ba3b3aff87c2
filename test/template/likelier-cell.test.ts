import { describe, it, expect } from 'vitest';
import { likelierCell } from '../../src/template/likelier-cell.js';
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

