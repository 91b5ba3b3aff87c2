/**
 * Robust search for the pose of an unlabelled sample: guided, geometrically
 * consistent RANSAC (Fischler & Bolles 1981) with progressive sampling
 * (PROSAC; Chum & Matas 2005). The score and the local optimisation of every
 * hypothesis with a new best raw score (LO-RANSAC; Chum, Matas & Kittler
 * 2003) come from the caller
 * (`PoseObjective`; matchSample uses the MLESAC likelihood of
 * density-grid.ts and EM steps of refine.ts).
 *
 * One hypothesis is D + 1 point-cell pairs (i_1, k_1) ... (i_{D+1}, k_{D+1}):
 *
 * 1. The first pair is drawn from the pool of candidate pairs (each point with
 *    its best-ranked cells by descriptor cost, pool sorted by cost) by PROSAC:
 *    at first only from the top of the pool, which grows with the number of
 *    trials t after Chum & Matas's growth function
 *    T_n = T_N prod_{i=0}^{m-1} (n - i) / (N - i), m = D + 1.
 * 2. Each later pair takes a random point i_j at least `minSeparation` away
 *    from the points chosen so far and, among its candidate cells, one whose
 *    template distances agree with the sample distances of all pairs chosen so
 *    far: for every earlier pair (i, k),
 *      s_lo |x_i - x_ij| - z sigma <= |mu_k - mu_kj| <= s_hi |x_i - x_ij| + z sigma,
 *    sigma^2 = (tr S_k + tr S_kj) / d, z = 2.5; the scale interval
 *    [s_lo, s_hi] (sample -> template) starts at the plausible range and is
 *    narrowed by every accepted pair.
 * 3. The transform is fitted in the direction template -> sample (means onto
 *    points, weights 1 / (tr S_k / d)) and inverted. Regressing noisy points
 *    onto fixed means the other way round would shrink the scale (errors in
 *    the regressor; Fuller 1987, section 1.1).
 * 4. Implausible maps (reflection, scale outside the range) are rejected
 *    before scoring.
 *
 * Stopping: after trial t with best hit fraction eps = hits / n, the chance
 * that one trial draws an all-correct set is estimated as
 *   P = eps_1 prod_{j=2}^{D+1} min(1, eps / mbar_j)
 * where eps_1 = hits / N is the share of the N-pair candidate pool that can be
 * correct (each inlier point contributes at most one correct pair; a caller
 * may count agreements exactly through `poolAgreement`) and mbar_j the mean
 * number of consistent candidates offered at step j (a correct earlier choice
 * leaves the right cell among them). The search stops
 * once t >= log(1 - eta) / log(1 - P) (Fischler & Bolles 1981; Hartley &
 * Zisserman 2004, eq. 4.18) with eta = 0.99, after at least `minTrials`, and
 * always at `maxTrials`.
 */
import { FitError } from '../errors.js';
import { fitTransform, invertTransform } from '../geometry/index.js';
import type { Rng } from '../random.js';
import type { Points, Transform } from '../types.js';
import { isPlausible, type Plausibility } from './affine-flat.js';
import type { CellModel } from './cell-model.js';

export interface Pair {
  readonly point: number;
  readonly cell: number;
}

export interface SearchOptions {
  readonly rng: Rng;
  readonly maxTrials: number;
  readonly minTrials: number;
  readonly limits: Plausibility;
  /** Candidate cells per point for the first pair (pool), best first. */
  readonly firstCandidates: number;
  /** Fixed correspondences (labelled points): they start every hypothesis. */
  readonly fixed: readonly Pair[];
  /** Probability eta of having drawn one all-correct set when stopping (default 0.99). */
  readonly eta?: number;
  /** How many distinct poses to keep (default 8). */
  readonly keep?: number;
  /** RMS distance (template units) under which two poses count as the same (default 2). */
  readonly distinctBy?: number;
  /** Number of pool pairs that the pose agrees with (for the stopping bound); default: its hits. */
  readonly poolAgreement?: (transform: Transform, pool: readonly Pair[]) => number;
}

