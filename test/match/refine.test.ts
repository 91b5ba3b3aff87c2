import { describe, expect, it } from 'vitest';
import { compassSearch } from '../../src/match/refine.js';
import type { Transform } from '../../src/types.js';

describe('compassSearch', () => {
  it('finds the translation and scale that maximise a smooth objective (2-D)', () => {
    // Objective peaks when the map sends (1, 0) to (3, 2) and (0, 1) to (2, 3.2): scale 1.2, no rotation, t = (2, 2).
    const f = (t: Transform): number => {
      const a = [t.linear[0][0] * 1 + t.translation[0], t.linear[1][0] * 1 + t.translation[1]];
      const b = [t.linear[0][1] + t.translation[0], t.linear[1][1] + t.translation[1]];
      const c = [t.translation[0], t.translation[1]];
      return -((a[0] - 3.2) ** 2 + (a[1] - 2) ** 2 + (b[0] - 2) ** 2 + (b[1] - 3.2) ** 2 + (c[0] - 2) ** 2 + (c[1] - 2) ** 2);
    };
    const start: Transform = { kind: 'similarity', linear: [[1, 0], [0, 1]], translation: [0, 0] };
    const r = compassSearch(f, start, [0, 0], { rotation: 0.2, scale: 0.1, translation: 1 }, 'similarity', 5000, 1 / 4096);
    expect(r.transform.translation[0]).toBeCloseTo(2, 2);
    expect(r.transform.translation[1]).toBeCloseTo(2, 2);
    expect(r.transform.linear[0][0]).toBeCloseTo(1.2, 2);
    expect(r.transform.linear[0][1]).toBeCloseTo(0, 2);
    expect(r.value).toBeGreaterThan(-1e-4);
  });

  it('never returns a worse value than the start', () => {
    const f = (t: Transform): number => -Math.abs(t.translation[0] - 0.3);
    const start: Transform = { kind: 'similarity', linear: [[1, 0], [0, 1]], translation: [0.3, 0] };
    const r = compassSearch(f, start, [0, 0], { rotation: 0.1, scale: 0.1, translation: 1 }, 'similarity', 50);
    expect(r.value).toBeCloseTo(0, 12);
  });
});
