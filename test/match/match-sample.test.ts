import { describe, expect, it } from 'vitest';
import { UsageError } from '../../src/errors.js';
import { labelMappedPoints, matchSample, POSE_MARGIN_SETTLED } from '../../src/match/match-sample.js';
import { svd } from '../../src/geometry/linear-algebra.js';
import { createRng, randomRotation } from '../../src/random.js';
import type { Sample, Template } from '../../src/types.js';
import { generateAnimal, generateLayout } from '../support/animals.js';
import { templateFromLayout, templateFromTraining } from './support.js';

function sampleOf(id: string, coords: number[][], labels?: (string | null)[]): Sample {
  return {
    id,
    source: `${id}.csv`,
    dim: coords[0].length as 2 | 3,
    coords,
    labels: labels ?? coords.map(() => null),
    rows: coords.map((_, i) => i + 2),
    features: { names: [], values: coords.map(() => []) },
  };
}

/** 1-D cell positions along a line with irregular gaps (a regular lattice would be shift-ambiguous). */
const LINE = [0, 3, 9, 11, 18, 24, 26, 33, 40, 43, 51, 55];

/** A 1-D template (cells along a line, sd 0.5 um); Template's type says 2 | 3, the matcher also takes 1. */
function lineTemplate(count: number): Template {
  const layout = {
    dim: 1 as unknown as 2,
    labels: Array.from({ length: count }, (_, k) => `c${k}`),
    positions: Array.from({ length: count }, (_, k) => [LINE[k]]),
    jitter: Array.from({ length: count }, () => [[0.25]]),
  };
  return { ...templateFromLayout(layout), dim: 1 as unknown as 2 };
}

