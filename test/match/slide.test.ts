import { describe, expect, it } from 'vitest';
import { bestSlide } from '../../src/match/slide.js';
import type { Transform } from '../../src/types.js';

const pose = (translation: number[]): Transform => ({
  kind: 'rigid',
  linear: translation.map((_, r) => translation.map((_, c) => (r === c ? 1 : 0))),
  translation,
});

describe('bestSlide', () => {
  const u = [0.6, 0.8, 0];
  // A score peaked where the translation's component along u is 7 (template units).
  const peakedAt7 = (t: Transform): number => -((t.translation[0] * u[0] + t.translation[1] * u[1] - 7) ** 2);

  it('moves the pose to the multiple of the step nearest the score peak, along the axis only', () => {
    const start = pose([0, 0, 5]);
    const s = bestSlide(start, u, 2, 5, peakedAt7);
    // Shifts -10..10 in steps of 2: 6 (score -1) and 8 (score -1) tie; the first tried, 6, is kept.
    expect(s.shift).toBe(6);
    expect(s.score).toBeCloseTo(-1, 12);
    expect(s.transform.translation[0]).toBeCloseTo(3.6, 12);
    expect(s.transform.translation[1]).toBeCloseTo(4.8, 12);
    expect(s.transform.translation[2]).toBe(5);
    expect(s.transform.linear).toBe(start.linear);
    expect(start.translation).toEqual([0, 0, 5]);
  });

  it('keeps the pose itself when no shift scores strictly higher, and when it may not move', () => {
    const start = pose([4.2, 5.6, 0]); // component along u: 7, the peak
    const s = bestSlide(start, u, 2, 5, peakedAt7);
    expect(s.shift).toBe(0);
    expect(s.transform).toBe(start);
    const flat = bestSlide(start, u, 2, 5, () => 1);
    expect(flat.transform).toBe(start);
    expect(bestSlide(pose([0, 0, 0]), u, 2, 0, peakedAt7).shift).toBe(0);
  });

  it('stays within the reach: the peak beyond it gives the farthest shift on its side', () => {
    expect(bestSlide(pose([0, 0, 0]), u, 1, 3, peakedAt7).shift).toBe(3);
    expect(bestSlide(pose([-20 * u[0], -20 * u[1], 0]), u, 1, 3, peakedAt7).shift).toBe(3);
    expect(bestSlide(pose([20 * u[0], 20 * u[1], 0]), u, 1, 3, peakedAt7).shift).toBe(-3);
  });

  it('rejects an axis of the wrong length, a step <= 0 and a fractional number of steps', () => {
    expect(() => bestSlide(pose([0, 0, 0]), [1, 0], 1, 2, peakedAt7)).toThrow('bestSlide: axis has 2 coordinates, the pose 3');
    expect(() => bestSlide(pose([0, 0, 0]), u, 0, 2, peakedAt7)).toThrow('bestSlide: step must be a finite number > 0, got 0');
    expect(() => bestSlide(pose([0, 0, 0]), u, 1, 1.5, peakedAt7)).toThrow('bestSlide: steps must be a whole number >= 0, got 1.5');
  });
});
