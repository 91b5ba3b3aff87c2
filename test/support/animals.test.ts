import { describe, it, expect } from 'vitest';
import { Matrix, solve } from 'ml-matrix';
import { createRng } from '../../src/random.js';
import {
  BAND_NAMES,
  generateAnimal,
  generateLayout,
  median,
  nearestIndices,
  nearestNeighbourDistances,
  writeSampleCsv,
  type Layout,
} from './animals.js';

/** Standard deviations along the principal axes (population covariance eigenvalues, descending). */
function principalSpreads(points: number[][]): number[] {
  const d = points[0].length;
  const n = points.length;
  const mean = new Array<number>(d).fill(0);
  for (const p of points) for (let k = 0; k < d; k++) mean[k] += p[k] / n;
  const c = Array.from({ length: d }, () => new Array<number>(d).fill(0));
  for (const p of points)
    for (let i = 0; i < d; i++) for (let j = 0; j < d; j++) c[i][j] += ((p[i] - mean[i]) * (p[j] - mean[j])) / n;
  return symmetricEigenvalues(c).map(Math.sqrt);
}

/** Eigenvalues of a small symmetric matrix by cyclic Jacobi rotations, descending. */
function symmetricEigenvalues(m: number[][]): number[] {
  const a = m.map((r) => r.slice());
  const d = a.length;
  for (let sweep = 0; sweep < 50; sweep++)
    for (let p = 0; p < d; p++)
      for (let q = p + 1; q < d; q++) {
        if (Math.abs(a[p][q]) < 1e-15) continue;
        const theta = (a[q][q] - a[p][p]) / (2 * a[p][q]);
        const t = Math.sign(theta || 1) / (Math.abs(theta) + Math.sqrt(theta * theta + 1));
        const c = 1 / Math.sqrt(t * t + 1);
        const s = t * c;
        for (let k = 0; k < d; k++) {
          const akp = a[k][p], akq = a[k][q];
          a[k][p] = c * akp - s * akq;
          a[k][q] = s * akp + c * akq;
        }
        for (let k = 0; k < d; k++) {
          const apk = a[p][k], aqk = a[q][k];
          a[p][k] = c * apk - s * aqk;
          a[q][k] = s * apk + c * aqk;
        }
      }
  return a.map((r, i) => r[i]).sort((x, y) => y - x);
}

function deepFreeze<T>(value: T): T {
  if (value && typeof value === 'object') {
    for (const v of Object.values(value)) deepFreeze(v);
    Object.freeze(value);
  }
  return value;
}

const layout3 = generateLayout(createRng(11));
const layout2 = generateLayout(createRng(12), { dim: 2 });