describe('matchSample on synthetic animals (smoke case)', () => {
  // Easier than the benchmark so the floor is meaningful in a unit test: 60 cells 2 um apart,
  // jitter sd 0.3-0.9 um (jitterScale 0.3), 10% outliers (half clustered), 10% missing, any rotation.
  const rng = createRng(20261201);
  const layout = generateLayout(rng, { cells: 60, dim: 3 });
  const template = templateFromTraining(layout, rng, { members: 15, animal: { jitterScale: 0.3 } });
  const animals = [0, 1].map((s) =>
    generateAnimal(layout, rng, `smoke${s}`, { outlierFraction: 0.1, missingFraction: 0.1, jitterScale: 0.3 }),
  );

  it('labels at least 80% of the true cells correctly and stays within 0.1 of the oracle', () => {
    let correct = 0, oracleCorrect = 0, total = 0;
    for (const [s, animal] of animals.entries()) {
      const result = matchSample(template, animal.sample, { rng: createRng(s + 1), maxTrials: 300 });
      const oracle = labelMappedPoints(
        template,
        animal.sample,
        animal.sample.coords.map((p) => animal.toLayoutFrame(p)),
        1 / animal.scale ** 3,
      );
      animal.truth.forEach((label, i) => {
        if (label === null) return;
        total++;
        if (result.proposals[i].label === label) correct++;
        if (oracle[i].label === label) oracleCorrect++;
      });
    }
    expect(correct / total).toBeGreaterThanOrEqual(0.8);
    expect(correct / total).toBeGreaterThanOrEqual(oracleCorrect / total - 0.1);
  });

  it('labels heads with 30% of their cells cut off by a plane: >= 0.93 of the oracle overall, no animal below 0.75', () => {
    // 120 cells in ganglia, jitter sd 0.5-1.5 um, 10% outliers, 10% missing, then 30% of the rest cut
    // off. Before the slid candidates (slide.ts) these 8 animals gave 0.923 of the oracle overall and
    // one animal 0.736 of its own: its turned poses lay too far along the long axis to recover.
    const cropRng = createRng(20261202);
    const cropLayout = generateLayout(cropRng, { cells: 120, dim: 3, arrangement: 'ganglia' });
    const cropTemplate = templateFromTraining(cropLayout, cropRng, { members: 15, animal: { jitterScale: 0.5 } });
    let correct = 0, oracleCorrect = 0, worst = Infinity;
    for (let s = 0; s < 8; s++) {
      const animal = generateAnimal(cropLayout, cropRng, `crop${s}`, { outlierFraction: 0.1, missingFraction: 0.1, jitterScale: 0.5, cropFraction: 0.3 });
      const result = matchSample(cropTemplate, animal.sample, { rng: createRng(s + 1) });
      const oracle = labelMappedPoints(cropTemplate, animal.sample, animal.sample.coords.map((p) => animal.toLayoutFrame(p)), 1 / animal.scale ** 3);
      let c = 0, o = 0;
      animal.truth.forEach((label, i) => {
        if (label === null) return;
        if (result.proposals[i].label === label) c++;
        if (oracle[i].label === label) o++;
      });
      correct += c;
      oracleCorrect += o;
      worst = Math.min(worst, c / o);
    }
    expect(correct / oracleCorrect).toBeGreaterThanOrEqual(0.93);
    expect(worst).toBeGreaterThanOrEqual(0.75);
  });

  it('returns one proposal per point in input order, with at most 3 alternatives sorted by probability', () => {
    const animal = animals[0];
    const result = matchSample(template, animal.sample, { rng: createRng(7), maxTrials: 200 });
    expect(result.proposals).toHaveLength(animal.sample.coords.length);
    expect(result.sampleId).toBe('smoke0');
    const used = new Set<string>();
    for (const p of result.proposals) {
      expect(p.confidence).toBeGreaterThanOrEqual(0);
      expect(p.confidence).toBeLessThanOrEqual(1);
      expect(p.alternatives.length).toBeLessThanOrEqual(3);
      for (let j = 1; j < p.alternatives.length; j++)
        expect(p.alternatives[j - 1].probability).toBeGreaterThanOrEqual(p.alternatives[j].probability);
      if (p.label !== null) {
        expect(used.has(p.label)).toBe(false); // one-to-one
        used.add(p.label);
        expect(p.distance).not.toBeNull();
      } else {
        expect(p.distance).toBeNull();
      }
    }
  });

  it('gives the same result for the same seed', () => {
    const a = matchSample(template, animals[1].sample, { rng: createRng(3), maxTrials: 150 });
    const b = matchSample(template, animals[1].sample, { rng: createRng(3), maxTrials: 150 });
    expect(b.proposals).toEqual(a.proposals);
    expect(b.transform).toEqual(a.transform);
  });

  it('keeps given labels as fixed correspondences with confidence 1', () => {
    const animal = animals[0];
    const labels = animal.sample.labels.slice();
    const given: number[] = [];
    animal.truth.forEach((l, i) => {
      if (l !== null && given.length < 4) {
        labels[i] = l;
        given.push(i);
      }
    });
    const sample = { ...animal.sample, labels };
    const result = matchSample(template, sample, { rng: createRng(5), maxTrials: 150 });
    for (const i of given) {
      expect(result.proposals[i].label).toBe(animal.truth[i]);
      expect(result.proposals[i].confidence).toBe(1);
    }
  });

  it('does not depend on the orientation of the sample (same labels on at least 95% of points)', () => {
    const animal = animals[1];
    const r = randomRotation(createRng(99), 3);
    const rotated = animal.sample.coords.map((p) => r.map((row) => row[0] * p[0] + row[1] * p[1] + row[2] * p[2] + 50));
    const a = matchSample(template, animal.sample, { rng: createRng(11), maxTrials: 300 });
    const b = matchSample(template, { ...animal.sample, coords: rotated }, { rng: createRng(11), maxTrials: 300 });
    let same = 0;
    a.proposals.forEach((p, i) => {
      if (p.label === b.proposals[i].label) same++;
    });
    expect(same / a.proposals.length).toBeGreaterThanOrEqual(0.95);
  });
});

