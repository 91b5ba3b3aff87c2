import { describe, it, expect } from 'vitest';
import { applyTransform, fitRigid, fitSimilarity, fitTransform, multiply, symmetricEigen, transpose } from '../../src/geometry/index.js';
import { coRegister, minAlignmentPoints } from '../../src/template/co-register.js';
import { entryFromSample } from '../../src/template/build.js';
import { resolveSettings } from '../../src/template/settings.js';
import { createRng, randomNormal, randomRotation } from '../../src/random.js';
import { maxAbsDifference, readGpaFixture, sampleFromConfiguration, unitSize, moved } from './helpers.js';

const ordinary = resolveSettings({ robust: 'none', memberFit: 'sample-to-template', tolerance: 1e-13, maxIterations: 2000 });

describe('coRegister with complete labels equals ordinary generalised Procrustes', () => {
  for (const name of ['gpa-2d', 'gpa-3d'] as const) {
    // R 4.2.2 shapes::procGPA 1.2.7 (scale = TRUE, tol1 = tol2 = 0), fixture test/fixtures/reference/<name>.json, script scripts/fixtures/gpa.R
    it(`matches R shapes::procGPA's mean shape (${name}) to 1e-12 after unit size and a rotation-only fit`, () => {
      const fx = readGpaFixture(name);
      const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
      const reg = coRegister(samples.map(entryFromSample), ordinary);
      expect(reg.converged).toBe(true);
      expect(reg.cells.length).toBe(fx.landmarks);
      // procGPA keeps the total sum of squares, cairn keeps the average animal size: compare shapes at unit centroid size.
      const ours = unitSize(reg.consensus);
      const ref = unitSize(fx.meanShape);
      const fit = fitRigid(ours, ref);
      expect(fit.reflected).toBe(false);
      expect(maxAbsDifference(applyTransform(fit.transform, ours), ref)).toBeLessThan(1e-12);
    });

    it(`differs from procGPA's mean shape (${name}) by less than 1e-4 at unit size with the default template-to-sample member fits`, () => {
      const fx = readGpaFixture(name);
      const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
      const reg = coRegister(samples.map(entryFromSample), { ...ordinary, memberFit: 'template-to-sample' });
      const ours = unitSize(reg.consensus);
      const ref = unitSize(fx.meanShape);
      const d = maxAbsDifference(applyTransform(fitRigid(ours, ref).transform, ours), ref);
      expect(d).toBeLessThan(1e-4);
      expect(d).toBeGreaterThan(1e-8); // a different estimator, not the same one
    });

    it(`sizes the consensus so the template-to-member similarity scales average 1 (${name}), to 9 digits`, () => {
      const fx = readGpaFixture(name);
      const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
      for (const memberFit of ['sample-to-template', 'template-to-sample'] as const) {
        const reg = coRegister(samples.map(entryFromSample), { ...ordinary, memberFit });
        const scales = reg.entries.map((e, i) => fitSimilarity(reg.cellOf[i].map((c) => reg.consensus[c]), e.coords).scale);
        expect(scales.reduce((a, b) => a + b, 0) / scales.length).toBeCloseTo(1, 9);
      }
    });
  }

  for (const name of ['gpa-2d', 'gpa-3d'] as const) {
    it(`returns aligned positions (${name}, row-major per member) equal to the bit to applyTransform of the final maps`, () => {
      const fx = readGpaFixture(name);
      const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
      const reg = coRegister(samples.map(entryFromSample), resolveSettings({}));
      reg.entries.forEach((e, i) => {
        const expected = applyTransform(reg.transforms[i], e.coords).flat();
        expect(reg.aligned[i].length).toBe(e.coords.length * reg.dim);
        expect(Array.from(reg.aligned[i])).toEqual(expected);
      });
    });
  }

  it('puts the centroid of the cell means at the origin with principal axes in decreasing order of variance', () => {
    const fx = readGpaFixture('gpa-3d');
    const reg = coRegister(fx.configurations.map((c, i) => entryFromSample(sampleFromConfiguration(`c${i}`, c))), ordinary);
    const k = reg.consensus.length;
    const mean = [0, 1, 2].map((a) => reg.consensus.reduce((s, p) => s + p[a], 0) / k);
    for (const v of mean) expect(v).toBeCloseTo(0, 9);
    const cov = [0, 1, 2].map((a) => [0, 1, 2].map((b) => reg.consensus.reduce((s, p) => s + p[a] * p[b], 0) / k));
    expect(cov[0][1]).toBeCloseTo(0, 8);
    expect(cov[0][2]).toBeCloseTo(0, 8);
    expect(cov[1][2]).toBeCloseTo(0, 8);
    expect(cov[0][0]).toBeGreaterThan(cov[1][1]);
    expect(cov[1][1]).toBeGreaterThan(cov[2][2]);
    // Sign rule: third moment positive along the first two axes.
    for (const a of [0, 1]) expect(reg.consensus.reduce((s, p) => s + p[a] ** 3, 0)).toBeGreaterThan(0);
  });
});

