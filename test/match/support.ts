/**
 * Test helpers for the matcher: templates built straight from a synthetic
 * layout, or from generated training animals aligned by their known
 * deformation (so that matcher tests do not depend on the template module).
 */
import { createHash } from 'node:crypto';
import { fitSimilarity } from '../../src/geometry/index.js';
import type { PairGains } from '../../src/match/softassign.js';
import type { Rng } from '../../src/random.js';
import type { Template, TemplateCell, TemplateMember } from '../../src/types.js';
import { TEMPLATE_FORMAT, TEMPLATE_VERSION } from '../../src/types.js';
import type { AnimalOptions, Layout } from '../support/animals.js';
import { generateAnimal } from '../support/animals.js';

const SETTINGS = {
  tolerance: 1e-6,
  maxIterations: 100,
  alignment: 'similarity' as const,
  minCount: 3,
  priorStrength: 4,
  flagProbability: 1e-3,
  robust: 'none',
};

function assemble(layout: Layout, cells: TemplateCell[], members: TemplateMember[], pooled: number[][]): Template {
  return {
    format: TEMPLATE_FORMAT,
    version: TEMPLATE_VERSION,
    dim: layout.dim,
    units: 'um',
    cells,
    members,
    pooledCovariance: pooled,
    settings: SETTINGS,
    flagged: [],
    tool: { name: 'cairn', version: 'test' },
  };
}

/** The layout itself as a template: means = positions, covariance = jitter, a large count. */
export function templateFromLayout(layout: Layout, count = 1000): Template {
  const d = layout.dim;
  const pooled = Array.from({ length: d }, (_, a) =>
    Array.from({ length: d }, (_, b) => layout.jitter.reduce((s, j) => s + j[a][b], 0) / layout.jitter.length),
  );
  const cells: TemplateCell[] = layout.labels.map((label, k) => ({
    label,
    mean: layout.positions[k].slice(),
    covariance: layout.jitter[k].map((r) => r.slice()),
    count,
    sum: layout.positions[k].map((v) => v * count),
    sumOfSquares: layout.jitter[k].map((r, a) => r.map((v, b) => (v + layout.positions[k][a] * layout.positions[k][b]) * count)),
    sparse: false,
  }));
  return assemble(layout, cells, [], pooled);
}

export interface TrainingOptions {
  members?: number;
  /** Fraction of each training animal's cells that carry a label (default 0.6). */
  labelledFraction?: number;
  /** Pseudo-observations of the pooled covariance added to each cell's (default 4). */
  priorStrength?: number;
  animal?: AnimalOptions;
}

/**
 * A template in the layout frame from `members` generated animals labelled at
 * `labelledFraction`: each labelled point is mapped back by the animal's exact
 * deformation (toLayoutFrame), then per cell mean and covariance (n - 1) are
 * taken and shrunk toward the pooled covariance:
 * Sigma_k = ((n_k - 1) S_k + kappa Sigma_pool) / (n_k - 1 + kappa).
 * Members keep their labelled positions and a similarity into the frame.
 */
export function templateFromTraining(layout: Layout, rng: Rng, options: TrainingOptions = {}): Template {
  const d = layout.dim;
  const K = layout.labels.length;
  const kappa = options.priorStrength ?? 4;
  const obs: number[][][] = Array.from({ length: K }, () => []);
  const index = new Map(layout.labels.map((l, k) => [l, k]));
  const members: TemplateMember[] = [];
  for (let m = 0; m < (options.members ?? 25); m++) {
    const animal = generateAnimal(layout, rng, `train${m}`, {
      outlierFraction: 0,
      missingFraction: 0.1,
      ...options.animal,
      labelledFraction: options.labelledFraction ?? 0.6,
    });
    const positions: { label: string; coords: number[] }[] = [];
    const own: number[][] = [], framed: number[][] = [];
    animal.sample.coords.forEach((p, i) => {
      const label = animal.sample.labels[i];
      if (label === null) return;
      const q = animal.toLayoutFrame(p);
      obs[index.get(label) as number].push(q);
      positions.push({ label, coords: p.slice() });
      own.push(p.slice());
      framed.push(q);
    });
    const fit = fitSimilarity(own, framed);
    members.push({
      id: animal.sample.id,
      hash: createHash('sha256').update(animal.sample.id).digest('hex'),
      transform: fit.transform,
      residual: Math.sqrt(fit.meanSquaredResidual),
      labelled: positions.length,
      positions,
    });
  }
  const pooled = Array.from({ length: d }, () => new Array<number>(d).fill(0));
  let dof = 0;
  const stats = obs.map((list) => {
    const n = list.length;
    const mean = new Array<number>(d).fill(0);
    for (const p of list) for (let a = 0; a < d; a++) mean[a] += p[a] / Math.max(1, n);
    const scatter = Array.from({ length: d }, () => new Array<number>(d).fill(0));
    for (const p of list) for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) scatter[a][b] += (p[a] - mean[a]) * (p[b] - mean[b]);
    if (n > 1) {
      for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) pooled[a][b] += scatter[a][b];
      dof += n - 1;
    }
    return { n, mean, scatter };
  });
  for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) pooled[a][b] /= Math.max(1, dof);
  const cells: TemplateCell[] = layout.labels.map((label, k) => {
    const { n, mean, scatter } = stats[k];
    const denominator = Math.max(0, n - 1) + kappa;
    const covariance = scatter.map((row, a) => row.map((v, b) => (v + kappa * pooled[a][b]) / denominator));
    const sum = mean.map((v) => v * n);
    const sumOfSquares = scatter.map((row, a) => row.map((v, b) => v + n * mean[a] * mean[b]));
    return { label, mean: n > 0 ? mean : layout.positions[k].slice(), covariance, count: n, sum, sumOfSquares, sparse: n < 3 };
  });
  return assemble(layout, cells, members, pooled);
}

/** A pair table from a dense gain matrix (rows = points); null = no pair. */
export function pairTable(gains: (number | null)[][]): PairGains {
  const rowStart = [0];
  const cells: number[] = [], g: number[] = [];
  for (const row of gains) {
    row.forEach((v, k) => {
      if (v === null) return;
      cells.push(k);
      g.push(v);
    });
    rowStart.push(cells.length);
  }
  return { rowStart: Int32Array.from(rowStart), cells: Int32Array.from(cells), gains: Float64Array.from(g), distances: new Float64Array(g.length) };
}
