/**
 * Synthetic templates for testing `compare`: per-group templates built directly
 * from simulated positions that are already aligned (cell means + per-animal
 * jitter), without running the template builder. Invented layout and animals.
 *
 * The real builder also removes each animal's pose by generalized Procrustes,
 * which adds a small correlation between cell means; these templates skip
 * that step, as the brief allows.
 */
import { cholesky } from '../../src/geometry/covariance.js';
import { applyToPoint, invertTransform } from '../../src/geometry/transform.js';
import { randomNormal, randomRotation, type Rng } from '../../src/random.js';
import type { Template, TemplateCell, TemplateMember, Transform } from '../../src/types.js';

export interface SyntheticLayout {
  readonly labels: string[];
  readonly means: number[][];
  /** Per-cell covariance of the animal-to-animal jitter (um^2). */
  readonly covariances: number[][][];
}

/** Invented cell names: syllable pairs, e.g. "Tavo3". */
export function syntheticLabels(n: number): string[] {
  const a = ['Ta', 'Ve', 'Ro', 'Ki', 'Mu', 'Sa', 'Lo', 'Ne'];
  const b = ['vo', 'ral', 'dim', 'sek', 'pu', 'gan'];
  return Array.from({ length: n }, (_, i) => `${a[i % a.length]}${b[Math.floor(i / a.length) % b.length]}${Math.floor(i / (a.length * b.length))}`);
}

/**
 * n cells placed uniformly in a 240 x 90 x 70 um box (3-D) or 240 x 90 (2-D),
 * each with an anisotropic jitter covariance: standard deviations `sd` scaled by
 * a per-cell factor in [0.8, 1.2], rotated randomly.
 */
export function syntheticLayout(rng: Rng, n: number, dim: 2 | 3 = 3, sd: readonly number[] = [3, 2.5, 2]): SyntheticLayout {
  const box = [240, 90, 70];
  const labels = syntheticLabels(n);
  const means = labels.map(() => Array.from({ length: dim }, (_, j) => (rng() - 0.5) * box[j]));
  const covariances = labels.map(() => {
    const f = 0.8 + 0.4 * rng();
    const r = randomRotation(rng, dim);
    const s = Array.from({ length: dim }, (_, j) => (sd[j] * f) ** 2);
    return r.map((ri) => r.map((rj) => ri.reduce((acc, v, k) => acc + v * s[k] * rj[k], 0)));
  });
  return { labels, means, covariances };
}

export interface GroupOptions {
  readonly animals: number;
  /** Extra displacement (um) of some cells in this group, by label. */
  readonly displaced?: ReadonlyMap<string, readonly number[]>;
  /** Map from the true frame into this template's frame (default identity). */
  readonly frame?: Transform;
  /** Probability that an animal misses a cell (default 0). */
  readonly missing?: number;
  /** Prior strength nu_0 of the covariance shrinkage toward the pooled covariance (default 5). */
  readonly priorStrength?: number;
  /** Keep members' positions (default true). */
  readonly keepPositions?: boolean;
}

function randomTransform(rng: Rng, dim: 2 | 3): Transform {
  const r = randomRotation(rng, dim);
  return { kind: 'rigid', linear: r, translation: Array.from({ length: dim }, () => (rng() - 0.5) * 400) };
}

/**
 * Simulate one group of animals and summarise it as a Template: cell mean, sample
 * covariance shrunk toward the pooled covariance, Sigma = (nu_0 Sigma_pooled + (n - 1) S) /
 * (nu_0 + n - 1), count, sum and sum of squares (in the template frame); members with
 * their positions in their own (randomly posed) coordinates and the transform to the frame.
 */