describe('pose margin (is the orientation settled?)', () => {
  // 190 cells 2 um apart at the accuracy suite's default jitter (sd 1-3 um), 20% outliers, 15% missing.
  // Grouped in ganglia, the head's orientation shows in its cell positions; packed uniformly through a
  // nearly round head, it does not (docs/algorithms.md, "Pose margin").
  const setting = { outlierFraction: 0.2, missingFraction: 0.15 };
  const headOf = (arrangement: 'ganglia' | 'uniform', seed: number) => {
    const rng = createRng(seed);
    const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement });
    const template = templateFromTraining(layout, rng, { members: 25 });
    return { template, animal: generateAnimal(layout, rng, `${arrangement}-head`, setting) };
  };

  it('is settled for a head in ganglia and not for a uniformly packed one', () => {
    const ganglia = headOf('ganglia', 31);
    const g = matchSample(ganglia.template, ganglia.animal.sample, { rng: createRng(1) });
    expect(g.poseMargin).not.toBeNull();
    expect(g.poseMargin as number).toBeGreaterThanOrEqual(POSE_MARGIN_SETTLED);

    const uniform = headOf('uniform', 32);
    const u = matchSample(uniform.template, uniform.animal.sample, { rng: createRng(1) });
    expect(u.poseMargin).not.toBeNull();
    expect(Math.abs(u.poseMargin as number)).toBeLessThan(POSE_MARGIN_SETTLED);
  });

  it('when unsettled, lets the points\' likelihood choose among the finalists: here a mode the matching gain ranked lower', () => {
    // Seed 36: the mode with the highest matching gain labels none of the cells right; after the final
    // refinement of every finalist, another mode gives the points a higher likelihood and labels 27.
    // The margin is then measured from the chosen mode, so it is negative.
    const { template, animal } = headOf('uniform', 36);
    const r = matchSample(template, animal.sample, { rng: createRng(1) });
    expect(r.poseMargin as number).toBeLessThan(0);
    const correct = animal.truth.filter((t, i) => t !== null && r.proposals[i].label === t).length;
    expect(correct).toBeGreaterThanOrEqual(20);
  });

  it('when unsettled, also weighs modes that the halved screening dropped', () => {
    // Seed 39 (full jitter, where orientation is close to a coin toss): among the three finalists of the
    // halved screening none is right (with UNSETTLED_EXTRA = 0: 3 cells right, margin 3.6); the screening
    // without halving adds a mode that gives the points a higher likelihood and labels 19.
    const { template, animal } = headOf('uniform', 39);
    const r = matchSample(template, animal.sample, { rng: createRng(1) });
    const correct = animal.truth.filter((t, i) => t !== null && r.proposals[i].label === t).length;
    expect(correct).toBeGreaterThanOrEqual(15);
    expect(r.poseMargin as number).toBeLessThan(POSE_MARGIN_SETTLED);
  });

  it('is null for the baselines, which screen no other pose', () => {
    const { template, animal } = headOf('ganglia', 31);
    expect(matchSample(template, animal.sample, { rng: createRng(1), method: 'icp' }).poseMargin).toBeNull();
  });
});

describe('slip search and the outliers\' excess density', () => {
  it('leaves the basin one cell spacing off: a head whose screening ends in a slipped, turned pose', () => {
    // Seed 122, uniform packing at half jitter: without the slip search (SLIP_POSES = 0) the matcher labels
    // no cell right (margin 0.4); with it, 98 of the cells (December 2026).
    const rng = createRng(122);
    const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement: 'uniform' });
    const template = templateFromTraining(layout, rng, { members: 25, animal: { jitterScale: 0.5 } });
    const animal = generateAnimal(layout, rng, 'head', { outlierFraction: 0.2, missingFraction: 0.15, jitterScale: 0.5 });
    const r = matchSample(template, animal.sample, { rng: createRng(1) });
    const correct = animal.truth.filter((t, i) => t !== null && r.proposals[i].label === t).length;
    expect(correct).toBeGreaterThanOrEqual(80);
  });

  it('gives few points of a dense clump beside the head a label (1 of 84 here; 6 under a uniform outlier model)', () => {
    const rng = createRng(41);
    const layout = generateLayout(rng, { cells: 190, dim: 3, arrangement: 'ganglia' });
    const template = templateFromTraining(layout, rng, { members: 25 });
    let labelled = 0, clump = 0;
    for (let a = 0; a < 3; a++) {
      const animal = generateAnimal(layout, rng, `head${a}`, { outlierFraction: 0.15, clusteredOutlierShare: 1, missingFraction: 0.15 });
      const r = matchSample(template, animal.sample, { rng: createRng(a) });
      animal.truth.forEach((t, i) => {
        if (t !== null) return;
        clump++;
        if (r.proposals[i].label !== null) labelled++;
      });
    }
    expect(clump).toBeGreaterThan(60);
    expect(labelled / clump).toBeLessThan(0.04);
  });
});

