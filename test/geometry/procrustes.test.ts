import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { FitError } from '../../src/errors.js';
import {
  applyTransform,
  determinant,
  fitAffine,
  fitRigid,
  fitSimilarity,
  fitTransform,
  transpose,
} from '../../src/geometry/index.js';
import type { Points } from '../../src/types.js';
import { expectArrayClose, expectClose } from './expect-close.js';

function readFixture<T>(name: string): T {
  return JSON.parse(readFileSync(new URL(`../fixtures/reference/${name}`, import.meta.url), 'utf8')) as T;
}

function frozen(points: number[][]): Points {
  return Object.freeze(points.map((p) => Object.freeze(p.slice())));
}

function centredSquaredNorm(points: Points): number {
  const d = points[0].length;
  const mean = new Array<number>(d).fill(0);
  for (const p of points) for (let j = 0; j < d; j++) mean[j] += p[j] / points.length;
  let s = 0;
  for (const p of points) for (let j = 0; j < d; j++) s += (p[j] - mean[j]) ** 2;
  return s;
}

// Umeyama S. (1991) Least-squares estimation of transformation parameters between two point
// patterns. IEEE TPAMI 13(4):376-380, the worked example at the end of section III.
describe('fitSimilarity on the worked example of Umeyama (1991)', () => {
  const x = frozen([
    [0, 0],
    [1, 0],
    [0, 2],
  ]);
  const y = frozen([
    [0, 0],
    [-1, 0],
    [0, 2],
  ]);

  it('returns R = [[3, 2], [-2, 3]] / sqrt(13), c = sqrt(13) / 5, t = (-0.8, 0.4) and mean squared residual 8/15', () => {
    const fit = fitSimilarity(x, y);
    const r13 = Math.sqrt(13);
    expectArrayClose(fit.rotation, [
      [3 / r13, 2 / r13],
      [-2 / r13, 3 / r13],
    ], 14, 'R');
    expectClose(fit.scale, r13 / 5, 14, 'c');
    expectArrayClose(fit.translation, [-0.8, 0.4], 14, 't');
    expectArrayClose(fit.transform.translation, [-0.8, 0.4], 14, 'transform.t');
    expectArrayClose(fit.transform.linear, [
      [0.6, 0.4],
      [-0.4, 0.6],
    ], 14, 'cR');
    expectClose(fit.meanSquaredResidual, 8 / 15, 14, 'epsilon^2');
    expect(fit.reflected).toBe(false);
    expect(fit.transform.kind).toBe('similarity');
  });

  it('returns the exact mirror image (det R = -1, zero residual) when reflection is allowed, which the sign correction excludes by default', () => {
    const fit = fitSimilarity(x, y, { allowReflection: true });
    expectArrayClose(fit.rotation, [
      [-1, 0],
      [0, 1],
    ], 14, 'R');
    expectClose(determinant(fit.rotation), -1, 14, 'det R');
    expectClose(fit.scale, 1, 14, 'c');
    expectArrayClose(fit.translation, [0, 0], 14, 't');
    expectClose(fit.meanSquaredResidual, 0, 14, 'epsilon^2');
    expect(fit.reflected).toBe(true);
    // The constrained fit is worse than the mirror, as it must be.
    expect(fitSimilarity(x, y).meanSquaredResidual).toBeGreaterThan(fit.meanSquaredResidual + 0.5);
  });

  it('reports meanSquaredResidual equal to the mean of |y_i - T(x_i)|^2 of the returned transform', () => {
    const fit = fitSimilarity(x, y);
    const mapped = applyTransform(fit.transform, x);
    const msr = mapped.reduce((s, p, i) => s + (p[0] - y[i][0]) ** 2 + (p[1] - y[i][1]) ** 2, 0) / 3;
    expectClose(fit.meanSquaredResidual, msr, 14);
  });
});