export function simulateTemplate(rng: Rng, layout: SyntheticLayout, options: GroupOptions): Template {
  const dim = layout.means[0].length as 2 | 3;
  const frame = options.frame ?? { kind: 'similarity', linear: identity(dim), translation: new Array(dim).fill(0) };
  const nu0 = options.priorStrength ?? 5;
  const chol = layout.covariances.map((c) => cholesky(c));
  const members: TemplateMember[] = [];
  const observations: number[][][] = layout.labels.map(() => []);
  for (let m = 0; m < options.animals; m++) {
    const own = randomTransform(rng, dim);
    const toTemplate = invertTransform(own);
    const positions: { label: string; coords: number[] }[] = [];
    layout.labels.forEach((label, i) => {
      if (options.missing && rng() < options.missing) return;
      const z = Array.from({ length: dim }, () => randomNormal(rng));
      const shift = options.displaced?.get(label);
      const truth = layout.means[i].map((v, j) => v + (shift ? shift[j] : 0) + chol[i][j].reduce((acc, l, k) => acc + l * z[k], 0));
      const inFrame = applyToPoint(frame, truth);
      observations[i].push(inFrame);
      positions.push({ label, coords: applyToPoint(own, inFrame) });
    });
    members.push({
      id: `animal-${m + 1}`,
      hash: '0'.repeat(64),
      transform: { kind: 'rigid', linear: toTemplate.linear, translation: toTemplate.translation },
      residual: 0,
      labelled: positions.length,
      positions: options.keepPositions === false ? [] : positions,
    });
  }
  const sample = observations.map((obs) => summarise(obs, dim));
  // Pooled within-cell covariance over cells with n >= 2.
  const pooled = zeros(dim);
  let pooledDf = 0;
  sample.forEach((s) => {
    if (s.n < 2) return;
    for (let a = 0; a < dim; a++) for (let b = 0; b < dim; b++) pooled[a][b] += s.scatter[a][b];
    pooledDf += s.n - 1;
  });
  for (let a = 0; a < dim; a++) for (let b = 0; b < dim; b++) pooled[a][b] /= Math.max(1, pooledDf);
  const cells: TemplateCell[] = [];
  layout.labels.forEach((label, i) => {
    const s = sample[i];
    if (s.n === 0) return;
    const covariance = pooled.map((row, a) => row.map((v, b) => (nu0 * v + s.scatter[a][b]) / (nu0 + s.n - 1)));
    cells.push({ label, mean: s.mean, covariance, count: s.n, sum: s.sum, sumOfSquares: s.sumOfSquares, sparse: s.n < 5 });
  });
  return {
    format: 'cairn-template',
    version: 1,
    dim,
    units: 'um',
    cells,
    members,
    pooledCovariance: pooled,
    settings: { tolerance: 1e-3, maxIterations: 100, alignment: 'similarity', minCount: 5, priorStrength: nu0, flagProbability: 0.001, robust: 'trimmed' },
    flagged: [],
    tool: { name: 'cairn', version: 'test' },
  };
}

function summarise(obs: number[][], dim: number): { n: number; mean: number[]; sum: number[]; sumOfSquares: number[][]; scatter: number[][] } {
  const n = obs.length;
  const sum = new Array<number>(dim).fill(0);
  const sumOfSquares = zeros(dim);
  for (const x of obs) for (let a = 0; a < dim; a++) {
    sum[a] += x[a];
    for (let b = 0; b < dim; b++) sumOfSquares[a][b] += x[a] * x[b];
  }
  const mean = sum.map((v) => v / Math.max(1, n));
  const scatter = zeros(dim);
  for (const x of obs) for (let a = 0; a < dim; a++) for (let b = 0; b < dim; b++) scatter[a][b] += (x[a] - mean[a]) * (x[b] - mean[b]);
  return { n, mean, sum, sumOfSquares, scatter };
}

function zeros(d: number): number[][] {
  return Array.from({ length: d }, () => new Array<number>(d).fill(0));
}

function identity(d: number): number[][] {
  return Array.from({ length: d }, (_, i) => Array.from({ length: d }, (_, j) => (i === j ? 1 : 0)));
}

/** A transform x -> c R x + t with a random rotation. */
export function randomSimilarity(rng: Rng, dim: 2 | 3, scale = 1): Transform {
  const r = randomRotation(rng, dim);
  return { kind: 'similarity', linear: r.map((row) => row.map((v) => v * scale)), translation: Array.from({ length: dim }, () => (rng() - 0.5) * 300) };
}