describe('bend correction (bend.ts)', () => {
  // 120 cells in ganglia, jitter sd 0.5-1.5 um, bends of up to 6 um in training and test animals alike.
  const bentHead = (seed: number) => {
    const rng = createRng(seed);
    const layout = generateLayout(rng, { cells: 120, dim: 3, arrangement: 'ganglia' });
    const template = templateFromTraining(layout, rng, { members: 15, animal: { jitterScale: 0.5, bend: 6 } });
    const animal = generateAnimal(layout, rng, 'bent', { outlierFraction: 0.1, missingFraction: 0.1, jitterScale: 0.5, bend: 6 });
    const correct = (r: ReturnType<typeof matchSample>) => animal.truth.filter((t, i) => t !== null && r.proposals[i].label === t).length;
    return { template, animal, correct };
  };

  it('is kept for a head bent by 6 um at its ends and labels more cells right than without it', () => {
    const { template, animal, correct } = bentHead(42);
    expect(animal.bendAmplitude).toBeGreaterThan(5.5);
    const withBend = matchSample(template, animal.sample, { rng: createRng(1) });
    const without = matchSample(template, animal.sample, { rng: createRng(1), bend: false });
    expect(withBend.bend).toBe(true);
    expect(without.bend).toBe(false);
    expect(correct(withBend)).toBeGreaterThan(correct(without));
  });

  it('is not kept for a head that hardly bends (its gain stays below the penalty)', () => {
    const { template, animal } = bentHead(41);
    expect(Math.abs(animal.bendAmplitude)).toBeLessThan(1);
    expect(matchSample(template, animal.sample, { rng: createRng(1) }).bend).toBe(false);
  });
});

describe('pose family: similarity unless the affine map earns its extra parameters (chooseFamily)', () => {
  // 120 cells in ganglia, jitter sd 0.5-1.5 um; the template from animals without any stretch.
  const setting = (seed: number) => {
    const rng = createRng(seed);
    const layout = generateLayout(rng, { cells: 120, dim: 3, arrangement: 'ganglia' });
    const template = templateFromTraining(layout, rng, { members: 15, animal: { jitterScale: 0.5 } });
    const stretched = generateAnimal(layout, rng, 'deep', { outlierFraction: 0.1, missingFraction: 0.1, jitterScale: 0.5, axialScaleRange: 0.25 });
    const plain = generateAnimal(layout, rng, 'plain', { outlierFraction: 0.1, missingFraction: 0.1, jitterScale: 0.5 });
    return { template, stretched, plain };
  };

  it('keeps an affine pose for a sample whose depth axis is stretched by 24%, and labels most of its cells', () => {
    const { template, stretched } = setting(51);
    expect(stretched.axialScale).toBeGreaterThan(1.2);
    const r = matchSample(template, stretched.sample, { rng: createRng(1) });
    expect(r.transform.kind).toBe('affine');
    // The map undoes the stretch: its singular values spread by about the stretch (1.24), not by the 1.35 bound.
    const s = svd(r.transform.linear).s;
    expect(Math.max(...s) / Math.min(...s)).toBeGreaterThan(1.12);
    const trueCells = stretched.truth.filter((t) => t !== null).length;
    const correct = stretched.truth.filter((t, i) => t !== null && r.proposals[i].label === t).length;
    expect(correct / trueCells).toBeGreaterThan(0.5);
  });

  it('keeps the similarity for a sample of the same animals without a stretch', () => {
    const { template, plain } = setting(51);
    expect(matchSample(template, plain.sample, { rng: createRng(1) }).transform.kind).toBe('similarity');
  });
});

