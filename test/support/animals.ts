/**
 * Seeded generator of realistic synthetic animals, for tests, benchmarks and
 * the demo data. Nothing here is real data: the layout, the cell names and the
 * animals are invented (see docs/demo-scenario.md).
 *
 * A `Layout` is one invented stereotyped head: `cells` positions packed inside
 * an elongated ellipsoid (long axis 3-4x the two nearly equal short axes),
 * centred at the origin with the long axis along x, rescaled so that the
 * median nearest-neighbour distance is exactly `nearestSpacing`, and a
 * per-cell anisotropic jitter covariance (standard deviations 1-3 um along
 * randomly oriented axes).
 *
 * An `Animal` is one observation of that layout:
 *
 *   observed = t + s R bend(p + e),   e ~ N(0, jitterScale^2 Sigma_cell)
 *
 * where bend(q) = q + A (q_x / x_max)^2 u shifts points perpendicular to the
 * long axis (u a random unit vector perpendicular to x, |A| <= bend), s is a
 * uniform scale, R a uniformly random rotation and t a translation. Some cells
 * are dropped (missing), outliers are added in the layout frame (scattered in
 * a box around the head, plus one dense cluster beside it) and deformed with
 * the head, labels are kept for a fraction of the true points and a fraction
 * of those is swapped with a neighbouring cell's label. `toLayoutFrame` is the
 * exact inverse of x -> t + s R bend(x).
 *
 * Every random choice comes from the `rng` argument: the same seed gives the
 * same output.
 */
import type { Dim, Sample } from '../../src/types.js';
import type { Rng } from '../../src/random.js';
import { randomNormal, randomRotation, shuffle as shuffled } from '../../src/random.js';
import { inverse as invertMatrix } from '../../src/geometry/linear-algebra.js';

export interface Layout {
  dim: Dim;
  labels: string[];
  positions: number[][];
  /** Per-cell jitter covariance, um^2 (d x d, positive definite). */
  jitter: number[][][];
}

export interface LayoutOptions {
  /** Number of cells (default 190). */
  cells?: number;
  /** 2 or 3 (default 3). */
  dim?: Dim;
  /** Target median nearest-neighbour distance, um (default 2). */
  nearestSpacing?: number;
  /** Prepended to every cell name (default ''). */
  namePrefix?: string;
  /** Range of per-axis jitter standard deviations, um (default [1, 3]). */
  jitterRange?: [number, number];
  /** Long axis / short axis ratio range (default [3, 4]). */
  elongationRange?: [number, number];
  /**
   * How cells fill the head (default 'uniform'): 'uniform' packs them evenly
   * through the ellipsoid; 'ganglia' packs them into a few compact clusters
   * (bilateral pairs off the midline plus midline clusters, dorsal and ventral
   * unlike), leaving gaps between them, as nervous systems group nuclei in
   * ganglia around a neuropil. The uneven density is what fixes a head's roll
   * about its long axis when per-cell jitter blurs the fine arrangement.
   */
  arrangement?: 'uniform' | 'ganglia';
}