interface ScipyCaseFit {
  rotation: number[][];
  similarityScale: number;
  similarityMeanSquaredResidual: number;
  rigidMeanSquaredResidual: number;
}
interface ScipyFixture {
  python: string;
  numpy: string;
  scipy: string;
  cases: {
    name: string;
    source: number[][];
    target: number[][];
    orthogonalProcrustes: { R: number[][]; scale: number; det: number };
    reflectionAllowed: ScipyCaseFit;
    properRotation: ScipyCaseFit;
  }[];
  scipyProcrustesExample: { a: number[][]; b: number[][]; disparity: number; properRotationDisparity: number };
}
const scipyFixture = readFixture<ScipyFixture>('procrustes-scipy.json');

// scipy.spatial.procrustes documentation example; values computed by Python 3.11.2, numpy 1.24.2,
// scipy 1.10.1 (Debian python3-scipy 1.10.1-2), fixture test/fixtures/reference/procrustes-scipy.json.
// scipy centres both sets, scales each to unit Frobenius norm and allows reflection, so its disparity
// equals n * (mean squared residual of our similarity fit of b onto a) / ||a - mean(a)||_F^2.
describe('fits against the scipy.spatial.procrustes documentation example', () => {
  const { a, b, disparity, properRotationDisparity } = scipyFixture.scipyProcrustesExample;

  it('fixture holds the documented inputs and a disparity of about 0 (b is a mirror image of a)', () => {
    expect(a).toEqual([[1, 3], [1, 2], [1, 1], [2, 1]]);
    expect(b).toEqual([[4, -2], [4, -4], [4, -6], [2, -6]]);
    expect(disparity).toBeLessThan(1e-14);
  });

  it('reproduces scipy disparity with reflection allowed, in both directions', () => {
    const ba = fitSimilarity(b, a, { allowReflection: true });
    expect(ba.reflected).toBe(true);
    expectClose((a.length * ba.meanSquaredResidual) / centredSquaredNorm(a), disparity, 13, 'b onto a');
    const ab = fitSimilarity(a, b, { allowReflection: true });
    expectClose((a.length * ab.meanSquaredResidual) / centredSquaredNorm(b), disparity, 13, 'a onto b');
    expectClose(ab.scale, 2, 13, 'scale a onto b');
  });

  it('reproduces the rotation-only disparity 0.489795918367 computed with numpy (SVD plus sign correction)', () => {
    expectClose(properRotationDisparity, 0.489795918367, 12, 'fixture');
    const ba = fitSimilarity(b, a);
    expect(ba.reflected).toBe(false);
    expectClose((a.length * ba.meanSquaredResidual) / centredSquaredNorm(a), properRotationDisparity, 12, 'b onto a');
    const ab = fitSimilarity(a, b);
    expectClose((a.length * ab.meanSquaredResidual) / centredSquaredNorm(b), properRotationDisparity, 12, 'a onto b');
  });
});