describe('generateLayout', () => {
  it('gives identical layouts for the same seed and different ones for another seed', () => {
    expect(generateLayout(createRng(11))).toEqual(layout3);
    expect(generateLayout(createRng(13)).positions).not.toEqual(layout3.positions);
  });

  it('places 190 uniquely named cells in 3-D by default', () => {
    expect(layout3.dim).toBe(3);
    expect(layout3.positions).toHaveLength(190);
    expect(layout3.positions.every((p) => p.length === 3)).toBe(true);
    expect(new Set(layout3.labels).size).toBe(190);
  });

  it.each([
    [3, 2],
    [3, 3.5],
    [2, 2],
    [2, 1.2],
  ] as const)('packs cells so the median nearest-neighbour distance in %i-D is within 10%% of %f um', (dim, spacing) => {
    const layout = generateLayout(createRng(100 + dim), { dim, nearestSpacing: spacing, cells: 150 });
    const m = median(nearestNeighbourDistances(layout.positions));
    expect(Math.abs(m - spacing) / spacing).toBeLessThan(0.1);
  });

  it('shapes an elongated head: long spread 3-4x the two nearly equal short spreads, centred at the origin', () => {
    for (const seed of [1, 2, 3]) {
      const layout = generateLayout(createRng(seed));
      const [long, mid, short] = principalSpreads(layout.positions);
      expect(long / mid).toBeGreaterThan(2.7);
      expect(long / mid).toBeLessThan(4.4);
      expect(short / mid).toBeGreaterThan(0.8);
      const centre = [0, 1, 2].map((k) => layout.positions.reduce((s, p) => s + p[k], 0) / 190);
      for (const c of centre) expect(c).toBeCloseTo(0, 9);
    }
  });

  it('gives each cell an anisotropic jitter with standard deviations in [1, 3] um along randomly oriented axes', () => {
    const sds = layout3.jitter.map((c) => symmetricEigenvalues(c).map(Math.sqrt));
    for (const s of sds) {
      expect(s[0]).toBeLessThanOrEqual(3 + 1e-9);
      expect(s[s.length - 1]).toBeGreaterThanOrEqual(1 - 1e-9);
    }
    // Anisotropic and varying: most cells have max/min sd above 1.2, and the sds differ across cells.
    expect(sds.filter((s) => s[0] / s[2] > 1.2).length).toBeGreaterThan(150);
    expect(new Set(sds.map((s) => s[0].toFixed(6))).size).toBe(190);
    // Randomly oriented: off-diagonal covariance entries are not all near zero.
    expect(layout3.jitter.filter((c) => Math.abs(c[0][1]) > 0.1).length).toBeGreaterThan(100);
    for (const c of layout3.jitter) expect(c[0][1]).toBe(c[1][0]);
  });

  it('names cells <band>-<side><index> with invented band names, bands ordered along the long axis', () => {
    const pattern = new RegExp(`^(${BAND_NAMES.join('|')})-[LRM][1-9][0-9]*$`);
    for (const label of layout3.labels) expect(label).toMatch(pattern);
    const meanX = (band: string): number => {
      const xs = layout3.positions.filter((_, i) => layout3.labels[i].startsWith(`${band}-`)).map((p) => p[0]);
      return xs.reduce((s, v) => s + v, 0) / xs.length;
    };
    const used = BAND_NAMES.filter((b) => layout3.labels.some((l) => l.startsWith(`${b}-`)));
    expect(used).toHaveLength(6);
    for (let i = 1; i < used.length; i++) expect(meanX(used[i])).toBeGreaterThan(meanX(used[i - 1]));
    expect(generateLayout(createRng(11), { namePrefix: 'q' }).labels[0]).toBe(`q${layout3.labels[0]}`);
  });

  it('packs cells into ganglia with gaps when asked: same spacing, far more uneven density than the uniform head', () => {
    // Unevenness: coefficient of variation of each cell's count of neighbours within 6 um.
    const cv = (positions: number[][]) => {
      const counts = positions.map((p) => positions.filter((q) => q !== p && Math.hypot(p[0] - q[0], p[1] - q[1], p[2] - q[2]) < 6).length);
      const m = counts.reduce((s, c) => s + c, 0) / counts.length;
      return Math.sqrt(counts.reduce((s, c) => s + (c - m) ** 2, 0) / counts.length) / m;
    };
    const uniform = generateLayout(createRng(7));
    const ganglia = generateLayout(createRng(7), { arrangement: 'ganglia' });
    expect(ganglia.positions).toHaveLength(190);
    expect(median(nearestNeighbourDistances(ganglia.positions))).toBeCloseTo(2, 9);
    expect(cv(ganglia.positions)).toBeGreaterThan(cv(uniform.positions));
  });

  it('rejects a layout of fewer than 2 cells and an empty jitter range', () => {
    expect(() => generateLayout(createRng(1), { cells: 1 })).toThrow(/cells must be an integer >= 2, got 1/);
    expect(() => generateLayout(createRng(1), { jitterRange: [2, 1] })).toThrow(
      'generateLayout: jitterRange must satisfy 0 < low <= high, got [2, 1]',
    );
  });
});