describe('matchSample on tiny and 1-D problems (exhaustive search)', () => {
  it('recovers every label of a 1-D sample shifted by 37 um, exactly', () => {
    const template = lineTemplate(12);
    // Cells 2..9 observed, shifted, with small offsets (well inside 0.5 um sd).
    const coords = [2, 3, 4, 5, 6, 7, 8, 9].map((k, j) => [LINE[k] + 37 + (j % 2 ? 0.1 : -0.1)]);
    const result = matchSample(template, sampleOf('line', coords), { rng: createRng(1), nonRigid: false });
    expect(result.stopReason).toBe('exhaustive');
    expect(result.proposals.map((p) => p.label)).toEqual(['c2', 'c3', 'c4', 'c5', 'c6', 'c7', 'c8', 'c9']);
    expect(result.transform.translation[0]).toBeCloseTo(-37, 1);
  });

  it('recovers a tiny rotated 2-D layout of 6 cells', () => {
    const positions = [
      [0, 0],
      [10, 0],
      [20, 3],
      [5, 9],
      [15, 12],
      [26, 10],
    ];
    const layout = {
      dim: 2 as const,
      labels: ['Aa', 'Bb', 'Cc', 'Dd', 'Ee', 'Ff'],
      positions,
      jitter: positions.map(() => [
        [0.3, 0],
        [0, 0.3],
      ]),
    };
    const template = templateFromLayout(layout);
    const angle = 2.1;
    const c = Math.cos(angle), s = Math.sin(angle);
    const order = [4, 0, 5, 2, 1, 3];
    const coords = order.map((k) => [c * positions[k][0] - s * positions[k][1] + 100, s * positions[k][0] + c * positions[k][1] - 40]);
    const result = matchSample(template, sampleOf('tiny', coords), { rng: createRng(2), nonRigid: false });
    expect(result.stopReason).toBe('exhaustive');
    expect(result.proposals.map((p) => p.label)).toEqual(order.map((k) => layout.labels[k]));
  });
});

describe('matchSample input checks', () => {
  const layout = generateLayout(createRng(4), { cells: 20, dim: 3 });
  const template = templateFromLayout(layout);

  it('rejects a 2-D sample against a 3-D template with UsageError', () => {
    expect(() => matchSample(template, sampleOf('flat', [[0, 0], [1, 1], [2, 0]]), { rng: createRng(1) })).toThrow(UsageError);
  });

  it('rejects an unknown labelling rule', () => {
    const sample = sampleOf('s', layout.positions.slice(0, 10));
    expect(() => matchSample(template, sample, { rng: createRng(1), assignment: 'best' as unknown as 'map' })).toThrow(/assignment must be 'map' or 'mea'/);
  });

  it('rejects a non-positive hit radius and a non-integer trial cap', () => {
    const sample = sampleOf('s', layout.positions.slice(0, 10));
    expect(() => matchSample(template, sample, { rng: createRng(1), hitRadius: 0 })).toThrow('hitRadius must be a positive number, got 0');
    expect(() => matchSample(template, sample, { rng: createRng(1), maxTrials: 2.5 })).toThrow('maxTrials must be a positive integer, got 2.5');
  });

  it('does not modify its inputs (frozen arrays)', () => {
    const coords = layout.positions.slice(0, 15).map((p) => Object.freeze(p.slice()));
    const sample = Object.freeze(sampleOf('frozen', coords as number[][]));
    expect(() => matchSample(template, sample, { rng: createRng(1), maxTrials: 50 })).not.toThrow();
  });
});

describe('labelMappedPoints: maximum expected accuracy (assignment mea)', () => {
  it('labels with a summed posterior at least the default labelling\'s, and differs from it on crowded cells', () => {
    // Crowded cells (full jitter, uniform packing): many points have close alternatives.
    const rng = createRng(31);
    const layout = generateLayout(rng, { cells: 80, dim: 3 });
    const template = templateFromTraining(layout, rng, { members: 15 });
    let differ = 0;
    for (let s = 0; s < 6; s++) {
      const animal = generateAnimal(layout, rng, `mea${s}`, { outlierFraction: 0.15, missingFraction: 0.15 });
      const mapped = animal.sample.coords.map((p) => animal.toLayoutFrame(p));
      const map = labelMappedPoints(template, animal.sample, mapped, 1 / animal.scale ** 3);
      const mea = labelMappedPoints(template, animal.sample, mapped, 1 / animal.scale ** 3, { assignment: 'mea' });
      map.forEach((p, i) => {
        if (p.label !== mea[i].label) differ++;
      });
      // 'mea' maximises the labels' summed posterior over the same allowed pairs: never below the default's sum.
      const sumConfidence = (ps: typeof map) => ps.reduce((a, p) => a + (p.label === null ? 0 : p.confidence), 0);
      expect(sumConfidence(mea)).toBeGreaterThanOrEqual(sumConfidence(map) - 1e-9);
    }
    expect(differ).toBeGreaterThan(0);
  });
});