export interface PoseEstimate {
  /** Sample -> template. */
  readonly transform: Transform;
  readonly score: number;
  readonly hits: number;
}

export interface SearchResult extends PoseEstimate {
  readonly trials: number;
  /** Draws abandoned because no consistent candidate was found. */
  readonly skipped: number;
  /** Trials at which the best score last improved. */
  readonly lastImprovement: number;
  readonly stopReason: 'bound' | 'max-trials' | 'exhaustive';
  /** The best distinct poses found, best first (the first is the result; the others are locally optimised only when they were a new best when drawn). */
  readonly alternatives: readonly PoseEstimate[];
}

/** RMS distance between the images of the probe points under two maps. */
export function poseDistance(a: Transform, b: Transform, probes: Points): number {
  const d = a.translation.length;
  let s = 0;
  for (const p of probes)
    for (let r = 0; r < d; r++) {
      let ya = a.translation[r], yb = b.translation[r];
      for (let c = 0; c < d; c++) {
        ya += a.linear[r][c] * p[c];
        yb += b.linear[r][c] * p[c];
      }
      s += (ya - yb) ** 2;
    }
  return Math.sqrt(s / Math.max(1, probes.length));
}

const Z_CONSISTENT = 2.5;

/**
 * Fit template -> sample on the given pairs (weights 1 / isotropic variance)
 * and invert to sample -> template. Returns null for degenerate or implausible fits.
 */
export function fitPairs(
  model: CellModel,
  points: Points,
  pairs: readonly Pair[],
  kind: Transform['kind'],
  limits: Plausibility,
): Transform | null {
  const source = pairs.map((p) => model.meanRows[p.cell]);
  const target = pairs.map((p) => points[p.point]);
  const weights = pairs.map((p) => 1 / model.isoVar[p.cell]);
  try {
    const fit = fitTransform(kind, source, target, { weights });
    const inv = invertTransform(fit.transform);
    return isPlausible(inv, limits) ? inv : null;
  } catch (e) {
    if (e instanceof FitError) return null;
    throw e;
  }
}

/** Per-point candidate cells (best first), as from rankCandidates. */
export interface Candidates {
  readonly cells: readonly Int32Array[];
  readonly costs: readonly Float64Array[];
}

/** Scores a sample -> template map (higher is better) and locally optimises a hypothesis. */
export interface PoseObjective {
  score(transform: Transform): { score: number; hits: number };
  optimise(start: PoseEstimate): PoseEstimate;
}

