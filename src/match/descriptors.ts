/**
 * Orientation-invariant point descriptors and the ranking of point-cell
 * candidate pairs built on them.
 *
 * Descriptor of point i within a point set P (n points), before normalisation:
 *
 *   c_r(i) = #{ j != i : |p_j - p_i| <= r }      for radii r_1 < ... < r_R (geometric)
 *   q_u(i) = u-quantile of { |p_j - p_i| : j != i }   for u in U
 *
 * Both depend only on inter-point distances, so they do not change under
 * rotation, reflection or translation of the sample (Belongie, Malik & Puzicha
 * 2002 use the same idea with angular bins; shape distributions, Osada et al.
 * 2002). Radii span the local neighbourhood to about half the head, so a
 * descriptor mixes local context with a point's position along the body.
 *
 * Each feature is then replaced by (R - 1/2) / n, R its rank within its own
 * point set (ties: mean rank), so values lie in (0, 1): a rank transform makes the features
 * insensitive to the overall density, hence to random missing cells, partial
 * hand labelling and the animal's scale, and limits what outliers can do to
 * the ranks of the true points (they shift them by at most the outlier share).
 *
 * Expected values per cell (mean m_kf and variance v_kf of each normalised
 * feature) are learned from the template's members when their labelled
 * positions are available (the rank transform makes a member labelled at 60%
 * comparable with a fully detected animal), otherwise from pseudo-animals
 * drawn from the template's own Gaussians. The cost of pairing point i with
 * cell k is
 *
 *   C_ik = sum_f (z_if - m_kf)^2 / (v_kf + tau^2)
 *
 * with tau = 0.05 absorbing what the training data cannot show (outliers).
 * Each point's candidates are its cells of lowest cost.
 */
import type { Rng } from '../random.js';
import { applyToPoint, cholesky } from '../geometry/index.js';
import type { Points, Template } from '../types.js';
import { drawPseudoAnimal, type CellModel } from './cell-model.js';

export interface DescriptorSpec {
  /** Radii (template units), ascending. */
  readonly radii: readonly number[];
  /** Distance quantiles in (0, 1). */
  readonly quantiles: readonly number[];
}

export interface CellDescriptors {
  readonly spec: DescriptorSpec;
  /** K x F means of the normalised features. */
  readonly mean: Float64Array;
  /** K x F variances plus tau^2 (ready to divide by). */
  readonly variance: Float64Array;
  readonly features: number;
  /** Where the statistics came from. */
  readonly source: 'members' | 'simulated';
}

const TAU = 0.05;
const QUANTILES = [0.05, 0.15, 0.3, 0.5, 0.7, 0.9];
const RADIUS_COUNT = 7;

/**
 * Radii for the descriptors from the template's geometry: geometric from
 * 2 x the median nearest-neighbour distance of the means to half the largest
 * distance from the centroid. Shapes: means K x d.
 */
export function descriptorSpec(means: Points): DescriptorSpec {
  const K = means.length, d = means[0].length;
  const nn: number[] = [];
  const centroid = new Array<number>(d).fill(0);
  for (const m of means) for (let a = 0; a < d; a++) centroid[a] += m[a] / K;
  let far = 0;
  for (let i = 0; i < K; i++) {
    let best = Infinity, r = 0;
    for (let j = 0; j < K; j++) {
      if (j === i) continue;
      let s = 0;
      for (let a = 0; a < d; a++) s += (means[i][a] - means[j][a]) ** 2;
      if (s < best) best = s;
    }
    for (let a = 0; a < d; a++) r += (means[i][a] - centroid[a]) ** 2;
    far = Math.max(far, Math.sqrt(r));
    if (Number.isFinite(best)) nn.push(Math.sqrt(best));
  }
  nn.sort((a, b) => a - b);
  const half = nn.length >> 1;
  const spacing = nn.length === 0 ? 1 : nn.length % 2 ? nn[half] : (nn[half - 1] + nn[half]) / 2;
  const lo = Math.max(1e-9, 2 * spacing);
  const hi = Math.max(lo * 1.5, far);
  const radii: number[] = [];
  for (let r = 0; r < RADIUS_COUNT; r++) radii.push(lo * Math.pow(hi / lo, r / (RADIUS_COUNT - 1)));
  return { radii, quantiles: QUANTILES };
}

/** Raw descriptors (n x F) of every point of `points`; F = radii + quantiles. */
export function rawDescriptors(points: Points, spec: DescriptorSpec): number[][] {
  const n = points.length, d = n ? points[0].length : 0;
  const out: number[][] = [];
  const dist = new Float64Array(Math.max(0, n - 1));
  for (let i = 0; i < n; i++) {
    let c = 0;
    for (let j = 0; j < n; j++) {
      if (j === i) continue;
      let s = 0;
      for (let a = 0; a < d; a++) s += (points[i][a] - points[j][a]) ** 2;
      dist[c++] = Math.sqrt(s);
    }
    dist.sort();
    const f: number[] = [];
    for (const r of spec.radii) f.push(upperBound(dist, r));
    for (const u of spec.quantiles) f.push(n > 1 ? dist[Math.min(n - 2, Math.floor(u * (n - 1)))] : 0);
    out.push(f);
  }
  return out;
}