// scipy.linalg.orthogonal_procrustes (Python 3.11.2, scipy 1.10.1, Debian python3-scipy 1.10.1-2) on
// seeded inputs written by scripts/fixtures/procrustes.py, fixture test/fixtures/reference/procrustes-scipy.json.
// scipy's R acts on rows and may be a reflection; our rotation is its transpose. The det +1 solution in
// the fixture is numpy's SVD with Umeyama's sign correction (numpy 1.24.2).
describe('fits against scipy.linalg.orthogonal_procrustes fixtures', () => {
  it('fixture was made by the expected library versions', () => {
    expect(scipyFixture.scipy).toBe('1.10.1');
    expect(scipyFixture.cases.map((c) => c.name)).toEqual(['2d-exact', '2d-noisy', '3d-exact', '3d-noisy', '2d-mirror', '3d-mirror']);
  });

  for (const c of scipyFixture.cases) {
    it(`${c.name}: reflection-allowed fits match orthogonal_procrustes rotation, scale and residual to 9 digits`, () => {
      const sim = fitSimilarity(c.source, c.target, { allowReflection: true });
      expectArrayClose(sim.rotation, transpose(c.orthogonalProcrustes.R), 9, 'R');
      expectClose(sim.scale, c.reflectionAllowed.similarityScale, 9, 'c');
      expectClose(sim.meanSquaredResidual, c.reflectionAllowed.similarityMeanSquaredResidual, 9, 'similarity msr');
      expect(sim.reflected).toBe(c.orthogonalProcrustes.det < 0);
      const rigid = fitRigid(c.source, c.target, { allowReflection: true });
      expectArrayClose(rigid.rotation, c.reflectionAllowed.rotation, 9, 'rigid R');
      expectClose(rigid.meanSquaredResidual, c.reflectionAllowed.rigidMeanSquaredResidual, 9, 'rigid msr');
    });

    it(`${c.name}: proper-rotation fits match the sign-corrected SVD solution to 9 digits`, () => {
      const sim = fitSimilarity(c.source, c.target);
      expectArrayClose(sim.rotation, c.properRotation.rotation, 9, 'R');
      expectClose(determinant(sim.rotation), 1, 12, 'det R');
      expect(sim.reflected).toBe(false);
      expectClose(sim.scale, c.properRotation.similarityScale, 9, 'c');
      expectClose(sim.meanSquaredResidual, c.properRotation.similarityMeanSquaredResidual, 9, 'similarity msr');
      const rigid = fitRigid(c.source, c.target);
      expectArrayClose(rigid.rotation, c.properRotation.rotation, 9, 'rigid R');
      expectClose(rigid.meanSquaredResidual, c.properRotation.rigidMeanSquaredResidual, 9, 'rigid msr');
    });
  }

  it('mirror cases: scipy returns a reflection and the proper fit is strictly worse', () => {
    for (const c of scipyFixture.cases.filter((k) => k.name.endsWith('mirror'))) {
      expect(c.orthogonalProcrustes.det).toBeLessThan(0);
      expect(c.properRotation.similarityMeanSquaredResidual).toBeGreaterThan(10 * c.reflectionAllowed.similarityMeanSquaredResidual);
    }
  });
});

interface ShapesFixture {
  R: string;
  shapes: string;
  cases: {
    name: string;
    source: number[][];
    target: number[][];
    procOPA: { scale: boolean; reflect: boolean; R: number[][]; s: number; OSS: number; rmsd: number }[];
  }[];
}
const shapesFixture = readFixture<ShapesFixture>('procrustes-shapes.json');

// R 4.2.2 shapes::procOPA 1.2.7 (Debian r-base-core 4.2.2.20221110-2, r-cran-shapes 1.2.7-1) on seeded
// inputs written by scripts/fixtures/procrustes.R, fixture test/fixtures/reference/procrustes-shapes.json.
// procOPA(A = target, B = source) centres both and maps B onto A by Bhat = B_c R s (rows are points),
// so our rotation is t(R), our scale is s and our mean squared residual is OSS / k.
describe('fits against R shapes::procOPA fixtures', () => {
  it('fixture was made by the expected library versions', () => {
    expect([shapesFixture.R, shapesFixture.shapes]).toEqual(['4.2.2', '1.2.7']);
    expect(shapesFixture.cases.length).toBe(5);
  });

  for (const c of shapesFixture.cases) {
    for (const f of c.procOPA) {
      const kind = f.scale ? 'similarity' : 'rigid';
      it(`${c.name}: ${kind} fit with reflection ${f.reflect ? 'allowed' : 'excluded'} matches procOPA(scale = ${f.scale}, reflect = ${f.reflect})`, () => {
        const fit = fitTransform(kind, c.source, c.target, { allowReflection: f.reflect });
        const k = c.source.length;
        expectArrayClose(fit.rotation, transpose(f.R), 9, 'R');
        expectClose(fit.scale, f.s, 9, 's');
        expectClose(fit.meanSquaredResidual, f.OSS / k, 9, 'OSS / k');
        expectClose(Math.sqrt(fit.meanSquaredResidual), f.rmsd, 9, 'rmsd');
        expect(fit.reflected).toBe(determinant(f.R) < 0);
      });
    }
  }
});