export interface AnimalOptions {
  /** Fraction of cells not detected (default 0.15). */
  missingFraction?: number;
  /** Outliers as a fraction of all output points (default 0.2). */
  outlierFraction?: number;
  /** Share of outliers in one dense cluster beside the head (default 0.5). */
  clusteredOutlierShare?: number;
  /** Uniform scale drawn in [1-r, 1+r] (default 0.1). */
  scaleRange?: number;
  /** Max bend amplitude along the long axis, um (default 3). */
  bend?: number;
  /** Any rotation (default true); false = identity. */
  rotate?: boolean;
  /** Max translation per axis, um (default 100). */
  translate?: number;
  /** Fraction of true cell points that keep their label (default 0). */
  labelledFraction?: number;
  /** Fraction of labelled points whose label is swapped with a neighbouring cell's (default 0). */
  wrongLabelFraction?: number;
  /** Multiplies the layout's jitter standard deviations (default 1). */
  jitterScale?: number;
  /** Shuffle point order (default true). */
  shuffle?: boolean;
  /**
   * Fraction of the cells cut off by a plane, as when the imaged volume
   * misses one end or side of the head (default 0). The plane is normal to a
   * random direction and placed so that this fraction of the cells left by
   * missingFraction lies beyond it; scattered outliers are unaffected.
   */
  cropFraction?: number;
  /**
   * Largest error of the axial scale (default 0): the sample's last axis
   * (the imaging axis, z in 3-D) is stretched by a factor drawn uniformly in
   * [1 - a, 1 + a] after the animal is turned into the sample frame, as when
   * a refractive-index mismatch stretches or squashes depth. With 0 no
   * number is drawn for it, so animals are the same as without the option.
   */
  axialScaleRange?: number;
  /**
   * Standard deviation (um, per axis) of a smooth local warp (default 0):
   * four displacement bumps, each a Gaussian of width a quarter of the head's
   * length centred on a random cell, with amplitudes drawn N(0, warp^2) per
   * axis, less their least-squares affine fit over the cells (so that the
   * warp is purely non-affine), added to the jittered cells. Neighbouring cells move together, as
   * whole ganglia shift between real animals. Like the jitter it is cell-level
   * variability: the template's covariances take it in, and toLayoutFrame
   * does not undo it. With 0 no number is drawn for it, so animals are the
   * same as without the option.
   */
  warp?: number;
}

export interface Animal {
  /** Labels per options (null = unlabelled); rows = 2..n+1 as if read from a CSV. */
  sample: Sample;
  /** True cell of each point, null for outliers. */
  truth: (string | null)[];
  /** Layout index of each point's true cell, null for outliers (parallel to `truth`). */
  truthIndex: (number | null)[];
  /** Exact inverse of this animal's deformation (translation, axial stretch, rotation, scale, bend); jitter excluded. */
  toLayoutFrame: (p: readonly number[]) => number[];
  scale: number;
  /** Stretch of the sample's last axis (1 without axialScaleRange); the map to the layout frame has Jacobian 1 / (scale^d axialScale). */
  axialScale: number;
  rotation: number[][];
  /** Translation t (um). */
  translation: number[];
  /** Signed bend amplitude A (um) and its direction u. */
  bendAmplitude: number;
  bendDirection: number[];
  /** Indices (into the layout) of the cells that were left out, ascending (random misses and the crop). */
  missingCells: number[];
  /** Unit normal (layout frame) of the cropping plane, pointing to the cut side; null without a crop. */
  cropDirection: number[] | null;
  /** Indices of points whose label differs from the truth. */
  wrongLabelPoints: number[];
  /** Maps a layout-frame point forward: x -> t + s R bend(x). */
  fromLayoutFrame: (p: readonly number[]) => number[];
}

/** Invented band names, anterior to posterior along the long axis (see docs/demo-scenario.md). */
export const BAND_NAMES = ['Tol', 'Vem', 'Sar', 'Dun', 'Kif', 'Orb', 'Pel', 'Gax'] as const;

function dot(a: readonly number[], b: readonly number[]): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

function dist2(a: readonly number[], b: readonly number[]): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) {
    const d = a[i] - b[i];
    s += d * d;
  }
  return s;
}

function matVec(m: readonly (readonly number[])[], v: readonly number[]): number[] {
  return m.map((row) => dot(row, v));
}

function matTVec(m: readonly (readonly number[])[], v: readonly number[]): number[] {
  const out = new Array<number>(v.length).fill(0);
  for (let i = 0; i < m.length; i++) for (let j = 0; j < v.length; j++) out[j] += m[i][j] * v[i];
  return out;
}

/** Lower Cholesky factor of a small SPD matrix. */
function choleskyLower(a: readonly (readonly number[])[]): number[][] {
  const n = a.length;
  const l = Array.from({ length: n }, () => new Array<number>(n).fill(0));
  for (let i = 0; i < n; i++) {
    for (let j = 0; j <= i; j++) {
      let s = a[i][j];
      for (let k = 0; k < j; k++) s -= l[i][k] * l[j][k];
      l[i][j] = i === j ? Math.sqrt(Math.max(s, 0)) : s / l[j][j];
    }
  }
  return l;
}