describe('generateAnimal', () => {
  const options = { labelledFraction: 0.6, wrongLabelFraction: 0.1 };

  it('gives identical animals for the same seed', () => {
    const a = generateAnimal(layout3, createRng(5), 'a', options);
    const b = generateAnimal(layout3, createRng(5), 'a', options);
    expect(b.sample).toEqual(a.sample);
    expect(b.truth).toEqual(a.truth);
    expect(writeSampleCsv(b.sample)).toBe(writeSampleCsv(a.sample));
    expect(generateAnimal(layout3, createRng(6), 'a', options).sample.coords).not.toEqual(a.sample.coords);
  });

  it('does not modify the layout', () => {
    const frozen = deepFreeze(structuredClone(layout3));
    expect(() => generateAnimal(frozen, createRng(5), 'a', options)).not.toThrow();
    expect(frozen).toEqual(layout3);
  });

  it('drops the asked fraction of cells and adds outliers as the asked fraction of all points', () => {
    for (const [missing, outliers] of [
      [0.15, 0.2],
      [0.05, 0.4],
      [0.3, 0.05],
      [0, 0],
    ]) {
      const animal = generateAnimal(layout3, createRng(7), 'a', { missingFraction: missing, outlierFraction: outliers });
      const trueCells = animal.truth.filter((t) => t !== null);
      animal.truthIndex.forEach((c, i) => expect(c === null ? null : layout3.labels[c]).toBe(animal.truth[i]));
      expect(new Set(trueCells).size).toBe(trueCells.length);
      expect(animal.missingCells).toHaveLength(Math.round(missing * 190));
      expect(trueCells.length).toBe(190 - Math.round(missing * 190));
      const observed = animal.truth.filter((t) => t === null).length / animal.truth.length;
      expect(Math.abs(observed - outliers)).toBeLessThan(0.01);
    }
  });

  it('cuts off the asked fraction of the remaining cells on one side of a plane', () => {
    const plain = generateAnimal(layout3, createRng(9), 'a', { missingFraction: 0.1 });
    const cropped = generateAnimal(layout3, createRng(9), 'a', { missingFraction: 0.1, cropFraction: 0.25 });
    expect(plain.cropDirection).toBeNull();
    const kept = cropped.truthIndex.filter((c): c is number => c !== null);
    // The random misses come first and are the same; then 43 (round(0.25 x 171)) of the 171 left are cut.
    const cut = cropped.missingCells.filter((c) => !plain.missingCells.includes(c));
    expect(plain.missingCells.every((c) => cropped.missingCells.includes(c))).toBe(true);
    expect(cut).toHaveLength(43);
    expect(kept).toHaveLength(171 - 43);
    // Every cut cell lies beyond every kept one along the plane's normal.
    const normal = cropped.cropDirection as number[];
    expect(Math.hypot(...normal)).toBeCloseTo(1, 12);
    const along = (c: number): number => layout3.positions[c].reduce((s, v, k) => s + v * normal[k], 0);
    expect(Math.min(...cut.map(along))).toBeGreaterThanOrEqual(Math.max(...kept.map(along)));
    // A zero fraction changes nothing.
    expect(generateAnimal(layout3, createRng(9), 'a', { missingFraction: 0.1, cropFraction: 0 }).sample).toEqual(plain.sample);
    expect(() => generateAnimal(layout3, createRng(1), 'a', { cropFraction: 1.5 })).toThrow('generateAnimal: cropFraction must be in [0, 1], got 1.5');
  });

  it('puts the clustered share of outliers in one dense group beside the head', () => {
    const animal = generateAnimal(layout3, createRng(8), 'a', { outlierFraction: 0.3, clusteredOutlierShare: 0.5 });
    const outliers = animal.sample.coords.filter((_, i) => animal.truth[i] === null).map((p) => animal.toLayoutFrame(p));
    // Dense: an outlier with at least 5 other outliers within 4 um; about half the outliers qualify.
    const dense = outliers.filter(
      (p) => outliers.filter((q) => Math.hypot(...p.map((v, k) => v - q[k])) < 4).length >= 6,
    );
    expect(dense.length / outliers.length).toBeGreaterThan(0.4);
    expect(dense.length / outliers.length).toBeLessThan(0.7);
    // Beside the head: the group's centre is outside the cells' short-axis extent but within 15 um of it.
    const centre = [0, 1, 2].map((k) => dense.reduce((s, p) => s + p[k], 0) / dense.length);
    const radial = Math.hypot(centre[1], centre[2]);
    const headRadius = Math.max(...layout3.positions.map((p) => Math.hypot(p[1], p[2])));
    expect(radial).toBeGreaterThan(0.8 * headRadius);
    expect(radial).toBeLessThan(headRadius + 15);
  });

  it('keeps the asked fraction of true points labelled, and no outlier labelled', () => {
    for (const f of [0, 0.4, 0.8, 1]) {
      const animal = generateAnimal(layout3, createRng(9), 'a', { labelledFraction: f });
      const trueIdx = animal.truth.map((t, i) => (t === null ? -1 : i)).filter((i) => i >= 0);
      const labelled = trueIdx.filter((i) => animal.sample.labels[i] !== null);
      expect(Math.abs(labelled.length / trueIdx.length - f)).toBeLessThan(0.01);
      expect(animal.sample.labels.filter((l, i) => l !== null && animal.truth[i] === null)).toHaveLength(0);
      for (const i of labelled) expect(animal.sample.labels[i]).toBe(animal.truth[i]);
    }
  });

  it('swaps the asked fraction of hand labels, each with one of the 3 nearest cells, keeping labels unique', () => {
    const animal = generateAnimal(layout3, createRng(10), 'a', { labelledFraction: 0.7, wrongLabelFraction: 0.1 });
    const index = new Map(layout3.labels.map((l, i) => [l, i]));
    const labelled = animal.sample.labels.filter((l) => l !== null);
    expect(new Set(labelled).size).toBe(labelled.length);
    const wrong = animal.sample.labels
      .map((l, i) => ({ l, t: animal.truth[i], i }))
      .filter((e) => e.l !== null && e.l !== e.t);
    expect(wrong.map((e) => e.i)).toEqual(animal.wrongLabelPoints);
    const target = Math.round(0.1 * labelled.length);
    expect(wrong.length).toBeGreaterThanOrEqual(target);
    expect(wrong.length).toBeLessThanOrEqual(target + 1);
    for (const e of wrong) {
      const near = nearestIndices(layout3.positions, index.get(e.t as string) as number, 3);
      expect(near).toContain(index.get(e.l as string));
    }
  });

  it('maps every true cell point back to its layout position within the jitter (RMS within 1.5x of expected)', () => {
    for (const [layout, seed] of [
      [layout3, 21],
      [layout2, 22],
    ] as [Layout, number][]) {
      const animal = generateAnimal(layout, createRng(seed), 'a');
      const index = new Map(layout.labels.map((l, i) => [l, i]));
      let sq = 0, expected = 0, count = 0;
      animal.sample.coords.forEach((p, i) => {
        const t = animal.truth[i];
        if (t === null) return;
        const cell = index.get(t) as number;
        const back = animal.toLayoutFrame(p);
        sq += back.reduce((s, v, k) => s + (v - layout.positions[cell][k]) ** 2, 0);
        expected += layout.jitter[cell].reduce((s, row, k) => s + row[k], 0);
        count++;
      });
      const ratio = Math.sqrt(sq / count) / Math.sqrt(expected / count);
      expect(ratio).toBeGreaterThan(1 / 1.5);
      expect(ratio).toBeLessThan(1.5);
    }
  });

  it('makes toLayoutFrame the exact inverse of the deformation (to 9 digits)', () => {
    const animal = generateAnimal(layout3, createRng(23), 'a', { bend: 5 });
    for (const p of layout3.positions.slice(0, 20)) {
      const back = animal.toLayoutFrame(animal.fromLayoutFrame(p));
      back.forEach((v, k) => expect(v).toBeCloseTo(p[k], 9));
    }
  });

  it('applies a scale within the range, a proper rotation and a bend of at most the asked amplitude', () => {
    const animal = generateAnimal(layout3, createRng(24), 'a', { scaleRange: 0.1, bend: 3 });
    expect(Math.abs(animal.scale - 1)).toBeLessThanOrEqual(0.1);
    const r = animal.rotation;
    for (let i = 0; i < 3; i++)
      for (let j = 0; j < 3; j++)
        expect(r[i][0] * r[j][0] + r[i][1] * r[j][1] + r[i][2] * r[j][2]).toBeCloseTo(i === j ? 1 : 0, 12);
    const det =
      r[0][0] * (r[1][1] * r[2][2] - r[1][2] * r[2][1]) -
      r[0][1] * (r[1][0] * r[2][2] - r[1][2] * r[2][0]) +
      r[0][2] * (r[1][0] * r[2][1] - r[1][1] * r[2][0]);
    expect(det).toBeCloseTo(1, 12);
    expect(Math.abs(animal.bendAmplitude)).toBeLessThanOrEqual(3);
    // Without rotation, scale and translation, the bend shifts the far end of the head by A along u.
    const plain = generateAnimal(layout3, createRng(25), 'a', { rotate: false, scaleRange: 0, translate: 0, bend: 3 });
    const xMax = Math.max(...layout3.positions.map((p) => Math.abs(p[0])));
    const end = plain.fromLayoutFrame([xMax, 0, 0]);
    expect(end[0]).toBeCloseTo(xMax, 12);
    expect(end[1]).toBeCloseTo(plain.bendAmplitude * plain.bendDirection[1], 12);
    expect(end[2]).toBeCloseTo(plain.bendAmplitude * plain.bendDirection[2], 12);
    expect(plain.fromLayoutFrame([0, 0, 0])).toEqual([0, 0, 0]);
  });

  it('stretches the last (depth) axis by a factor within the asked range, invertibly; without the option the animal is unchanged', () => {
    const plain = generateAnimal(layout3, createRng(26), 'a');
    expect(plain.axialScale).toBe(1);
    expect(generateAnimal(layout3, createRng(26), 'a', { axialScaleRange: 0 }).sample).toEqual(plain.sample);
    // No rotation, scale, bend or translation: the map is diag(1, 1, s) exactly.
    const flat = generateAnimal(layout3, createRng(27), 'a', { rotate: false, scaleRange: 0, translate: 0, bend: 0, axialScaleRange: 0.2 });
    expect(Math.abs(flat.axialScale - 1)).toBeLessThanOrEqual(0.2);
    expect(flat.axialScale).not.toBe(1);
    expect(flat.fromLayoutFrame([3, -2, 5])).toEqual([3, -2, 5 * flat.axialScale]);
    // With everything else on, toLayoutFrame still inverts the deformation.
    const full = generateAnimal(layout3, createRng(28), 'a', { bend: 4, axialScaleRange: 0.2 });
    for (const p of layout3.positions.slice(0, 20)) full.toLayoutFrame(full.fromLayoutFrame(p)).forEach((v, k) => expect(v).toBeCloseTo(p[k], 9));
    // In 2-D the second axis is the one stretched.
    const flat2 = generateAnimal(layout2, createRng(29), 'a', { rotate: false, scaleRange: 0, translate: 0, bend: 0, axialScaleRange: 0.2 });
    expect(flat2.fromLayoutFrame([3, -2])).toEqual([3, -2 * flat2.axialScale]);
    expect(() => generateAnimal(layout3, createRng(1), 'a', { axialScaleRange: 1 })).toThrow('generateAnimal: axialScaleRange must be in [0, 1), got 1');
  });

  it('warps smoothly and purely non-affinely when asked; without the option the animal is unchanged', () => {
    const plain = generateAnimal(layout3, createRng(30), 'a');
    expect(generateAnimal(layout3, createRng(30), 'a', { warp: 0 }).sample).toEqual(plain.sample);
    // Nothing else moves the cells: the points minus the layout's positions are the warp itself.
    const still = { rotate: false, scaleRange: 0, translate: 0, bend: 0, jitterScale: 0, missingFraction: 0, outlierFraction: 0, shuffle: false } as const;
    const animal = generateAnimal(layout3, createRng(31), 'a', { ...still, warp: 2 });
    const shift = animal.sample.coords.map((p, i) => p.map((v, k) => v - layout3.positions[i][k]));
    const rms = Math.sqrt(shift.reduce((a, s) => a + s.reduce((b, v) => b + v * v, 0), 0) / shift.length);
    expect(rms).toBeGreaterThan(0.2);
    // Least-squares affine fit of the shifts on the positions (ml-matrix, outside this module): nothing left to fit.
    const X = new Matrix(layout3.positions.map((p) => [...p, 1]));
    const coefficients = solve(X, new Matrix(shift));
    for (const row of coefficients.to2DArray()) for (const v of row) expect(Math.abs(v)).toBeLessThan(1e-8);
    // Neighbouring cells move together: the shifts of nearest neighbours differ far less than those of cells half the list apart.
    let near = 0, far = 0;
    const m = layout3.positions.length;
    layout3.positions.forEach((p, i) => {
      let best = -1, bestD = Infinity;
      layout3.positions.forEach((q, j) => {
        const dd = (p[0] - q[0]) ** 2 + (p[1] - q[1]) ** 2 + (p[2] - q[2]) ** 2;
        if (j !== i && dd < bestD) [best, bestD] = [j, dd];
      });
      const other = (i + Math.floor(m / 2)) % m;
      near += shift[i].reduce((a, v, k) => a + (v - shift[best][k]) ** 2, 0);
      far += shift[i].reduce((a, v, k) => a + (v - shift[other][k]) ** 2, 0);
    });
    expect(near / far).toBeLessThan(0.1);
    expect(() => generateAnimal(layout3, createRng(1), 'a', { warp: -1 })).toThrow('generateAnimal: warp must be a finite number >= 0, got -1');
  });

  it('numbers rows 2..n+1 and, without shuffling, lists the true cells before the outliers', () => {
    const animal = generateAnimal(layout3, createRng(26), 'a7', { shuffle: false });
    const n = animal.sample.coords.length;
    expect(animal.sample.rows).toEqual(Array.from({ length: n }, (_, i) => i + 2));
    expect(animal.sample.id).toBe('a7');
    const firstOutlier = animal.truth.indexOf(null);
    expect(animal.truth.slice(firstOutlier).every((t) => t === null)).toBe(true);
    expect(animal.truth.slice(0, firstOutlier).every((t) => t !== null)).toBe(true);
  });

  it('works in 2-D', () => {
    const animal = generateAnimal(layout2, createRng(27), 'b', { labelledFraction: 0.5, wrongLabelFraction: 0.1 });
    expect(animal.sample.dim).toBe(2);
    expect(animal.sample.coords.every((p) => p.length === 2)).toBe(true);
    expect(animal.rotation).toHaveLength(2);
    expect(animal.sample.labels.filter((l) => l !== null).length).toBeGreaterThan(0);
  });

  it('rejects fractions outside [0, 1] and negative amounts', () => {
    expect(() => generateAnimal(layout3, createRng(1), 'a', { missingFraction: 1.5 })).toThrow(
      'generateAnimal: missingFraction must be in [0, 1], got 1.5',
    );
    expect(() => generateAnimal(layout3, createRng(1), 'a', { outlierFraction: 1 })).toThrow(
      'generateAnimal: outlierFraction must be in [0, 1), got 1',
    );
    expect(() => generateAnimal(layout3, createRng(1), 'a', { bend: -1 })).toThrow(
      'generateAnimal: bend must be a finite number >= 0, got -1',
    );
  });
});

describe('writeSampleCsv', () => {
  it('writes x,y,z,label then features, an empty label for unlabelled points, and trims trailing zeros', () => {
    const csv = writeSampleCsv({
      id: 's',
      source: 's.csv',
      dim: 3,
      coords: [
        [1.5, -2, 0.12345],
        [-0.00001, 3.25, 10],
      ],
      labels: ['Tol-L1', null],
      rows: [2, 3],
      features: { names: ['nuclear_intensity'], values: [[812.5], [640]] },
    });
    expect(csv).toBe('x,y,z,label,nuclear_intensity\n1.5,-2,0.1235,Tol-L1,812.5\n0,3.25,10,,640\n');
  });

  it('writes x,y,label for a 2-D sample', () => {
    const csv = writeSampleCsv({
      id: 's',
      source: 's.csv',
      dim: 2,
      coords: [[1, 2]],
      labels: [null],
      rows: [2],
      features: { names: [], values: [[]] },
    });
    expect(csv).toBe('x,y,label\n1,2,\n');
  });
});
