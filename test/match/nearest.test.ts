import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { PointIndex } from '../../src/match/nearest.js';
import { FitError, UsageError } from '../../src/errors.js';
import { createRng } from '../../src/random.js';

/** Brute-force reference: all points sorted by squared distance, ties by index. */
function bruteForce(points: number[][], q: number[]): { index: number; distanceSquared: number }[] {
  return points
    .map((p, index) => ({ index, distanceSquared: p.reduce((s, v, j) => s + (v - q[j]) ** 2, 0) }))
    .sort((a, b) => a.distanceSquared - b.distanceSquared || a.index - b.index);
}

/** Points on a coarse integer grid so that duplicates and exact ties are common. */
const cloud = (dim: number) =>
  fc.array(fc.array(fc.integer({ min: -5, max: 5 }), { minLength: dim, maxLength: dim }), { minLength: 1, maxLength: 60 });
const query = (dim: number) => fc.array(fc.double({ min: -7, max: 7, noNaN: true }), { minLength: dim, maxLength: dim });

describe('PointIndex', () => {
  it('finds the nearest of a small hand-made 2-D set (worked example)', () => {
    const index = new PointIndex([
      [0, 0],
      [3, 4],
      [1, 1],
      [-2, 0],
    ]);
    // |(0.9, 1.2) - (1, 1)|^2 = 0.01 + 0.04 = 0.05
    const hit = index.nearest([0.9, 1.2]);
    expect(hit.index).toBe(2);
    expect(hit.distanceSquared).toBeCloseTo(0.05, 12);
    expect(index.kNearest([0, 0], 3).map((h) => h.index)).toEqual([0, 2, 3]);
    // |(3,4)| = 5 exactly: the radius is inclusive.
    expect(index.withinRadius([0, 0], 5)).toEqual([0, 1, 2, 3]);
    expect(index.withinRadius([0, 0], 4.999)).toEqual([0, 2, 3]);
  });

  for (const dim of [1, 2, 3]) {
    it(`nearest and kNearest equal a brute-force scan with ties to the lower index (${dim}-D)`, () => {
      fc.assert(
        fc.property(cloud(dim), query(dim), fc.integer({ min: 0, max: 70 }), (points, q, k) => {
          const index = new PointIndex(points);
          const expected = bruteForce(points, q);
          expect(index.nearest(q)).toEqual(expected[0]);
          expect(index.kNearest(q, k)).toEqual(expected.slice(0, k));
        }),
        { seed: 4101 + dim, numRuns: 150 },
      );
    });

    it(`withinRadius returns exactly the points within r, ascending by index (${dim}-D)`, () => {
      fc.assert(
        fc.property(cloud(dim), query(dim), fc.double({ min: 0, max: 6, noNaN: true }), (points, q, r) => {
          const index = new PointIndex(points);
          const expected = bruteForce(points, q)
            .filter((h) => h.distanceSquared <= r * r)
            .map((h) => h.index)
            .sort((a, b) => a - b);
          expect(index.withinRadius(q, r)).toEqual(expected);
        }),
        { seed: 4201 + dim, numRuns: 150 },
      );
    });
  }

  it('agrees with brute force on 2,000 random 3-D points (deep tree)', () => {
    const rng = createRng(7);
    const points = Array.from({ length: 2000 }, () => [rng() * 100, rng() * 100, rng() * 20]);
    const index = new PointIndex(points);
    for (let t = 0; t < 50; t++) {
      const q = [rng() * 110 - 5, rng() * 110 - 5, rng() * 30 - 5];
      const expected = bruteForce(points, q);
      expect(index.kNearest(q, 7)).toEqual(expected.slice(0, 7));
      const r = 3 + rng() * 5;
      expect(index.withinRadius(q, r)).toEqual(
        expected.filter((h) => h.distanceSquared <= r * r).map((h) => h.index).sort((a, b) => a - b),
      );
    }
  });

  it('handles many coincident points', () => {
    const points = Array.from({ length: 40 }, () => [1, 2, 3]);
    const index = new PointIndex(points);
    expect(index.nearest([0, 0, 0])).toEqual({ index: 0, distanceSquared: 14 });
    expect(index.kNearest([1, 2, 3], 3).map((h) => h.index)).toEqual([0, 1, 2]);
    expect(index.withinRadius([1, 2, 3], 0)).toHaveLength(40);
  });

  it('does not change when the input array is mutated afterwards, and never mutates it', () => {
    const points = [
      [0, 0],
      [10, 0],
    ];
    const frozen = Object.freeze(points.map((p) => Object.freeze(p.slice())));
    const index = new PointIndex(frozen);
    points[0][0] = 100;
    expect(index.nearest([1, 0]).index).toBe(0);
  });

  it('rejects ragged rows, non-finite coordinates and bad queries with messages naming the problem', () => {
    expect(() => new PointIndex([[0, 0], [1]])).toThrow(new UsageError('PointIndex: row 1 has 1 coordinates, expected 2'));
    expect(() => new PointIndex([[0, NaN]])).toThrow(new UsageError('PointIndex: row 0 coordinate 1 is not finite (NaN)'));
    const index = new PointIndex([[0, 0]]);
    expect(() => index.nearest([0, 0, 0])).toThrow(new UsageError('PointIndex.nearest: query has 3 coordinates, the index has 2'));
    expect(() => index.kNearest([0, 0], -1)).toThrow(UsageError);
    expect(() => index.kNearest([0, 0], 1.5)).toThrow(UsageError);
    expect(() => index.withinRadius([0, 0], -1)).toThrow(UsageError);
    expect(() => index.withinRadius([0, Infinity], 1)).toThrow(UsageError);
  });

  it('an empty index answers kNearest and withinRadius with nothing, and nearest with a FitError', () => {
    const index = new PointIndex([]);
    expect(index.size).toBe(0);
    expect(index.kNearest([0, 0], 3)).toEqual([]);
    expect(index.withinRadius([0, 0], 1)).toEqual([]);
    expect(() => index.nearest([0, 0])).toThrow(new FitError('PointIndex.nearest: the index holds no points'));
  });
});