function uniform(rng: Rng, lo: number, hi: number): number {
  return lo + (hi - lo) * rng();
}

/** Nearest-neighbour distance of each point (brute force, n^2); points must number at least 2. */
export function nearestNeighbourDistances(points: readonly (readonly number[])[]): number[] {
  return points.map((p, i) => {
    let best = Infinity;
    for (let j = 0; j < points.length; j++) if (j !== i) best = Math.min(best, dist2(p, points[j]));
    return Math.sqrt(best);
  });
}

/** Median (mean of the two middle values for even counts). */
export function median(values: readonly number[]): number {
  const s = values.slice().sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Indices of the k nearest other points of point i. */
export function nearestIndices(points: readonly (readonly number[])[], i: number, k: number): number[] {
  return points
    .map((p, j) => ({ j, d: j === i ? Infinity : dist2(points[i], p) }))
    .sort((a, b) => a.d - b.d || a.j - b.j)
    .slice(0, k)
    .map((e) => e.j);
}

/**
 * An invented stereotyped layout: random sequential packing (dart throwing
 * with a minimum distance) inside an ellipsoid with semi-axes (a, b, c),
 * a / b drawn in `elongationRange`, c / b in [0.9, 1]; then centred and
 * rescaled so the median nearest-neighbour distance equals `nearestSpacing`
 * exactly. Jitter: Sigma = Q diag(s^2) Q^T with s drawn in `jitterRange` per
 * axis and Q a uniformly random rotation per cell.
 * Names: see `nameCells`.
 */
export function generateLayout(rng: Rng, options: LayoutOptions = {}): Layout {
  const n = options.cells ?? 190;
  const dim: Dim = options.dim ?? 3;
  const spacing = options.nearestSpacing ?? 2;
  const [jLo, jHi] = options.jitterRange ?? [1, 3];
  const [eLo, eHi] = options.elongationRange ?? [3, 4];
  if (!Number.isInteger(n) || n < 2) throw new RangeError(`generateLayout: cells must be an integer >= 2, got ${n}`);
  if (dim !== 2 && dim !== 3) throw new RangeError(`generateLayout: dim must be 2 or 3, got ${String(dim)}`);
  if (!(spacing > 0)) throw new RangeError(`generateLayout: nearestSpacing must be > 0, got ${spacing}`);
  if (!(jLo > 0 && jHi >= jLo && Number.isFinite(jHi)))
    throw new RangeError(`generateLayout: jitterRange must satisfy 0 < low <= high, got [${jLo}, ${jHi}]`);
  if (!(eLo >= 1 && eHi >= eLo && Number.isFinite(eHi)))
    throw new RangeError(`generateLayout: elongationRange must satisfy 1 <= low <= high, got [${eLo}, ${eHi}]`);

  const b = 1;
  const a = uniform(rng, eLo, eHi) * b;
  const c = uniform(rng, 0.9, 1) * b;
  const semi = dim === 3 ? [a, b, c] : [a, b];
  const ganglia = (options.arrangement ?? 'uniform') === 'ganglia' ? generateGanglia(rng, semi) : null;
  const volume = (dim === 3 ? (4 / 3) * Math.PI * a * b * c : Math.PI * a * b) * (ganglia ? gangliaVolumeShare(rng, semi, ganglia) : 1);
  let minDist = 0.7 * Math.pow(volume / n, 1 / dim);

  let positions: number[][] = [];
  for (;;) {
    positions = [];
    let attempts = 0;
    while (positions.length < n && attempts < 200 * n) {
      attempts++;
      const p = semi.map((s) => uniform(rng, -s, s));
      let r = 0;
      for (let k = 0; k < dim; k++) r += (p[k] / semi[k]) ** 2;
      if (r > 1) continue;
      if (ganglia && !insideGanglia(p, ganglia)) continue;
      const md2 = minDist * minDist;
      if (positions.some((q) => dist2(p, q) < md2)) continue;
      positions.push(p);
    }
    if (positions.length === n) break;
    minDist *= 0.95;
  }

  // Centre, then rescale to the target median nearest-neighbour distance.
  const centre = new Array<number>(dim).fill(0);
  for (const p of positions) for (let k = 0; k < dim; k++) centre[k] += p[k] / n;
  const factor = spacing / median(nearestNeighbourDistances(positions));
  positions = positions.map((p) => p.map((v, k) => (v - centre[k]) * factor));

  const jitter = positions.map(() => {
    const q = randomRotation(rng, dim);
    const s = Array.from({ length: dim }, () => uniform(rng, jLo, jHi));
    const out: number[][] = Array.from({ length: dim }, () => new Array<number>(dim).fill(0));
    for (let i = 0; i < dim; i++)
      for (let j = 0; j < dim; j++) {
        let v = 0;
        for (let k = 0; k < dim; k++) v += q[i][k] * s[k] * s[k] * q[j][k];
        out[i][j] = v;
      }
    // Exact symmetry.
    for (let i = 0; i < dim; i++) for (let j = 0; j < i; j++) out[i][j] = out[j][i];
    return out;
  });

  const labels = nameCells(positions, options.namePrefix ?? '');
  return { dim, labels, positions, jitter };
}

/** An axis-aligned ellipsoidal cluster of nuclei: centre and semi-axes. */
interface Ganglion {
  centre: number[];
  radii: number[];
}

/**
 * Invented ganglia for the 'ganglia' arrangement, in the unit-short-axis frame
 * of the head (semi-axes `semi`, long axis x): three bilateral pairs at
 * random positions along the head (left and right mirror images across y = 0,
 * each pair dorsal or ventral at random), plus two unpaired clusters on the
 * midline, one ventral and one dorsal at different positions along x.
 */
function generateGanglia(rng: Rng, semi: readonly number[]): Ganglion[] {
  const dim = semi.length;
  const [a, b] = semi;
  const c = dim === 3 ? semi[2] : 0;
  const out: Ganglion[] = [];
  const along = (lo: number, hi: number) => uniform(rng, lo, hi) * a;
  for (let pair = 0; pair < 3; pair++) {
    const x = along(-0.75 + 0.5 * pair, -0.35 + 0.5 * pair);
    const y = uniform(rng, 0.35, 0.6) * b;
    const z = dim === 3 ? (rng() < 0.5 ? -1 : 1) * uniform(rng, 0.1, 0.45) * c : 0;
    const radii = [uniform(rng, 0.14, 0.24) * a, uniform(rng, 0.3, 0.42) * b, uniform(rng, 0.3, 0.42) * (dim === 3 ? c : b)];
    for (const side of [1, -1]) out.push({ centre: dim === 3 ? [x, side * y, z] : [x, side * y], radii: radii.slice(0, dim) });
  }
  for (const dz of [-1, 1]) {
    const x = along(dz < 0 ? -0.6 : 0.1, dz < 0 ? -0.1 : 0.6);
    const centre = dim === 3 ? [x, 0, dz * uniform(rng, 0.5, 0.7) * c] : [x, dz * uniform(rng, 0.5, 0.7) * b];
    const radii = [uniform(rng, 0.15, 0.25) * a, uniform(rng, 0.3, 0.4) * b, uniform(rng, 0.25, 0.35) * (dim === 3 ? c : b)];
    out.push({ centre, radii: radii.slice(0, dim) });
  }
  return out;
}

function insideGanglia(p: readonly number[], ganglia: readonly Ganglion[]): boolean {
  for (const g of ganglia) {
    let r = 0;
    for (let k = 0; k < p.length; k++) r += ((p[k] - g.centre[k]) / g.radii[k]) ** 2;
    if (r <= 1) return true;
  }
  return false;
}

/** Share of the head's ellipsoid covered by the ganglia (Monte Carlo, 4000 draws from the layout's rng). */
function gangliaVolumeShare(rng: Rng, semi: readonly number[], ganglia: readonly Ganglion[]): number {
  let inside = 0, total = 0;
  for (let i = 0; i < 4000; i++) {
    const p = semi.map((s) => uniform(rng, -s, s));
    let r = 0;
    for (let k = 0; k < p.length; k++) r += (p[k] / semi[k]) ** 2;
    if (r > 1) continue;
    total++;
    if (insideGanglia(p, ganglia)) inside++;
  }
  return Math.max(0.05, inside / Math.max(1, total));
}

/**
 * The invented naming scheme: `<band>-<side><index>`, e.g. "Sar-L4".
 * Cells are split into bands of (nearly) equal count along the long axis
 * (x, ascending), band names from BAND_NAMES (6 bands, or fewer for small
 * layouts); side L (y > w), R (y < -w) or M (midline, |y| <= w) where w is a
 * fifth of the y standard deviation; index counts 1.. within band and side,
 * in ascending x.
 */
function nameCells(positions: readonly (readonly number[])[], prefix: string): string[] {
  const n = positions.length;
  const bands = Math.max(1, Math.min(6, Math.floor(n / 8)));
  const order = positions.map((_, i) => i).sort((i, j) => positions[i][0] - positions[j][0] || i - j);
  const ys = positions.map((p) => p[1]);
  const meanY = ys.reduce((s, v) => s + v, 0) / n;
  const sdY = Math.sqrt(ys.reduce((s, v) => s + (v - meanY) ** 2, 0) / n);
  const w = sdY / 5;
  const labels = new Array<string>(n);
  const counters = new Map<string, number>();
  order.forEach((cell, rank) => {
    const band = BAND_NAMES[Math.min(bands - 1, Math.floor((rank * bands) / n))];
    const y = positions[cell][1];
    const side = y > w ? 'L' : y < -w ? 'R' : 'M';
    const key = `${band}-${side}`;
    const k = (counters.get(key) ?? 0) + 1;
    counters.set(key, k);
    labels[cell] = `${prefix}${key}${k}`;
  });
  return labels;
}

/**
 * One synthetic animal observed from `layout` (model in the module comment).
 * Counts are exact roundings: missing = round(f_m n), outliers =
 * round(kept f_o / (1 - f_o)), clustered = round(outliers share),
 * labelled = round(f_l kept), wrong = round(f_w labelled) (a swap of two
 * labelled points counts as two wrong labels, so the count may exceed the
 * target by one; it falls short only if too few points have a neighbour
 * whose label can be taken without creating a duplicate).
 * Throws RangeError for fractions outside their ranges or negative amounts.
 */
export function generateAnimal(layout: Layout, rng: Rng, id: string, options: AnimalOptions = {}): Animal {
  const dim = layout.dim;
  const n = layout.positions.length;
  const missingFraction = options.missingFraction ?? 0.15;
  const outlierFraction = options.outlierFraction ?? 0.2;
  const clusteredShare = options.clusteredOutlierShare ?? 0.5;
  const scaleRange = options.scaleRange ?? 0.1;
  const bendMax = options.bend ?? 3;
  const translateMax = options.translate ?? 100;
  const labelledFraction = options.labelledFraction ?? 0;
  const wrongFraction = options.wrongLabelFraction ?? 0;
  const jitterScale = options.jitterScale ?? 1;
  const cropFraction = options.cropFraction ?? 0;
  const axialRange = options.axialScaleRange ?? 0;
  const warp = options.warp ?? 0;
  for (const [name, v] of [
    ['missingFraction', missingFraction],
    ['cropFraction', cropFraction],
    ['clusteredOutlierShare', clusteredShare],
    ['labelledFraction', labelledFraction],
    ['wrongLabelFraction', wrongFraction],
  ] as const)
    if (!(v >= 0 && v <= 1)) throw new RangeError(`generateAnimal: ${name} must be in [0, 1], got ${v}`);
  if (!(outlierFraction >= 0 && outlierFraction < 1))
    throw new RangeError(`generateAnimal: outlierFraction must be in [0, 1), got ${outlierFraction}`);
  if (!(scaleRange >= 0 && scaleRange < 1))
    throw new RangeError(`generateAnimal: scaleRange must be in [0, 1), got ${scaleRange}`);
  if (!(axialRange >= 0 && axialRange < 1))
    throw new RangeError(`generateAnimal: axialScaleRange must be in [0, 1), got ${axialRange}`);
  for (const [name, v] of [
    ['bend', bendMax],
    ['translate', translateMax],
    ['jitterScale', jitterScale],
    ['warp', warp],
  ] as const)
    if (!(v >= 0 && Number.isFinite(v))) throw new RangeError(`generateAnimal: ${name} must be a finite number >= 0, got ${v}`);

  // Deformation parameters.
  const scale = uniform(rng, 1 - scaleRange, 1 + scaleRange);
  const rotation = options.rotate === false ? identityMatrix(dim) : randomRotation(rng, dim);
  const translation = Array.from({ length: dim }, () => uniform(rng, -translateMax, translateMax));
  const bendAmplitude = uniform(rng, -bendMax, bendMax);
  let bendDirection: number[];
  if (dim === 2) bendDirection = [0, 1];
  else {
    const phi = rng() * 2 * Math.PI;
    bendDirection = [0, Math.cos(phi), Math.sin(phi)];
  }
  const xMax = Math.max(...layout.positions.map((p) => Math.abs(p[0])));
  const bendShift = (x: number): number => bendAmplitude * (x / xMax) ** 2;
  // Drawn only when asked for, so that animals without the option are the same as before it existed.
  const axialScale = axialRange > 0 ? uniform(rng, 1 - axialRange, 1 + axialRange) : 1;
  const axialOf = (k: number): number => (k === dim - 1 ? axialScale : 1);
  const fromLayoutFrame = (p: readonly number[]): number[] => {
    const f = bendShift(p[0]);
    const bent = p.map((v, k) => v + f * bendDirection[k]);
    return matVec(rotation, bent).map((v, k) => scale * v * axialOf(k) + translation[k]);
  };
  const toLayoutFrame = (q: readonly number[]): number[] => {
    const unrotated = matTVec(
      rotation,
      q.map((v, k) => (v - translation[k]) / axialOf(k)),
    ).map((v) => v / scale);
    const f = bendShift(unrotated[0]);
    return unrotated.map((v, k) => v - f * bendDirection[k]);
  };

  // Missing cells.
  const missingCount = Math.round(missingFraction * n);
  const order = shuffled(
    layout.positions.map((_, i) => i),
    rng,
  );
  const missingSet = new Set(order.slice(0, missingCount));
  let present = layout.positions.map((_, i) => i).filter((i) => !missingSet.has(i));
  let cropDirection: number[] | null = null;
  if (cropFraction > 0) {
    // Cut along a random direction: drop the cropFraction of the remaining cells with the largest projection.
    const z = Array.from({ length: dim }, () => randomNormal(rng));
    const norm = Math.hypot(...z);
    const direction = z.map((v) => v / norm);
    cropDirection = direction;
    const cut = Math.round(cropFraction * present.length);
    const byProjection = present.slice().sort((a, b) => dot(layout.positions[b], direction) - dot(layout.positions[a], direction));
    const cropped = new Set(byProjection.slice(0, cut));
    present = present.filter((i) => !cropped.has(i));
  }
  // Smooth local warp (cell-level, drawn only when asked for).
  const warpBumps: { centre: number[]; shift: number[] }[] = [];
  const xs = layout.positions.map((p) => p[0]);
  const warpWidth = 0.25 * (Math.max(...xs) - Math.min(...xs));
  if (warp > 0)
    for (let m = 0; m < 4; m++)
      warpBumps.push({
        centre: layout.positions[Math.floor(rng() * n)].slice(),
        shift: Array.from({ length: dim }, () => warp * randomNormal(rng)),
      });
  const bumps = (p: readonly number[]): number[] => {
    const out = new Array<number>(dim).fill(0);
    for (const b of warpBumps) {
      let r2 = 0;
      for (let k = 0; k < dim; k++) r2 += (p[k] - b.centre[k]) ** 2;
      const w = Math.exp(-r2 / (2 * warpWidth * warpWidth));
      for (let k = 0; k < dim; k++) out[k] += w * b.shift[k];
    }
    return out;
  };
  // The bumps minus their least-squares affine fit over the layout's cells: the warp is purely
  // non-affine, so the animal's global deformation (which the oracle undoes) stays the one drawn above.
  let warpAffine: number[][] = [];
  if (warp > 0) {
    const rows = layout.positions.map((p) => [...p, 1]);
    const normal = rows[0].map((_, a) => rows[0].map((_, b) => rows.reduce((acc, r) => acc + r[a] * r[b], 0)));
    const inv = invertMatrix(normal);
    const shifts = layout.positions.map(bumps);
    // warpAffine[k] = coefficients of axis k on (p, 1).
    warpAffine = Array.from({ length: dim }, (_, k) => {
      const rhs = rows[0].map((_, a) => rows.reduce((acc, r, i) => acc + r[a] * shifts[i][k], 0));
      return inv.map((row) => row.reduce((acc, v, b) => acc + v * rhs[b], 0));
    });
  }
  const warpOf = (p: readonly number[]): number[] => {
    const out = bumps(p);
    if (warpAffine.length > 0)
      for (let k = 0; k < dim; k++) {
        let fit = warpAffine[k][dim];
        for (let a = 0; a < dim; a++) fit += warpAffine[k][a] * p[a];
        out[k] -= fit;
      }
    return out;
  };
  const presentSet = new Set(present);
  const missingCells = layout.positions.map((_, i) => i).filter((i) => !presentSet.has(i));

  // True points, jittered in the layout frame.
  const layoutPoints: number[][] = [];
  const truthCells: (number | null)[] = [];
  for (const cell of present) {
    const l = choleskyLower(layout.jitter[cell]);
    const z = Array.from({ length: dim }, () => randomNormal(rng));
    const e = matVec(l, z).map((v) => v * jitterScale);
    const wv = warpOf(layout.positions[cell]);
    layoutPoints.push(layout.positions[cell].map((v, k) => v + e[k] + wv[k]));
    truthCells.push(cell);
  }

  // Outliers, in the layout frame.
  const kept = present.length;
  const outlierCount = outlierFraction > 0 ? Math.round((kept * outlierFraction) / (1 - outlierFraction)) : 0;
  const clusteredCount = Math.round(outlierCount * clusteredShare);
  const lo = new Array<number>(dim).fill(Infinity);
  const hi = new Array<number>(dim).fill(-Infinity);
  for (const p of layout.positions)
    for (let k = 0; k < dim; k++) {
      lo[k] = Math.min(lo[k], p[k]);
      hi[k] = Math.max(hi[k], p[k]);
    }
  if (clusteredCount > 0) {
    // A dense blob just outside the head's surface, beside a random point of its long axis.
    const x0 = uniform(rng, 0.6 * lo[0], 0.6 * hi[0]);
    let dir: number[];
    if (dim === 2) dir = [0, rng() < 0.5 ? -1 : 1];
    else {
      const phi = rng() * 2 * Math.PI;
      dir = [0, Math.cos(phi), Math.sin(phi)];
    }
    // Head radius along dir at x0 from the cells themselves.
    let radius = 0;
    for (const p of layout.positions)
      if (Math.abs(p[0] - x0) < 0.15 * (hi[0] - lo[0])) radius = Math.max(radius, dot(p, dir));
    const spread = Math.max(1.5, 0.6 * Math.sqrt(clusteredCount));
    const centre = dir.map((v, k) => (k === 0 ? x0 : v * (radius + 1.5 * spread)));
    for (let i = 0; i < clusteredCount; i++) {
      layoutPoints.push(centre.map((v) => v + (spread / 2) * randomNormal(rng)));
      truthCells.push(null);
    }
  }
  const margin = 10;
  for (let i = clusteredCount; i < outlierCount; i++) {
    layoutPoints.push(lo.map((v, k) => uniform(rng, v - margin, hi[k] + margin)));
    truthCells.push(null);
  }

  // Labels: keep a fraction of the true points' labels, then swap some with neighbours.
  const labelCells: (number | null)[] = truthCells.map(() => null);
  const truePointIdx = truthCells.map((c, i) => (c === null ? -1 : i)).filter((i) => i >= 0);
  const labelledCount = Math.round(labelledFraction * truePointIdx.length);
  for (const i of shuffled(truePointIdx, rng).slice(0, labelledCount)) labelCells[i] = truthCells[i];
  const wrongTarget = Math.round(wrongFraction * labelledCount);
  const pointOfCell = new Map<number, number>();
  truthCells.forEach((c, i) => {
    if (c !== null) pointOfCell.set(c, i);
  });
  const neighbours = new Map<number, number[]>();
  const knn = (cell: number): number[] => {
    let v = neighbours.get(cell);
    if (!v) {
      v = nearestIndices(layout.positions, cell, 3);
      neighbours.set(cell, v);
    }
    return v;
  };
  const wrong = new Set<number>();
  const labelledIdx = labelCells.map((c, i) => (c === null ? -1 : i)).filter((i) => i >= 0);
  for (const i of shuffled(labelledIdx, rng)) {
    if (wrong.size >= wrongTarget) break;
    if (wrong.has(i)) continue;
    const cell = truthCells[i] as number;
    for (const other of shuffled(knn(cell), rng)) {
      const j = pointOfCell.get(other);
      const jLabelled = j !== undefined && labelCells[j] !== null;
      if (!jLabelled) {
        labelCells[i] = other; // the neighbour's label is not in use in this sample
        wrong.add(i);
        break;
      }
      if (!wrong.has(j) && knn(other).includes(cell)) {
        labelCells[i] = other;
        labelCells[j] = cell;
        wrong.add(i);
        wrong.add(j);
        break;
      }
    }
  }

  // Deform, order, assemble.
  let coords = layoutPoints.map(fromLayoutFrame);
  let perm = coords.map((_, i) => i);
  if (options.shuffle ?? true) perm = shuffled(perm, rng);
  coords = perm.map((i) => coords[i]);
  const truthIndex = perm.map((i) => truthCells[i]);
  const truth = truthIndex.map((c) => (c === null ? null : layout.labels[c]));
  const labels = perm.map((i) => (labelCells[i] === null ? null : layout.labels[labelCells[i] as number]));
  const inverse = new Map(perm.map((i, k) => [i, k]));
  const wrongLabelPoints = [...wrong].map((i) => inverse.get(i) as number).sort((x, y) => x - y);

  const sample: Sample = {
    id,
    source: `${id}.csv`,
    dim,
    coords,
    labels,
    rows: coords.map((_, i) => i + 2),
    features: { names: [], values: coords.map(() => []) },
  };
  return {
    sample,
    truth,
    truthIndex,
    toLayoutFrame,
    fromLayoutFrame,
    scale,
    axialScale,
    rotation,
    translation,
    bendAmplitude,
    bendDirection,
    missingCells,
    cropDirection,
    wrongLabelPoints,
  };
}

function identityMatrix(d: number): number[][] {
  return Array.from({ length: d }, (_, i) => Array.from({ length: d }, (_, j) => (i === j ? 1 : 0)));
}

/** Formats a number for CSV: fixed `digits` decimals, trailing zeros removed, no "-0". */
function formatNumber(v: number, digits: number): string {
  let s = v.toFixed(digits);
  if (s.includes('.')) s = s.replace(/0+$/, '').replace(/\.$/, '');
  return s === '-0' ? '0' : s;
}

/**
 * CSV text of a sample: header `x,y[,z],label[,feature...]`, one line per
 * point in order, coordinates with `digits` decimals (default 4), empty label
 * for null. Labels must not contain commas, quotes or line breaks.
 */
export function writeSampleCsv(sample: Sample, digits = 4): string {
  const axes = sample.dim === 3 ? ['x', 'y', 'z'] : ['x', 'y'];
  const header = [...axes, 'label', ...sample.features.names].join(',');
  const lines = sample.coords.map((p, i) => {
    const label = sample.labels[i] ?? '';
    if (/[",\r\n]/.test(label)) throw new RangeError(`writeSampleCsv: label ${JSON.stringify(label)} needs quoting`);
    const feats = (sample.features.values[i] ?? []).map((v) => formatNumber(v, digits));
    return [...p.map((v) => formatNumber(v, digits)), label, ...feats].join(',');
  });
  return [header, ...lines].join('\n') + '\n';
}