const square3 = [
  [0, 0, 0],
  [10, 0, 0],
  [0, 12, 0],
  [0, 0, 7],
  [5, 4, 3],
];

describe('degenerate input is a FitError that says why', () => {
  it('too few points', () => {
    expect(() => fitSimilarity([[0, 0, 0], [1, 2, 3]], [[0, 0, 0], [1, 2, 3]])).toThrow(
      new FitError('fitSimilarity needs at least 3 points with positive weight, got 2'),
    );
    expect(() => fitRigid([[1, 1]], [[2, 2]])).toThrow(new FitError('fitRigid needs at least 2 points with positive weight, got 1'));
    expect(() => fitAffine([[0, 0], [1, 0]], [[0, 0], [1, 0]])).toThrow(
      new FitError('fitAffine needs at least 3 points with positive weight, got 2'),
    );
    expect(() => fitSimilarity([], [])).toThrow(new FitError('fitSimilarity: no points given'));
  });

  it('collinear points in 3-D for a similarity or rigid fit', () => {
    const line = [[0, 0, 0], [1, 1, 1], [2, 2, 2], [5, 5, 5]];
    const msg = 'the points are collinear, so the rotation is not determined (spread rank 1, need 2)';
    expect(() => fitSimilarity(line, line)).toThrow(new FitError(`fitSimilarity: ${msg}`));
    expect(() => fitRigid(line, line)).toThrow(new FitError(`fitRigid: ${msg}`));
  });

  it('coincident points', () => {
    const same = [[3, 4], [3, 4], [3, 4]];
    expect(() => fitSimilarity(same, [[0, 0], [1, 0], [0, 1]])).toThrow(
      new FitError('fitSimilarity: all points coincide, so the rotation is not determined (spread rank 0, need 1)'),
    );
  });

  it('target points that coincide or are collinear in 3-D leave the rotation undetermined', () => {
    const flat = square3.map(() => [1, 2, 3]);
    expect(() => fitRigid(square3, flat)).toThrow(
      new FitError('fitRigid: all target points coincide, so the rotation is not determined (cross-covariance rank 0, need 2)'),
    );
    const line = square3.map((_, i) => [i, 2 * i, 3 * i]);
    expect(() => fitRigid(square3, line)).toThrow(
      new FitError('fitRigid: the target points are collinear, so the rotation is not determined (cross-covariance rank 1, need 2)'),
    );
  });

  it('coplanar points in 3-D for an affine fit (but not for a similarity fit)', () => {
    const plane = [[0, 0, 0], [1, 0, 0], [0, 1, 0], [1, 1, 0], [3, 2, 0]];
    expect(() => fitAffine(plane, plane)).toThrow(
      new FitError('fitAffine: the points are coplanar, so an affine map is not determined (spread rank 2, need 3)'),
    );
    expectClose(fitSimilarity(plane, plane).meanSquaredResidual, 0, 14);
  });

  it('collinear points in 2-D for an affine fit (but not for a similarity fit, by Umeyama rank(Sigma_xy) >= d - 1)', () => {
    const line = [[0, 0], [1, 2], [2, 4], [3, 6]];
    expect(() => fitAffine(line, line)).toThrow(
      new FitError('fitAffine: the points are collinear, so an affine map is not determined (spread rank 1, need 2)'),
    );
    // A 2-D rotation is fixed by the direction of one line: rotate by 90 degrees and recover it.
    const turned = line.map(([a, b]) => [-b + 5, a - 1]);
    const fit = fitRigid(line, turned);
    expectArrayClose(fit.rotation, [[0, -1], [1, 0]], 12, 'R');
    expectArrayClose(fit.translation, [5, -1], 12, 't');
  });

  it('mismatched shapes', () => {
    expect(() => fitSimilarity(square3, square3.slice(1))).toThrow(
      new FitError('fitSimilarity: source and target have different numbers of points (5 vs 4)'),
    );
    expect(() => fitSimilarity(square3, square3.map((p) => p.slice(0, 2)))).toThrow(
      new FitError('fitSimilarity: shapes differ at point 0 (3 vs 2, expected 3)'),
    );
    expect(() => fitAffine(square3, square3, { weights: [1, 1, 1] })).toThrow(new FitError('fitAffine: 3 weights for 5 points'));
  });

  it('non-finite numbers', () => {
    for (const bad of [NaN, Infinity, -Infinity]) {
      const target = square3.map((p) => p.slice());
      target[2][1] = bad;
      expect(() => fitSimilarity(square3, target)).toThrow(new FitError('fitSimilarity: point 2 has a non-finite coordinate'));
      expect(() => fitAffine(target, square3)).toThrow(new FitError('fitAffine: point 2 has a non-finite coordinate'));
    }
    expect(() => fitRigid(square3, square3, { weights: [1, 1, NaN, 1, 1] })).toThrow(
      new FitError('fitRigid: weights must be finite and non-negative, got NaN'),
    );
  });

  it('reports the first problem in a fixed order: point shapes and coordinates (all points) before the weights, weights before their count', () => {
    const target = square3.map((p) => p.slice());
    target[4][0] = NaN;
    // A bad weight at point 0 and a bad coordinate at point 4: the coordinate is reported.
    expect(() => fitSimilarity(square3, target, { weights: [-1, 1, 1, 1, 1] })).toThrow(
      new FitError('fitSimilarity: point 4 has a non-finite coordinate'),
    );
    // Too few weights and a point of the wrong dimension: the dimension is reported.
    const short = square3.map((p, i) => (i === 3 ? p.slice(0, 2) : p));
    expect(() => fitRigid(short, square3, { weights: [1, 1] })).toThrow(new FitError('fitRigid: shapes differ at point 3 (2 vs 3, expected 3)'));
    // A negative weight after enough zero weights: the negative weight is reported, not the count.
    expect(() => fitAffine(square3, square3, { weights: [0, 0, 0, 0, -2] })).toThrow(
      new FitError('fitAffine: weights must be finite and non-negative, got -2'),
    );
    // The same checks in 2-D and 1-D.
    expect(() => fitSimilarity([[0, 0], [1, 0], [0, Infinity]], [[0, 0], [1, 0], [0, 1]])).toThrow(
      new FitError('fitSimilarity: point 2 has a non-finite coordinate'),
    );
    expect(() => fitSimilarity([[0], [1], [2]], [[0], [2], [4]], { weights: [1, Infinity, 1] })).toThrow(
      new FitError('fitSimilarity: weights must be finite and non-negative, got Infinity'),
    );
    expect(() => fitSimilarity([[0, 0, 0, 0], [1, 1, 1, 1]], [[0, 0, 0, 0], [1, 1, 1, 1]])).toThrow(
      new FitError('fitSimilarity: dimension must be 1, 2 or 3, got 4'),
    );
  });

  it('weights that are all zero, negative, or leave too few points', () => {
    expect(() => fitSimilarity(square3, square3, { weights: [0, 0, 0, 0, 0] })).toThrow(
      new FitError('fitSimilarity needs at least 3 points with positive weight, got 0'),
    );
    expect(() => fitSimilarity(square3, square3, { weights: [1, 1, -1, 1, 1] })).toThrow(
      new FitError('fitSimilarity: weights must be finite and non-negative, got -1'),
    );
    expect(() => fitAffine(square3, square3, { weights: [1, 1, 1, 0, 0] })).toThrow(
      new FitError('fitAffine needs at least 4 points with positive weight, got 3'),
    );
  });

  it('an affine fit whose best map is a reflection, unless reflection is allowed', () => {
    const mirrored = square3.map(([a, b, c]) => [-a, b, c]);
    expect(() => fitAffine(square3, mirrored)).toThrow(
      new FitError('fitAffine: the best affine map is a reflection (det A < 0); pass allowReflection to accept it'),
    );
    const fit = fitAffine(square3, mirrored, { allowReflection: true });
    expect(fit.reflected).toBe(true);
    expectArrayClose(fit.transform.linear, [[-1, 0, 0], [0, 1, 0], [0, 0, 1]], 12, 'A');
  });
});