describe('coRegister with missing labels', () => {
  it('recovers the true shape when each sample misses a different third of the cells', () => {
    const rng = createRng(7);
    const k = 30;
    const truth = Array.from({ length: k }, () => [randomNormal(rng) * 20, randomNormal(rng) * 8, randomNormal(rng) * 6]);
    const samples = Array.from({ length: 15 }, (_, i) => {
      const noisy = truth.map((p) => p.map((v) => v + 0.3 * randomNormal(rng)));
      const coords = moved(noisy, randomRotation(rng, 3), 0.9 + 0.2 * rng(), [rng() * 100, rng() * 100, rng() * 100]);
      const labels = coords.map((_, j) => ((j + i) % 3 === 0 ? null : `c${String(j).padStart(2, '0')}`));
      return sampleFromConfiguration(`s${i}`, coords, labels);
    });
    const reg = coRegister(samples.map(entryFromSample), resolveSettings({ robust: 'none', tolerance: 1e-9 }));
    expect(reg.converged).toBe(true);
    expect(reg.entries.length).toBe(15);
    const ours = unitSize(reg.consensus);
    const ref = unitSize(truth.map((p, j) => p).filter((_, j) => reg.cells.includes(`c${String(j).padStart(2, '0')}`)));
    const fit = fitRigid(ours, ref);
    // Noise 0.3 um on shapes of ~30 um centroid-size scale: the estimate is within 0.01 in unit-size coordinates.
    expect(maxAbsDifference(applyTransform(fit.transform, ours), ref)).toBeLessThan(0.01);
  });

  it('skips a sample with fewer labelled points than the alignment needs, saying why', () => {
    const fx = readGpaFixture('gpa-3d');
    const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
    const poor = sampleFromConfiguration('poor', fx.configurations[0], fx.configurations[0].map((_, j) => (j < 2 ? `L0${j + 1}` : null)));
    const reg = coRegister([...samples, poor].map(entryFromSample), ordinary);
    expect(reg.skipped).toEqual([{ sample: 'poor', reason: 'has 2 labelled points; similarity alignment needs at least 3' }]);
    expect(minAlignmentPoints('affine', 3)).toBe(4);
  });

  it('skips a sample whose labelled points are collinear, with the geometric reason', () => {
    const fx = readGpaFixture('gpa-3d');
    const samples = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
    const line = [[0, 0, 0], [1, 1, 1], [2, 2, 2], [3, 3, 3]];
    const bad = sampleFromConfiguration('line', line);
    const reg = coRegister([...samples, bad].map(entryFromSample), ordinary);
    expect(reg.skipped.length).toBe(1);
    expect(reg.skipped[0].sample).toBe('line');
    expect(reg.skipped[0].reason).toMatch(/collinear/);
  });

  it('throws FitError when fewer than two samples can be aligned', () => {
    const fx = readGpaFixture('gpa-2d');
    expect(() => coRegister([entryFromSample(sampleFromConfiguration('only', fx.configurations[0]))], ordinary)).toThrow(
      /a template needs at least 2 samples that can be aligned, got 1/,
    );
  });
});