function upperBound(sorted: Float64Array, v: number): number {
  let lo = 0, hi = sorted.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (sorted[mid] <= v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Column-wise (R - 1/2) / n of an n x F table, R the 1-based rank with ties
 * sharing their mean rank (R's rank(ties.method = "average")); values lie in (0, 1).
 */
export function rankNormalize(table: readonly (readonly number[])[]): number[][] {
  const n = table.length;
  if (n === 0) return [];
  const F = table[0].length;
  const out = table.map(() => new Array<number>(F).fill(0));
  const order = table.map((_, i) => i);
  for (let f = 0; f < F; f++) {
    order.sort((a, b) => table[a][f] - table[b][f] || a - b);
    let i = 0;
    while (i < n) {
      let j = i;
      while (j + 1 < n && table[order[j + 1]][f] === table[order[i]][f]) j++;
      const rank = (i + j) / 2 + 0.5;
      for (let t = i; t <= j; t++) out[order[t]][f] = rank / n;
      i = j + 1;
    }
  }
  return out;
}

/**
 * Per-cell expected descriptors, from the template's members (their labelled
 * positions mapped into the template frame by their transforms) when at least
 * 3 members carry positions, else from 16 pseudo-animals drawn from
 * N(mu_k, S_k) with 15% of cells left out at random.
 */
export function learnCellDescriptors(template: Template, model: CellModel, rng: Rng): CellDescriptors {
  const spec = descriptorSpec(model.meanRows);
  const F = spec.radii.length + spec.quantiles.length;
  const K = model.size;
  const sum = new Float64Array(K * F), sum2 = new Float64Array(K * F), cnt = new Float64Array(K);
  const add = (cells: number[], pts: number[][]): void => {
    if (pts.length < 3) return;
    const z = rankNormalize(rawDescriptors(pts, spec));
    cells.forEach((k, i) => {
      cnt[k]++;
      for (let f = 0; f < F; f++) {
        sum[k * F + f] += z[i][f];
        sum2[k * F + f] += z[i][f] * z[i][f];
      }
    });
  };
  const withPositions = template.members.filter((m) => m.positions && m.positions.length >= 3);
  let source: CellDescriptors['source'] = 'members';
  if (withPositions.length >= 3) {
    for (const m of withPositions) {
      const cells: number[] = [], pts: number[][] = [];
      for (const p of m.positions) {
        const k = model.labelIndex.get(p.label);
        if (k === undefined) continue;
        cells.push(k);
        pts.push(applyToPoint(m.transform, p.coords));
      }
      add(cells, pts);
    }
  }
  // Cells seen fewer than 3 times (or no members at all): pseudo-animals from the template's Gaussians.
  const short = (): boolean => Array.from(cnt).some((c) => c < 3);
  if (withPositions.length < 3 || short()) {
    if (withPositions.length < 3) source = 'simulated';
    const factors = model.covariances.map((s) => cholesky(s));
    for (let rep = 0; rep < 16 && (source === 'simulated' || short()); rep++) {
      const animal = drawPseudoAnimal(model, factors, rng);
      add(animal.cells, animal.points);
    }
  }
  const mean = new Float64Array(K * F), variance = new Float64Array(K * F);
  for (let k = 0; k < K; k++)
    for (let f = 0; f < F; f++) {
      const c = Math.max(1, cnt[k]);
      const m = sum[k * F + f] / c;
      mean[k * F + f] = m;
      const v = cnt[k] > 1 ? Math.max(0, (sum2[k * F + f] - c * m * m) / (c - 1)) : 0.05;
      variance[k * F + f] = v + TAU * TAU;
    }
  return { spec, mean, variance, features: F, source };
}

/**
 * Candidate cells of every point: the `perPoint` cells of lowest cost C_ik,
 * ascending, with their costs. Shapes: z n x F (normalised descriptors).
 */
export function rankCandidates(
  z: readonly (readonly number[])[],
  cells: CellDescriptors,
  perPoint: number,
): { cells: Int32Array[]; costs: Float64Array[] } {
  const K = cells.mean.length / cells.features;
  const F = cells.features;
  const outCells: Int32Array[] = [], outCosts: Float64Array[] = [];
  const cost = new Float64Array(K);
  const order = new Int32Array(K);
  const take = Math.min(perPoint, K);
  for (const zi of z) {
    for (let k = 0; k < K; k++) {
      let s = 0;
      for (let f = 0; f < F; f++) {
        const diff = zi[f] - cells.mean[k * F + f];
        s += (diff * diff) / cells.variance[k * F + f];
      }
      cost[k] = s;
      order[k] = k;
    }
    const sorted = Array.from(order).sort((a, b) => cost[a] - cost[b] || a - b).slice(0, take);
    outCells.push(Int32Array.from(sorted));
    outCosts.push(Float64Array.from(sorted.map((k) => cost[k])));
  }
  return { cells: outCells, costs: outCosts };
}