describe('weighted fits', () => {
  // Invented 3-D points (um) and a known similarity.
  const source = [
    [12, -40, 5], [80, 15, -22], [-35, 60, 18], [44, 44, 40], [-70, -20, -8], [5, 90, -30], [60, -75, 12],
  ];
  const angle = 0.7;
  const linear = [
    [1.2 * Math.cos(angle), -1.2 * Math.sin(angle), 0],
    [1.2 * Math.sin(angle), 1.2 * Math.cos(angle), 0],
    [0, 0, 1.2],
  ];
  const t = [15, -8, 30];
  const exactTarget = applyTransform({ kind: 'similarity', linear, translation: t }, source);
  // Small deterministic perturbation so the fit is not exact, plus one grossly corrupted point.
  const target = exactTarget.map((p, i) => p.map((v, j) => v + 0.3 * Math.sin(3 * i + j)));
  target[3] = [500, -400, 250];

  for (const kind of ['similarity', 'rigid', 'affine'] as const) {
    it(`${kind}: zero weight on a corrupted point gives the same fit as dropping the point`, () => {
      const weights = source.map((_, i) => (i === 3 ? 0 : 1 + i / 10));
      const withZero = fitTransform(kind, source, target, { weights });
      const dropped = fitTransform(
        kind,
        source.filter((_, i) => i !== 3),
        target.filter((_, i) => i !== 3),
        { weights: weights.filter((_, i) => i !== 3) },
      );
      expectArrayClose(withZero.transform.linear, dropped.transform.linear, 12, 'A');
      expectArrayClose(withZero.transform.translation, dropped.transform.translation, 12, 't');
      expectClose(withZero.meanSquaredResidual, dropped.meanSquaredResidual, 12, 'msr');
    });

    it(`${kind}: an integer weight k gives the same fit as repeating the point k times`, () => {
      const weights = [1, 3, 1, 1, 2, 1, 1];
      const weighted = fitTransform(kind, source, target, { weights });
      const src: number[][] = [], tgt: number[][] = [];
      weights.forEach((w, i) => {
        for (let k = 0; k < w; k++) {
          src.push(source[i]);
          tgt.push(target[i]);
        }
      });
      const repeated = fitTransform(kind, src, tgt);
      expectArrayClose(weighted.transform.linear, repeated.transform.linear, 12, 'A');
      expectArrayClose(weighted.transform.translation, repeated.transform.translation, 11, 't');
      expectClose(weighted.meanSquaredResidual, repeated.meanSquaredResidual, 11, 'msr');
    });
  }

  it('recovers the transform to 1e-6 relative with coordinates offset by 1e6 um', () => {
    const offset = 1e6;
    const far = source.map((p) => p.map((v) => v + offset));
    const farTarget = applyTransform({ kind: 'similarity', linear, translation: t }, far);
    const weights = [1, 2, 0.5, 1, 1, 3, 1];
    for (const kind of ['similarity', 'rigid', 'affine'] as const) {
      const expectedLinear = kind === 'rigid' ? linear.map((r) => r.map((v) => v / 1.2)) : linear;
      const tgt = kind === 'rigid' ? applyTransform({ kind, linear: expectedLinear, translation: t }, far) : farTarget;
      const fit = fitTransform(kind, far, tgt, { weights });
      expectArrayClose(fit.transform.linear, expectedLinear, 6, `${kind} A`);
      for (let j = 0; j < 3; j++) {
        const rel = Math.abs(fit.transform.translation[j] - t[j]) / (offset * 1.2);
        expect(rel, `${kind} t[${j}]`).toBeLessThan(1e-6);
      }
      expect(Math.sqrt(fit.meanSquaredResidual) / offset).toBeLessThan(1e-9);
    }
  });
});