describe('coRegister robust consensus (hard-rejection reweighting)', () => {
  it('rejects a hand label moved far from its cell and keeps the mean where the other samples put it', () => {
    const fx = readGpaFixture('gpa-3d');
    const clean = fx.configurations.map((c, i) => sampleFromConfiguration(`c${i + 1}`, c));
    const moved3 = fx.configurations[2].map((p, j) => (j === 4 ? p.map((v) => v + 25) : p.slice()));
    const dirty = clean.map((s, i) => (i === 2 ? sampleFromConfiguration('c3', moved3) : s));
    const robust = resolveSettings({ tolerance: 1e-10 });
    const reg = coRegister(dirty.map(entryFromSample), robust);
    const i = reg.entries.findIndex((e) => e.id === 'c3');
    const j = reg.entries[i].labels.indexOf('L05');
    expect(reg.kept[i][j]).toBe(false);
    expect(reg.distance[i][j]).toBeGreaterThan(Math.sqrt(16.27)); // chi2_3 0.999 quantile 16.266 (scipy 1.10.1 chi2.ppf)
    // Robust consensus on dirty data is within 0.5 um of the ordinary consensus on the clean data (cell size ~50 um).
    const ref = coRegister(clean.map(entryFromSample), ordinary);
    const fit = fitRigid(reg.consensus, ref.consensus);
    expect(maxAbsDifference(applyTransform(fit.transform, reg.consensus), ref.consensus)).toBeLessThan(0.5);
    // Without robustness the moved label drags its cell by about 25/12 um.
    const plain = coRegister(dirty.map(entryFromSample), ordinary);
    const fit2 = fitRigid(plain.consensus, ref.consensus);
    expect(maxAbsDifference(applyTransform(fit2.transform, plain.consensus), ref.consensus)).toBeGreaterThan(1);
  });

  it('returns one diagnostic per iteration with a non-increasing tail of consensus moves', () => {
    const fx = readGpaFixture('gpa-2d');
    const reg = coRegister(fx.configurations.map((c, i) => entryFromSample(sampleFromConfiguration(`c${i}`, c))), resolveSettings({ tolerance: 1e-8 }));
    expect(reg.iterations.length).toBeGreaterThan(1);
    reg.iterations.forEach((it, i) => expect(it.iteration).toBe(i + 1));
    const last = reg.iterations[reg.iterations.length - 1];
    expect(last.meanShift).toBeLessThan(1e-8);
    expect(last.rmsResidual).toBeGreaterThan(0);
  });

  it('stops at the iteration cap and reports that it did not converge', () => {
    const fx = readGpaFixture('gpa-2d');
    const reg = coRegister(fx.configurations.map((c, i) => entryFromSample(sampleFromConfiguration(`c${i}`, c))), resolveSettings({ tolerance: 0, maxIterations: 3 }));
    expect(reg.iterations.length).toBe(3);
    expect(reg.converged).toBe(false);
  });
});

describe('coRegister with affine alignment', () => {
  it('recovers a shape seen through random affine maps, and fixes the gauge so the mean stretch of the member maps is the identity (to 1e-6)', () => {
    const rng = createRng(17);
    const k = 25;
    const truth = Array.from({ length: k }, () => [randomNormal(rng) * 20, randomNormal(rng) * 8, randomNormal(rng) * 5]);
    const samples = Array.from({ length: 12 }, (_, i) => {
      const a = [0, 1, 2].map((r) => [0, 1, 2].map((c) => (r === c ? 1 : 0) + 0.15 * randomNormal(rng)));
      const coords = truth.map((p) => a.map((row, r) => row.reduce((s, v, c) => s + v * p[c], 0) + 0.05 * randomNormal(rng) + 10 * r));
      return sampleFromConfiguration(`s${i}`, coords, coords.map((_, j) => `c${String(j).padStart(2, '0')}`));
    });
    const reg = coRegister(samples.map(entryFromSample), resolveSettings({ alignment: 'affine', robust: 'none', tolerance: 1e-10, maxIterations: 500 }));
    expect(reg.converged).toBe(true);
    // Consensus equals the truth up to an affine map: the affine fit leaves residuals at the noise level.
    const fit = fitTransform('affine', reg.consensus, truth);
    expect(Math.sqrt(fit.meanSquaredResidual)).toBeLessThan(0.1);
    // Gauge: mean over members of (A_i A_i^T)^(1/2) = I.
    const mean = [0, 1, 2].map(() => [0, 0, 0]);
    for (const t of reg.transforms) {
      const { values, vectors } = symmetricEigen(multiply(t.linear, transpose(t.linear)));
      for (let c = 0; c < 3; c++) for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) mean[a][b] += (Math.sqrt(values[c]) * vectors[a][c] * vectors[b][c]) / reg.transforms.length;
    }
    for (let a = 0; a < 3; a++) for (let b = 0; b < 3; b++) expect(mean[a][b]).toBeCloseTo(a === b ? 1 : 0, 6);
  });
});