export function searchPose(
  model: CellModel,
  objective: PoseObjective,
  points: Points,
  candidates: Candidates,
  options: SearchOptions,
): SearchResult {
  const { rng, limits } = options;
  const d = model.dim, K = model.size, n = points.length;
  const m = d + 1;
  const eta = options.eta ?? 0.99;
  // Template and sample distance tables.
  const cellDist = new Float64Array(K * K);
  for (let k = 0; k < K; k++)
    for (let l = 0; l < K; l++) {
      let s = 0;
      for (let a = 0; a < d; a++) s += (model.means[k * d + a] - model.means[l * d + a]) ** 2;
      cellDist[k * K + l] = Math.sqrt(s);
    }
  const pointDist = new Float64Array(n * n);
  for (let i = 0; i < n; i++)
    for (let j = 0; j < i; j++) {
      let s = 0;
      for (let a = 0; a < d; a++) s += (points[i][a] - points[j][a]) ** 2;
      pointDist[i * n + j] = pointDist[j * n + i] = Math.sqrt(s);
    }
  // Minimum separation of the points in one hypothesis: a fifth of the template's RMS radius
  // (in sample units at the middle of the scale range), so that fits are well conditioned.
  let rms = 0;
  const centroid = new Array<number>(d).fill(0);
  for (let k = 0; k < K; k++) for (let a = 0; a < d; a++) centroid[a] += model.means[k * d + a] / K;
  for (let k = 0; k < K; k++) for (let a = 0; a < d; a++) rms += (model.means[k * d + a] - centroid[a]) ** 2 / K;
  const midScale = Math.sqrt(limits.scaleRange[0] * limits.scaleRange[1]);
  const minSeparation = (0.2 * Math.sqrt(rms)) / midScale;

  // PROSAC pool.
  const pool: Pair[] = [];
  const poolCost: number[] = [];
  for (let i = 0; i < n; i++) {
    const c = candidates.cells[i];
    for (let r = 0; r < Math.min(options.firstCandidates, c.length); r++) {
      pool.push({ point: i, cell: c[r] });
      poolCost.push(candidates.costs[i][r]);
    }
  }
  const poolOrder = pool.map((_, i) => i).sort((a, b) => poolCost[a] - poolCost[b] || a - b);
  const sortedPool = poolOrder.map((i) => pool[i]);
  const N = sortedPool.length;

  let best: PoseEstimate | null = null;
  let trials = 0, skipped = 0, lastImprovement = 0;
  const offered = new Float64Array(m + 1), offeredCount = new Float64Array(m + 1);
  let needed = Infinity;

  const top: PoseEstimate[] = [];
  let bestRaw = -Infinity;
  const consider = (t: Transform | null): void => {
    if (!t) return;
    const s = objective.score(t);
    const raw = { transform: t, score: s.score, hits: s.hits };
    // Local optimisation only for a new best raw score (Chum, Matas & Kittler 2003); other
    // hypotheses compete for the kept poses as they are (the caller refines those later).
    if (best && s.score <= bestRaw) {
      remember(raw);
      return;
    }
    bestRaw = s.score;
    const improved = objective.optimise(raw);
    remember(improved);
    if (!best || improved.score > best.score) {
      best = improved;
      lastImprovement = trials;
      needed = stoppingBound();
    }
  };
  // The best `keep` distinct poses (they differ by more than `distinctBy` RMS over probe points).
  const keep = options.keep ?? 8;
  const probes = points.filter((_, i) => i % Math.max(1, Math.floor(points.length / 24)) === 0);
  const distinctBy = options.distinctBy ?? 2;
  const remember = (pose: PoseEstimate): void => {
    if (top.length >= keep && pose.score <= top[top.length - 1].score) return;
    for (let j = 0; j < top.length; j++) {
      if (poseDistance(top[j].transform, pose.transform, probes) < distinctBy) {
        if (pose.score > top[j].score) {
          top.splice(j, 1);
          break;
        }
        return;
      }
    }
    let at = top.findIndex((q) => q.score < pose.score);
    if (at < 0) at = top.length;
    top.splice(at, 0, pose);
    if (top.length > keep) top.pop();
  };

  const stoppingBound = (): number => {
    if (!best || N === 0) return Infinity;
    const goodInPool = options.poolAgreement ? options.poolAgreement(best.transform, sortedPool) : best.hits;
    const eps = best.hits / Math.max(1, n);
    let p = Math.max(goodInPool, 1) / N;
    for (let j = 2 + options.fixed.length; j <= m; j++) {
      const mean = offeredCount[j] > 0 ? offered[j] / offeredCount[j] : K;
      p *= Math.min(1, eps / Math.max(1, mean));
    }
    if (p >= 1) return 1;
    return Math.log(1 - eta) / Math.log(1 - p);
  };

  const fixed = options.fixed;
  // The fixed correspondences alone, when they determine a pose.
  if (fixed.length >= Math.max(2, d)) consider(fitPairs(model, points, fixed, 'similarity', limits));

  // PROSAC growth (Chum & Matas 2005, section 2.3).
  const TN = Math.max(1, options.maxTrials);
  let nSub = Math.min(m, N);
  let Tn = TN;
  for (let i = 0; i < m; i++) Tn *= (nSub - i) / (N - i);
  let TnPrime = 1;

  const chosen: Pair[] = [];
  const sLo0 = limits.scaleRange[0], sHi0 = limits.scaleRange[1];

  while (trials < options.maxTrials && N > 0) {
    if (trials >= options.minTrials && trials >= needed) break;
    trials++;
    // Grow the PROSAC subset.
    let forceLast = false;
    if (trials >= TnPrime && nSub < N) {
      const next = nSub + 1;
      const TnNext = (Tn * (next)) / (next - m);
      TnPrime += Math.max(1, Math.ceil(TnNext - Tn));
      Tn = TnNext;
      nSub = next;
      forceLast = true;
    }
    chosen.length = 0;
    let sLo = sLo0, sHi = sHi0;
    const accept = (pair: Pair): boolean => {
      let lo = sLo, hi = sHi;
      for (const q of chosen) {
        if (q.point === pair.point || q.cell === pair.cell) return false;
        const dx = pointDist[q.point * n + pair.point];
        const dm = cellDist[q.cell * K + pair.cell];
        const tol = Z_CONSISTENT * Math.sqrt((model.isoVar[q.cell] + model.isoVar[pair.cell]) / 1);
        if (dm < lo * dx - tol || dm > hi * dx + tol) return false;
        if (dx > 0) {
          lo = Math.max(lo, (dm - tol) / dx);
          hi = Math.min(hi, (dm + tol) / dx);
        }
      }
      sLo = lo;
      sHi = hi;
      return true;
    };
    // Fixed pairs first (a random subset when there are more than D + 1).
    if (fixed.length > 0) {
      const order = fixed.map((_, i) => i);
      for (let i = order.length - 1; i > 0; i--) {
        const j = Math.floor(rng() * (i + 1));
        [order[i], order[j]] = [order[j], order[i]];
      }
      for (const i of order.slice(0, Math.min(m - 1, fixed.length))) {
        accept(fixed[i]); // given pairs are kept even when their distances disagree
        chosen.push(fixed[i]);
      }
    }
    if (chosen.length === 0) {
      const first = forceLast ? sortedPool[nSub - 1] : sortedPool[Math.floor(rng() * nSub)];
      chosen.push(first);
    }
    let failed = false;
    while (chosen.length < m) {
      const step = chosen.length + 1;
      let picked = false;
      for (let attempt = 0; attempt < 8 && !picked; attempt++) {
        const j = Math.floor(rng() * n);
        let far = true;
        for (const q of chosen) if (q.point === j || pointDist[q.point * n + j] < minSeparation) far = false;
        if (!far) continue;
        const list = candidates.cells[j];
        const ok: number[] = [];
        const saveLo = sLo, saveHi = sHi;
        for (let r = 0; r < list.length; r++) {
          if (accept({ point: j, cell: list[r] })) ok.push(list[r]);
          sLo = saveLo;
          sHi = saveHi;
        }
        offered[step] += ok.length;
        offeredCount[step]++;
        if (ok.length === 0) continue;
        const cell = ok[Math.floor(rng() * ok.length)];
        accept({ point: j, cell });
        chosen.push({ point: j, cell });
        picked = true;
      }
      if (!picked) {
        failed = true;
        break;
      }
    }
    if (failed) {
      skipped++;
      continue;
    }
    consider(fitPairs(model, points, chosen, 'similarity', limits));
  }
  if (!best) throw new FitError(`no plausible pose found in ${trials} trials (${skipped} draws found no consistent pairs)`);
  const b = best as PoseEstimate;
  return {
    ...b,
    alternatives: top,
    trials,
    skipped,
    lastImprovement,
    stopReason: trials >= options.maxTrials ? 'max-trials' : 'bound',
  };
}

