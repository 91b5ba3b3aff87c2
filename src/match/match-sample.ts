/**
 * Label proposals for one sample against a template: the matcher's public
 * entry point. Stages (docs/algorithms.md, "Matching"):
 *
 * 1. Pose search (sample -> template similarity):
 *    - 'ransac' (default): orientation-invariant descriptors rank point-cell
 *      candidates; PROSAC-ordered, geometrically consistent minimal sets;
 *      Gaussian-plus-uniform likelihood score (MLESAC) on a tabulated template
 *      density; EM local optimisation of every new best; adaptive stopping.
 *      1-D and tiny problems enumerate every minimal set instead (exact).
 *      Labels already in the sample are fixed pairs that seed every hypothesis.
 *      Crowded points (denser than the template allows: crowding.ts) are left
 *      out of the search and of the widened screening levels.
 *    - 'icp' / 'cpd': the baselines' own alignment (no search, no refinement).
 * 2. Refinement of the best distinct poses (and their half-turns about the
 *    template's principal axes, which the nearly symmetric shape of a head
 *    leaves ambiguous, some also slid along the long axis for heads partly
 *    outside the imaged volume: slide.ts) by hard EM on the one-to-one matching likelihood
 *    (softassign.ts) with annealed cell widths; the best screened poses then
 *    try slips of one cell spacing (slips.ts) to leave a basin where the
 *    whole labelling is off by one cell; the finalists get a compass search,
 *    the mode with the largest optimal matching gain wins, and is refined and
 *    polished on the points' one-to-one likelihood (softassign.ts) as a
 *    similarity and as an affine map (chooseFamily). From the slip search on,
 *    points where outliers crowd beyond what the template predicts have their
 *    outlier intensity raised (excess-density.ts), so that no pose gains by
 *    reaching for a clump of outliers.
 * 3. The bend correction (bend.ts) and an optional smooth non-rigid
 *    correction (refine.ts).
 * 4. One-to-one assignment with a no-label option on the pair gains (the
 *    negative log-likelihood costs of softassign.ts, with the outliers'
 *    excess density at the chosen pose), given labels kept fixed; the
 *    confidence of each proposal is its posterior marginal.
 *
 * Everything random draws from `options.rng`; the same seed gives the same result.
 */
import { FitError, UsageError } from '../errors.js';
import { composeTransforms, fitTransform, invertTransform, symmetricEigen } from '../geometry/index.js';
import { createRng, type Rng } from '../random.js';
import type { Points, Sample, Template, Transform } from '../types.js';
import { isPlausible, type Plausibility } from './affine-flat.js';
import { assignWithAbstention } from './assignment.js';
import { alignCpd } from './cpd.js';
import { alignIcp } from './icp.js';
import { buildCellGrid, type CellGrid } from './cell-grid.js';
import { crowdedPoints, crowdingLimit } from './crowding.js';
import { buildCellModel, cellMahalanobisSquared, type CellModel } from './cell-model.js';
import { buildDensityGrid, boundingVolume, determinantFlat, MixtureScorer, type DensityGrid } from './density-grid.js';
import { learnCellDescriptors, rankCandidates, rankNormalize, rawDescriptors, type CellDescriptors } from './descriptors.js';
import { exhaustiveHypotheses, isTinyProblem } from './exhaustive.js';
import { compassSearch, emRefine, mapPoints, nonRigidCorrect, type MixtureContext } from './refine.js';
import { betheMarginals } from './belief-propagation.js';
import { applyBend, correctBend, type BendAxis } from './bend.js';
import { bestSlide } from './slide.js';
import { rotationAbout, slipMoves } from './slips.js';
import { outlierExcess, widenedCells, type WidenedCells } from './excess-density.js';
import { searchPose, poseDistance, type Pair, type PoseEstimate, type PoseObjective, type SearchResult } from './ransac.js';
import { toFlat } from './affine-flat.js';
import { greedyMatching, greedyMatchingGain, pairGains, pointLikelihood, sinkhorn, type HardMatching, type Marginals, type MatchModelParameters, type PairGains } from './softassign.js';

/**
 * Default hit radius nu (Mahalanobis units): the gate of the final assignment
 * (a point is never given a cell farther than nu) and the radius within which
 * a proposal counts as a hit. 3.5 leaves a 3-D Gaussian tail of about 0.6%
 * (chi-square, 3 degrees of freedom) outside the gate.
 */
export const DEFAULT_HIT_RADIUS = 3.5;
/**
 * Default cap on RANSAC trials (250 until December 2026; 150 with 30 compass
 * evaluations instead of 60 kept the accuracy on 32 animals per case:
 * ganglia 0.946 -> 0.954 of the ceiling, half jitter 0.923 -> 0.928).
 */
export const DEFAULT_MAX_TRIALS = 150;
/** Trials always run before the adaptive stopping bound may end the search. */
const MIN_TRIALS = 100;
/**
 * Objective evaluations of the compass search that polishes each finalist
 * (30 until December 2026; 15 once the winner is polished on the points'
 * likelihood, with the same accuracy within noise on 32 animals per case:
 * ganglia 0.986 -> 0.992 of the ceiling, half jitter 0.930 -> 0.923; 40%
 * outliers, 16 animals: 0.910 -> 0.903).
 */
const COMPASS_EVALUATIONS = 15;
/**
 * A finalist other than the best screened mode is polished and compared only
 * when its screening gain is within this many nats of the best (log-likelihood
 * ratio: e^-30 odds; further behind, polishing did not change the winner on
 * the accuracy suite and costs a compass search).
 */
const FINALIST_GAP = 30;
/**
 * For a sample whose pose margin is below POSE_MARGIN_SETTLED, the best
 * FINALISTS + UNSETTLED_EXTRA distinct modes of a screening without halving
 * are considered, and those not near a finalist join the finalists (pooled
 * over five seeds: half jitter 0.889 -> 0.899 of the ceiling, uniform packing
 * at full jitter 0.282 -> 0.324; docs/algorithms.md, "Pose margin").
 */
const UNSETTLED_EXTRA = 2;
/** Default plausible scale range of the sample -> template map (template kept at the average animal's size). */
export const DEFAULT_SCALE_RANGE: readonly [number, number] = [0.75, 1.33];

export interface MatchOptions {
  rng: Rng;
  method?: 'ransac' | 'icp' | 'cpd';
  /** Hit radius nu in Mahalanobis units (default DEFAULT_HIT_RADIUS). */
  hitRadius?: number;
  /** Cap on hypotheses (default DEFAULT_MAX_TRIALS). */
  maxTrials?: number;
  /** Smooth non-rigid correction after the pose fit (default DEFAULT_NON_RIGID). */
  nonRigid?: boolean;
  /** Bend correction along the template's long axis after the pose fit, kept when it pays (bend.ts; default DEFAULT_BEND). */
  bend?: boolean;
  /** Proposals whose confidence is below this are left unlabelled (default 0: keep every assignment). */
  abstainBelow?: number;
  /** How the final one-to-one labelling is chosen (Assignment; default DEFAULT_ASSIGNMENT). */
  assignment?: Assignment;
  /** Plausible scale range of the sample -> template map (default DEFAULT_SCALE_RANGE). */
  scaleRange?: readonly [number, number];
}

/**
 * The final labelling: 'map', the most probable joint labelling (linear
 * assignment on the costs -g_ik, the pairs' negative log-likelihood ratios);
 * 'mea', maximum expected accuracy (costs -P(i -> k), the posterior marginals:
 * the labelling with the most labels right in expectation). Both over the same
 * allowed pairs, with no label at cost 0.
 */
export type Assignment = 'map' | 'mea';
export const DEFAULT_ASSIGNMENT: Assignment = 'map';

export interface Proposal {
  label: string | null;
  /** Posterior probability of the proposed label; for an unlabelled point, of its being no template cell. Given labels: 1. */
  confidence: number;
  /** Mahalanobis distance to the proposed cell (null when unlabelled). */
  distance: number | null;
  /** Top 3 labels by posterior, including the proposal. */
  alternatives: { label: string; probability: number }[];
}

export interface MatchResult {
  sampleId: string;
  method: string;
  proposals: Proposal[];
  /** Sample -> template frame (the affine part; a non-rigid correction, when applied, comes on top). */
  transform: Transform;
  /** Proposals within the hit radius of their cell. */
  hits: number;
  /** Log-likelihood ratio of the final labelling against "all points are outliers" (sum of pair gains). */
  score: number;
  trials: number;
  stopReason: string;
  /** Crowded points left out of the pose search (crowding.ts); 0 when none were. */
  crowded: number;
  nonRigid: boolean;
  /** Whether the bend correction (bend.ts) was kept for this sample. */
  bend: boolean;
  /**
   * How far the chosen pose mode leads the best other one, in nats: its
   * one-to-one matching gain minus that of the best distinct pose mode (more
   * than two cell spacings away), both at the end of the screening and its
   * slip search. Below
   * POSE_MARGIN_SETTLED the sample's orientation is not settled by its
   * positions (docs/algorithms.md, "Pose margin"). Null when no other mode
   * was screened (the icp and cpd methods; a search that found one mode).
   */
  poseMargin: number | null;
}

/**
 * Pose margins below this many nats mean an unsettled orientation. Chosen on
 * the accuracy suite (docs/algorithms.md, "Pose margin"): where the pose
 * mode is in doubt (cells packed uniformly at full jitter) every animal's
 * margin lay within +-7.4 nats; in the ganglia, half-jitter and 40%-outlier
 * cases every animal's lay above 10.6. The matching gain overstates
 * certainty, so the margin is not a probability.
 */
export const POSE_MARGIN_SETTLED = 10;

/** True when a pose margin (MatchResult.poseMargin) says the orientation is not settled; false for null (no other mode). */
export function poseUnsettled(margin: number | null): boolean {
  return margin !== null && margin < POSE_MARGIN_SETTLED;
}

/** Whether the non-rigid correction is on by default (chosen on the accuracy suite; see docs/algorithms.md). */
export const DEFAULT_NON_RIGID = false;

/**
 * Whether the bend correction is on by default: on, because on the suite it
 * raises accuracy. Over five seeds, without it and with it (the curvature
 * chosen on the points' likelihood, December 2026): ganglia 0.943 -> 0.951
 * of the ceiling, half jitter 0.935 -> 0.943; the least-squares correction
 * before it gave 0.943 and 0.942 (docs/algorithms.md, "Bend correction").
 */
export const DEFAULT_BEND = true;

/** Template-derived structures, computed once per template object. */
export interface PreparedTemplate {
  readonly model: CellModel;
  readonly descriptors: CellDescriptors;
  readonly density: DensityGrid;
  /** Cell lists for pair gains, radius 3.5 (pairs beyond it are ignored). */
  readonly pairGrid: CellGrid;
  /**
   * Cell lists for positive pair gains at every annealing level, radii
   * ascending (3.5 = pairGrid, then 4.5, 5.5, 7); matchFree takes the
   * smallest that reaches every pair with g_ik > 0 (gridForPositivePairs).
   */
  readonly positiveGrids: readonly CellGrid[];
  /** Smallest log det S_k over the cells. */
  readonly minLogDet: number;
  /** Median nearest-neighbour distance of the template means (typicalSpacing). */
  readonly spacing: number;
  /** Largest distance of a cell mean from the centroid along the long axis (first principal axis). */
  readonly halfLength: number;
  /** Principal axes of the template means (columns) and their centroid. */
  readonly axes: number[][];
  readonly centroid: number[];
  /** Largest crowding of a cell in pseudo-animals (crowding.ts); points above it are crowded. */
  readonly crowdingLimit: number;
  /** The slip search's moves (slips.ts), one cell spacing long. */
  readonly slips: readonly Transform[];
  /** The long axis, the directions across it and the spacing, for the bend correction (bend.ts). */
  readonly bendAxis: BendAxis;
  /** The cells widened for the outliers' excess density (excess-density.ts). */
  readonly widened: WidenedCells;
}

const MAX_INFLATION = 1;
const ANNEALING = [4, 2, 1];
/**
 * Hard-EM iterations per annealing level of the screening. Two at the widest
 * level (instead of four until December 2026): on 32 animals per case the
 * accuracy stayed within noise (ganglia 0.930 -> 0.946 of the ceiling, half
 * jitter 0.926 -> 0.923) and the widest level is the costliest.
 */
const SCREEN_ITERATIONS = [2, 4, 4];
/** Rolls about the template's long axis tried from the best pose (360 / ROLL_STEPS degrees apart). */
const ROLL_STEPS = 12;
/**
 * Turned poses slid along the template's long axis (slide.ts) that join the
 * screening: the SLID_CANDIDATES best by the search's mixture score among
 * those whose best shift is not zero. Shifts are multiples of SLIDE_STEP cell
 * spacings up to SLIDE_REACH of the template's half-length. Added in December
 * 2026 for heads partly outside the imaged volume (figures in
 * docs/algorithms.md).
 */
const SLID_CANDIDATES = 6;
const SLIDE_STEP = 1.5;
const SLIDE_REACH = 0.5;
/**
 * After each widened screening level, up to this many poses beyond the better
 * half go on as well: the best of the rest that lie more than two cell
 * spacings from every pose kept, so that many near copies of one mode cannot
 * crowd out the others.
 */
const EXTRA_DISTINCT = 2;
/** Distinct screened pose modes whose posteriors are averaged into the confidences. */
const MODES_IN_CONFIDENCE = 8;
/**
 * Temperature of the pose modes' weights in the confidences,
 * w_m = exp((G_m - G_best) / T): the matching gain G of a mode is a maximum
 * over labellings and poses, so its differences overstate the evidence for
 * one mode over another (temperature scaling, Guo et al. 2017, applied to
 * the modes' log-odds). 6 was chosen on the accuracy suite (December 2026):
 * the expected calibration error of a uniformly packed head at full jitter
 * fell from 0.104 to 0.036 (24 animals; with 4, 8, 16 given labels from
 * 0.041, 0.048, 0.041 to 0.024, 0.033, 0.030), half jitter 0.083 -> 0.086,
 * ganglia and 40% outliers unchanged; labels are not affected. T = 3 gave
 * 0.068 there; T = 10 gave 0.020 but half jitter 0.097.
 */
const MODE_WEIGHT_TEMPERATURE = 6;
/** Distinct pose modes refined to the end and compared by their optimal matching. */
const FINALISTS = 3;
/**
 * Slip search (slips.ts; docs/algorithms.md, "Slip search"): the best
 * SLIP_POSES poses of the screening each try the slip moves, every move
 * followed by SLIP_ITERATIONS hard-EM steps; the best move is taken when it
 * raises the matching gain by more than SLIP_MIN_GAIN nats, for up to
 * SLIP_ROUNDS rounds; near copies of a pose already searched are skipped.
 * Chosen on the accuracy suite over five seeds (December 2026): half jitter
 * 0.900 -> 0.942 of the ceiling with 6 poses, 3 rounds and 4 steps (0.943
 * when near copies are searched too, for 1.6 times the time); 2 rounds of 3
 * steps on every screened pose gave 0.925, 5 rounds on 4 poses 0.938.
 */
const SLIP_POSES = 6;
const SLIP_ROUNDS = 3;
const SLIP_ITERATIONS = 4;
const SLIP_MIN_GAIN = 0.5;
/** Objective evaluations of the final polish on the points' likelihood. */
const POLISH_EVALUATIONS = 30;
/** Sinkhorn sweeps when the column factors start from 1 (the polish's start). */
const FRESH_SWEEPS = 30;
/** Sinkhorn sweeps of the likelihoods compared to choose a pose (chooseFamily, unsettled finalists; from fresh factors). */
const COMPARISON_SWEEPS = 60;
/** Sinkhorn sweeps per later evaluation of the polish (factors carried from the previous one). */
const POLISH_SWEEPS = 5;
/**
 * Sinkhorn sweeps per later evaluation of L in the bend correction and the
 * joint polish of pose and bend (factors carried from the previous one; the
 * first from 1 with FRESH_SWEEPS). Until December 2026 every evaluation started
 * from 1 with 40 sweeps. Five seeds x 32 animals: ganglia 0.954 -> 0.953 of
 * the ceiling, half jitter 0.948 -> 0.953, match-speed 0.155 -> 0.138 s; with
 * 5 sweeps 0.949 and 0.954.
 */
const BEND_SWEEPS = 12;

const cache = new WeakMap<Template, PreparedTemplate>();

/**
 * Precompute what matching needs from a template (cached per template object).
 * Deterministic: the pseudo-animals used when members carry no positions come
 * from a fixed internal seed.
 */
export function prepareTemplate(template: Template): PreparedTemplate {
  const hit = cache.get(template);
  if (hit) return hit;
  const model = buildCellModel(template);
  const descriptors = learnCellDescriptors(template, model, createRng(0x5eed));
  const density = buildDensityGrid(model);
  const pairGrid = buildCellGrid(model, 3.5 * Math.sqrt(MAX_INFLATION));
  // Wider grids for the annealed (inflated) gains; coarser voxels keep their lists short.
  const positiveGrids = [
    pairGrid,
    buildCellGrid(model, 4.5, 1.5 * pairGrid.voxel),
    buildCellGrid(model, 5.5, 1.5 * pairGrid.voxel),
    buildCellGrid(model, 3.5 * Math.sqrt(ANNEALING[0]), 2 * pairGrid.voxel),
  ];
  const minLogDet = Math.min(...model.logDets);
  const d = model.dim;
  const centroid = new Array<number>(d).fill(0);
  for (const m of model.meanRows) for (let a = 0; a < d; a++) centroid[a] += m[a] / model.size;
  const scatter = Array.from({ length: d }, () => new Array<number>(d).fill(0));
  for (const m of model.meanRows) for (let a = 0; a < d; a++) for (let b = 0; b < d; b++) scatter[a][b] += (m[a] - centroid[a]) * (m[b] - centroid[b]);
  const axes = symmetricEigen(scatter).vectors;
  const spacing = typicalSpacing(model);
  let halfLength = 0;
  for (const m of model.meanRows) {
    let along = 0;
    for (let a = 0; a < d; a++) along += (m[a] - centroid[a]) * axes[a][0];
    halfLength = Math.max(halfLength, Math.abs(along));
  }
  const across = axes[0].slice(1).map((_, j) => axes.map((row) => row[j + 1]));
  const prepared = {
    model,
    descriptors,
    density,
    pairGrid,
    positiveGrids,
    minLogDet,
    spacing,
    halfLength,
    axes,
    centroid,
    crowdingLimit: crowdingLimit(model, createRng(0x5eed + 1)),
    slips: slipMoves(axes, centroid, model.meanRows, spacing),
    bendAxis: { axis: axes.map((row) => row[0]), centroid, halfLength, across, spacing },
    widened: widenedCells(model, spacing),
  };
  cache.set(template, prepared);
  return prepared;
}

function checkInputs(template: Template, sample: Sample, options: MatchOptions): void {
  if (typeof options?.rng !== 'function') throw new UsageError('matchSample: options.rng is required');
  if (sample.dim !== template.dim && !(sample.coords[0]?.length === template.dim)) {
    throw new UsageError(`matchSample: sample ${sample.id} is ${sample.dim}-D but the template is ${template.dim}-D`);
  }
  if (sample.coords.length === 0) throw new UsageError(`matchSample: sample ${sample.id} has no points`);
  const r = options.hitRadius ?? DEFAULT_HIT_RADIUS;
  if (!(r > 0) || !Number.isFinite(r)) throw new UsageError(`matchSample: hitRadius must be a positive number, got ${r}`);
  const t = options.maxTrials ?? DEFAULT_MAX_TRIALS;
  if (!Number.isInteger(t) || t < 1) throw new UsageError(`matchSample: maxTrials must be a positive integer, got ${t}`);
  const a = options.abstainBelow ?? 0;
  if (!(a >= 0 && a <= 1)) throw new UsageError(`matchSample: abstainBelow must be in [0, 1], got ${a}`);
  const rule = options.assignment ?? DEFAULT_ASSIGNMENT;
  if (rule !== 'map' && rule !== 'mea') throw new UsageError(`matchSample: assignment must be 'map' or 'mea', got ${String(rule)}`);
  const s = options.scaleRange ?? DEFAULT_SCALE_RANGE;
  if (!(s[0] > 0 && s[1] >= s[0])) throw new UsageError(`matchSample: scaleRange must satisfy 0 < low <= high, got [${s[0]}, ${s[1]}]`);
}

/**
 * Propose a label for every point of `sample` (see the module comment).
 * @throws UsageError for bad options or a sample of the wrong dimension.
 * @throws FitError when no plausible pose exists (for example fewer points than the pose needs).
 */
export function matchSample(template: Template, sample: Sample, options: MatchOptions): MatchResult {
  checkInputs(template, sample, options);
  const method = options.method ?? 'ransac';
  const prepared = prepareTemplate(template);
  const { model } = prepared;
  const d = model.dim;
  const points = sample.coords;
  const n = points.length;
  const limits: Plausibility = { scaleRange: options.scaleRange ?? DEFAULT_SCALE_RANGE, maxAnisotropy: 1.5 };
  const affineLimits: Plausibility = { scaleRange: limits.scaleRange, maxAnisotropy: 1.35 };
  const nonRigid = options.nonRigid ?? DEFAULT_NON_RIGID;
  const bend = (options.bend ?? DEFAULT_BEND) && method === 'ransac';
  const radius = options.hitRadius ?? DEFAULT_HIT_RADIUS;

  // Given labels -> fixed pairs (first occurrence of a label wins; the reader rejects duplicates anyway).
  const fixedCell = givenLabelCells(model, sample.labels);
  const fixed: Pair[] = [...fixedCell].map(([point, cell]) => ({ point, cell }));

  const outlierDensity = 1 / boundingVolume(points);
  const objective = poseObjective(prepared, points, outlierDensity, limits);
  // Crowded points (crowding.ts) are left out of the pose search and of the wide screening levels.
  const tiny = isTinyProblem(d, n, model.size) || n < d + 1;
  const uncrowded = method === 'ransac' && !tiny ? withoutCrowdedPoints(points, fixed, prepared.crowdingLimit) : null;
  // The search's mixture likelihood, on the uncrowded points when some are left out (also scores the slides below).
  const searchObjective = uncrowded ? poseObjective(prepared, uncrowded.points, outlierDensity, limits) : objective;

  let starts: PoseEstimate[] = [];
  let trials = 0;
  let stopReason = '';
  if (method === 'ransac') {
    if (tiny) {
      const top: PoseEstimate[] = [];
      trials = exhaustiveHypotheses(model, points, limits, (t) => {
        const s = objective.score(t);
        top.push({ transform: t, score: s.score, hits: s.hits });
      });
      if (fixed.length >= Math.max(2, d)) {
        const t = fitFixed(model, points, fixed, limits);
        if (t) {
          const s = objective.score(t);
          top.push({ transform: t, score: s.score, hits: s.hits });
        }
      }
      top.sort((a, b) => b.score - a.score);
      starts = distinctTop(top.slice(0, 200).map((e) => objective.optimise(e)), points, 8);
      stopReason = 'exhaustive';
    } else {
      const z = rankNormalize(rawDescriptors(points, prepared.descriptors.spec));
      const candidates = rankCandidates(z, prepared.descriptors, Math.min(model.size, 40));
      const set = uncrowded ?? { points, fixed, index: null };
      const setCandidates = set.index ? { cells: set.index.map((i) => candidates.cells[i]), costs: set.index.map((i) => candidates.costs[i]) } : candidates;
      const search: SearchResult = searchPose(model, searchObjective, set.points, setCandidates, {
        rng: options.rng,
        maxTrials: options.maxTrials ?? DEFAULT_MAX_TRIALS,
        minTrials: Math.min(MIN_TRIALS, options.maxTrials ?? DEFAULT_MAX_TRIALS),
        limits,
        firstCandidates: 12,
        fixed: set.fixed,
        keep: 8,
      });
      starts = search.alternatives.slice();
      trials = search.trials;
      stopReason = search.stopReason;
    }
  } else if (method === 'icp' || method === 'cpd') {
    const t =
      method === 'icp'
        ? alignIcp(model.meanRows, points, { rng: options.rng, kind: 'similarity' }).transform
        : alignCpd(model.meanRows, points, { rng: options.rng, kind: 'similarity', w: 0.2 }).transform;
    const s = objective.score(t);
    starts = [{ transform: t, score: s.score, hits: s.hits }];
    trials = 1;
    stopReason = method;
  } else {
    throw new UsageError(`matchSample: method must be 'ransac', 'icp' or 'cpd', got ${JSON.stringify(method)}`);
  }
  if (starts.length === 0) throw new FitError(`sample ${sample.id}: no plausible pose found`);

  // Stage 2: pose modes. The candidates (and half-turns of the best) are refined on the one-to-one
  // matching likelihood and compared under one fixed (rho, Lambda).
  let params: MatchModelParameters = {
    detection: 0.85,
    outliers: Math.max(1, n - 0.85 * model.size),
    outlierDensity,
  };
  // Screening refinement: hard EM with annealed cell widths (S_k x 4, x 2, x 1) so that starts a few
  // micrometres off reach the optimum of their basin; after each level only the better half of the
  // candidates (at least FINALISTS + 3) goes on (successive halving). The widened levels leave crowded
  // points out (with wide cells a clump of them pulls a pose onto itself); the last scores all points.
  // `halve` false keeps every candidate through every level. Each candidate is refined on its own, so
  // a refinement depends only on its start and level: kept per level (keyed by the start transform
  // object), a second screening of the same candidates reuses the first one's work for its survivors.
  const refinedAtLevel = ANNEALING.map(() => new Map<Transform, { transform: Transform; gain: number }>());
  const screen = (ts: readonly Transform[], halve = true): { transform: Transform; gain: number }[] => {
    let pool = ts.map((t) => ({ transform: t, gain: -Infinity }));
    ANNEALING.forEach((inflation, level) => {
      const set = inflation > 1 && uncrowded ? uncrowded : { points, fixed };
      pool = pool
        .map((c) => {
          const known = refinedAtLevel[level].get(c.transform);
          if (known) return known;
          const r = hardEmRefine(prepared, set.points, c.transform, 'similarity', limits, { ...params, inflation }, set.fixed, { iterations: SCREEN_ITERATIONS[level] });
          const out = { transform: r.transform, gain: r.gain };
          refinedAtLevel[level].set(c.transform, out);
          return out;
        })
        .sort((a, b) => b.gain - a.gain);
      if (halve && level < ANNEALING.length - 1) pool = betterHalfAndDistinct(pool, set.points, Math.max(FINALISTS + 3, Math.ceil(pool.length / 2)), EXTRA_DISTINCT, 2 * prepared.spacing);
    });
    return pool;
  };
  let candidates: Transform[] = starts.map((s) => s.transform);
  if (method !== 'ransac') {
    return finish(starts[0].transform);
  }
  if (d >= 2) {
    const flips = halfTurns(prepared.axes, prepared.centroid);
    const extra: Transform[] = [];
    // The best pose turned about the template's long axis in steps of 30 degrees, with and without an
    // end-to-end half-turn (a nearly round cross-section leaves the roll open), and half-turns of the next two.
    if (starts.length > 0) for (const r of rollsAboutLongAxis(prepared.axes, prepared.centroid, ROLL_STEPS)) {
      extra.push(composeTransforms(r, starts[0].transform));
      extra.push(composeTransforms(r, composeTransforms(flips[flips.length > 1 ? 1 : 0], starts[0].transform)));
    }
    for (const s of starts.slice(1, 3)) for (const f of flips) extra.push(composeTransforms(f, s.transform));
    // The turns are about the template's centroid: when part of the head lies outside the imaged volume,
    // the sample's cells are off that centroid and a turned pose lands them along the long axis away from
    // where they belong. The best of the turned poses slid back along the axis join the screening.
    const u = prepared.axes.map((row) => row[0]);
    const step = SLIDE_STEP * prepared.spacing;
    const steps = Math.floor((SLIDE_REACH * prepared.halfLength) / step);
    const slid = extra
      .map((t) => bestSlide(t, u, step, steps, (m) => searchObjective.score(m).score))
      .filter((m) => m.shift !== 0)
      .sort((a, b) => b.score - a.score)
      .slice(0, SLID_CANDIDATES)
      .map((m) => m.transform);
    candidates = candidates.concat(extra, slid);
  }
  // Screen the candidates with greedy hard EM (similarity), then refine the best three distinct modes
  // further. (Ranking the modes, and choosing among the finalists, by the points' likelihood of the
  // polish below instead was tried in December 2026: in a uniformly packed head at full jitter it
  // raised the matcher from 0.204 to 0.261 of the ceiling without given labels but lowered it from
  // 0.749 to 0.677 with 8 given labels, 24 animals; ganglia and half jitter unchanged.)
  const separation = 2 * prepared.spacing;
  // Slip search on the best screened poses. Each pose's moves are scored with the outliers' excess
  // density at that pose (excess-density.ts), so that a slip cannot win by reaching for a clump of
  // outliers; the pose found is then ranked by its gain under the uniform outlier model like the rest.
  const slipped = new Map<Transform, { transform: Transform; gain: number }>();
  const slipSearch = (c: { transform: Transform; gain: number }): { transform: Transform; gain: number } => {
    const known = slipped.get(c.transform);
    if (known) return known;
    const flat: MatchModelParameters = { ...params, inflation: 1 };
    const guarded: MatchModelParameters = { ...flat, outlierExcess: outlierExcessAt(prepared, points, c.transform, params) };
    const start = { transform: c.transform, gain: matchFree(prepared, points, c.transform, guarded, fixed, false).gain };
    let best = start;
    for (let round = 0; round < SLIP_ROUNDS; round++) {
      let next = best;
      for (const move of prepared.slips) {
        const r = hardEmRefine(prepared, points, composeTransforms(move, best.transform), 'similarity', limits, guarded, fixed, { iterations: SLIP_ITERATIONS });
        if (r.gain > next.gain + SLIP_MIN_GAIN) next = { transform: r.transform, gain: r.gain };
      }
      if (next === best) break;
      best = next;
    }
    const out = best === start ? c : { transform: best.transform, gain: matchFree(prepared, points, best.transform, flat, fixed, false).gain };
    slipped.set(c.transform, out);
    return out;
  };
  const screenAndSlip = (ts: readonly Transform[], halve = true): { transform: Transform; gain: number }[] => {
    const pool = screen(ts, halve);
    // Near copies of a pose already searched (within one cell spacing) would repeat its search: they go on as they are.
    const searched: Transform[] = [];
    const head = pool.slice(0, SLIP_POSES).map((c) => {
      if (searched.some((t) => poseDistance(t, c.transform, points) < prepared.spacing)) return c;
      searched.push(c.transform);
      return slipSearch(c);
    });
    return head.concat(pool.slice(SLIP_POSES)).sort((a, b) => b.gain - a.gain);
  };
  const screened = screenAndSlip(candidates);
  const screenGainOf = (t: Transform): number => screened.find((m) => m.transform === t)?.gain ?? -Infinity;
  const finalists = distinctModes(screened, points, FINALISTS, separation).map((m) => m.transform).filter((t, i) => i === 0 || screenGainOf(t) >= screened[0].gain - FINALIST_GAP);
  const greedyObjective = (t: Transform): number => {
    if (!isPlausible(t, affineLimits)) return -Infinity;
    return matchFree(prepared, points, t, params, fixed, false).gain;
  };
  const refineFinalist = (t: Transform): { transform: Transform; gain: number } => {
    const c = compassSearch(greedyObjective, t, prepared.centroid, { rotation: 0.05, scale: 0.03, translation: prepared.spacing / 2 }, 'similarity', COMPASS_EVALUATIONS);
    return { transform: c.transform, gain: matchFree(prepared, points, c.transform, params, fixed, true).gain };
  };
  const refined = finalists.map(refineFinalist);
  const byGain = refined.indexOf(refined.slice().sort((a, b) => b.gain - a.gain)[0]);
  // Final refinement of a pose: hard EM on the matching (greedy), then a polish on the points'
  // one-to-one likelihood L, which sums over labellings instead of taking the best one (added in
  // December 2026: ganglia 0.944 -> 0.990 of the ceiling on 32 animals, half jitter 0.931 -> 0.930, 40%
  // outliers 0.890 -> 0.905 on 16; without the hard-EM steps before it the suite was the same but the
  // demo animals lost 0.8 points). Both run once as a similarity and once as an affine map; the affine
  // pose is kept only when its L exceeds the similarity's by more than the BIC penalty of its extra
  // parameters (chooseFamily).
  const scoreFresh = (t: Transform): number => pointLikelihoodScorer(prepared, points, params, fixed)(t, COMPARISON_SWEEPS, true);
  // The final pose from a start, with its L from fresh factors (computed here only when chooseFamily did not).
  const finalFrom = (start: Transform): { transform: Transform; likelihood: () => number } => {
    // The outliers' excess density at the start pose guards these stages too (excess-density.ts).
    const guarded: MatchModelParameters = { ...params, outlierExcess: outlierExcessAt(prepared, points, start, params) };
    const stages = (kind: 'similarity' | 'affine'): Transform => {
      const hard = hardEmRefine(prepared, points, start, kind, affineLimits, guarded, fixed, { iterations: 6 }).transform;
      return polishOnPointLikelihood(prepared, points, hard, guarded, fixed, affineLimits, kind);
    };
    if (d === 1) {
      const t = stages('affine');
      return { transform: t, likelihood: () => scoreFresh(t) };
    }
    const chosen = chooseFamily(stages('similarity'), stages('affine'), scoreFresh, d, n);
    return { transform: chosen.transform, likelihood: () => chosen.likelihood };
  };
  // The other distinct pose modes weigh in on the confidences (model averaging over poses).
  // Competing modes for the confidences: every distinct mode of the screening, weighed by its
  // screening gain against the winner's (all at the same stage, hence comparable); finalists
  // contribute their refined pose.
  const modesAgainst = (pool: readonly { transform: Transform; gain: number }[], starts: readonly Transform[], ends: readonly { transform: Transform }[], winnerIndex: number) => {
    const screenedModes = distinctModes(pool, points, MODES_IN_CONFIDENCE, separation);
    const winnerScreenGain = screenedModes.find((m) => poseDistance(m.transform, starts[winnerIndex], points) < 1e-9)?.gain ?? pool[0].gain;
    const others: { transform: Transform; gain: number }[] = [];
    for (const m of screenedModes) {
      const f = starts.findIndex((t) => poseDistance(t, m.transform, points) < 1e-9);
      if (f === winnerIndex) continue;
      others.push({ transform: f >= 0 ? ends[f].transform : m.transform, gain: m.gain });
    }
    const poseMargin = others.length > 0 ? winnerScreenGain - Math.max(...others.map((m) => m.gain)) : null;
    return { winnerScreenGain, others, poseMargin };
  };
  const first = finalFrom(refined[byGain].transform);
  let finalPose = first.transform;
  let modes = modesAgainst(screened, finalists, refined, byGain);
  if (poseUnsettled(modes.poseMargin)) {
    // The matching gain does not settle the orientation (December 2026; docs/algorithms.md, "Pose
    // margin"). The screening is run again without halving, so that no candidate is dropped at the
    // widened levels, and its best distinct modes not near a finalist join them; every finalist
    // goes through the final refinement, and the one whose pose gives the points the highest
    // likelihood L wins.
    const full = screenAndSlip(candidates, false);
    const extra = distinctModes(full, points, FINALISTS + UNSETTLED_EXTRA, separation)
      .filter((m) => m.gain >= full[0].gain - FINALIST_GAP && finalists.every((f) => poseDistance(f, m.transform, points) > separation))
      .map((m) => m.transform);
    const starts = finalists.concat(extra);
    const ends = refined.concat(extra.map(refineFinalist));
    let winner = byGain;
    let bestLikelihood = first.likelihood();
    ends.forEach((r, i) => {
      if (i === byGain) return;
      const f = finalFrom(r.transform);
      const likelihood = f.likelihood();
      if (likelihood > bestLikelihood) {
        bestLikelihood = likelihood;
        winner = i;
        finalPose = f.transform;
      }
    });
    modes = modesAgainst(full, starts, ends, winner);
  }
  return finish(finalPose, modes.others, modes.winnerScreenGain, modes.poseMargin);

  /**
   * Stages 3 and 4 from the chosen pose. `otherModes` are competing
   * poses with their matching gains; the confidence of a proposal is its
   * posterior averaged over the modes with weights exp(gain_m - bestGain)
   * (each mode's evidence approximated by its best matching, all compared at
   * the same screening stage).
   */
  function finish(finalPose: Transform, otherModes: readonly { transform: Transform; gain: number }[] = [], bestGain = 0, poseMargin: number | null = null): MatchResult {
    let transform = finalPose;
    let mapped = mapPoints(transform, points);
    let jac = jacobianOf(transform);
    params = finalParameters(prepared, mapped, jac, params);

    // Stage 3: non-rigid corrections, on the posterior-expected cell positions of the points.
    let nonRigidApplied = false, bendApplied = false;
    // Each point's posterior-expected cell position and its posterior mass of being a cell (given labels: their cell).
    const expectedCells = (g: PairGains, mg: Marginals): { expected: (number[] | null)[]; weight: number[] } => {
      const expected: (number[] | null)[] = [];
      const weight: number[] = [];
      for (let i = 0; i < n; i++) {
        const m = new Array<number>(d).fill(0);
        let w = 0;
        for (let j = g.rowStart[i]; j < g.rowStart[i + 1]; j++) {
          const k = g.cells[j];
          const pw = fixedCell.has(i) ? (k === fixedCell.get(i) ? 1 : 0) : mg.pair[j];
          w += pw;
          for (let a = 0; a < d; a++) m[a] += pw * model.means[k * d + a];
        }
        if (w > 1e-9) {
          expected.push(m.map((v) => v / w));
          weight.push(w);
        } else {
          expected.push(null);
          weight.push(0);
        }
      }
      return { expected, weight };
    };
    // The kernel smoother climbs the greedy matching gain; the bend, whose BIC gate needs a likelihood,
    // climbs the points' likelihood L = sum_i log(1 + sum_k b_k W_ik) = -sum_i log P(i is an outlier).
    const estep = (y: Points) => {
      const g = pairGains(model, prepared.pairGrid, y, jac, params);
      return { ...expectedCells(g, sinkhorn(g, n, model.size, 40)), objective: greedyMatchingGain(g, n, model.size) };
    };
    // L of nearby mapped points (the bend's and the joint polish's steps): the Sinkhorn column factors
    // carry from one evaluation to the next, as in the final polish (FRESH_SWEEPS from 1 at the first,
    // BEND_SWEEPS after it).
    const columns = new Float64Array(model.size).fill(1);
    let weights: Float64Array = new Float64Array(0);
    let warm = false;
    const likelihoodOf = (y: Points, jacobian = jac): number => {
      const g = pairGains(model, prepared.pairGrid, y, jacobian, params, false, true);
      const r = pointLikelihood(g, n, model.size, columns, warm ? BEND_SWEEPS : FRESH_SWEEPS, weights);
      weights = r.weights;
      warm = true;
      return r.value;
    };
    if (nonRigid && n >= 2 * (d + 1)) {
      const nr = nonRigidCorrect(estep, mapped, 6 * prepared.spacing, 8, 4);
      if (nr.iterations > 0) {
        mapped = nr.mapped;
        nonRigidApplied = true;
      }
    }
    if (bend && d >= 2) {
      // correctBend leaves samples with too few points for its d - 1 curvatures as they are.
      const bendAxis = prepared.bendAxis;
      const b = correctBend((y) => likelihoodOf(y), mapped, bendAxis);
      mapped = b.mapped;
      bendApplied = b.applied;
      if (b.applied && !nonRigidApplied) {
        // Pose and bend fitted jointly by alternating ascent on L: the pose polished again with the bend
        // applied (the final polish's steps), then the bend searched again from the polished pose (five
        // seeds: ganglia 0.951 -> 0.959 of the ceiling, half jitter 0.943 -> 0.949; docs/algorithms.md,
        // "Bend correction").
        const kind = transform.kind === 'affine' ? 'affine' : 'similarity';
        const bentLikelihood = (t: Transform): number =>
          isPlausible(t, affineLimits) ? likelihoodOf(applyBend(mapPoints(t, points), b.curvatures, bendAxis), jacobianOf(t)) : -Infinity;
        transform = compassSearch(bentLikelihood, transform, prepared.centroid, polishSteps(prepared.spacing), kind, POLISH_EVALUATIONS).transform;
        jac = jacobianOf(transform);
        const posed = mapPoints(transform, points);
        const again = correctBend((y) => likelihoodOf(y), posed, bendAxis);
        mapped = again.applied ? again.mapped : applyBend(posed, b.curvatures, bendAxis);
      }
    }

    // Stage 4: assignment and posteriors.
    const gains = pairGains(model, prepared.pairGrid, mapped, jac, params);
    const modes = otherModes
      .map((m) => ({ transform: m.transform, weight: Math.exp(Math.min(0, m.gain - bestGain) / MODE_WEIGHT_TEMPERATURE) }))
      // A mode of weight <= 1e-3 moves no confidence by more than 0.001; leaving it out saves its posterior.
      .filter((m) => m.weight > 1e-3)
      .map((m) => ({ gains: pairGains(model, prepared.pairGrid, mapPoints(m.transform, points), jacobianOf(m.transform), params), weight: m.weight }));
    const proposals = assignAndScore(model, gains, mapped, fixedCell, sample.labels, radius, options.abstainBelow ?? 0, options.assignment ?? DEFAULT_ASSIGNMENT, modes);
    let hits = 0, score = 0;
    proposals.forEach((p, i) => {
      if (p.label !== null && p.distance !== null && p.distance < radius) hits++;
      const k = p.label === null ? undefined : model.labelIndex.get(p.label);
      if (k !== undefined) for (let j = gains.rowStart[i]; j < gains.rowStart[i + 1]; j++) if (gains.cells[j] === k) score += gains.gains[j];
    });
    return {
      sampleId: sample.id,
      method,
      proposals,
      transform,
      hits,
      score,
      trials,
      stopReason,
      crowded: uncrowded ? n - uncrowded.points.length : 0,
      nonRigid: nonRigidApplied,
      bend: bendApplied,
      poseMargin,
    };

  }
}

/**
 * The points' one-to-one likelihood (softassign.ts, pointLikelihood) at maps
 * t, given pairs counting with their own gains (fixedGain). The Sinkhorn
 * column factors stay between calls: `fresh` starts them from 1 (for a map
 * unrelated to the last one); otherwise they start from the last call's, which
 * for a nearby map needs only a few sweeps.
 */
function pointLikelihoodScorer(
  prepared: PreparedTemplate,
  points: Points,
  params: MatchModelParameters,
  fixed: readonly Pair[],
): (t: Transform, sweeps: number, fresh: boolean) => number {
  const { model } = prepared;
  const n = points.length, K = model.size;
  const columns = new Float64Array(K).fill(1);
  let weights: Float64Array = new Float64Array(0);
  const { rows, colIndex } = freeRowsAndColumns(n, K, fixed);
  return (t, sweeps, fresh) => {
    if (fresh) columns.fill(1);
    const all = pairGains(model, prepared.pairGrid, mapPoints(t, points), jacobianOf(t), params, false, true);
    const g = fixed.length > 0 ? restrictGains(all, rows, colIndex) : all;
    const r = pointLikelihood(g, rows.length, K, columns, sweeps, weights);
    weights = r.weights;
    return r.value + fixedGain(model, points, t, params, fixed);
  };
}

/**
 * The similarity pose or the affine one, with its likelihood, by the points'
 * one-to-one likelihood L (`likelihoodOf`: pointLikelihoodScorer from fresh
 * column factors) with the BIC penalty
 * (Schwarz 1978) on the affine map's extra parameters: the affine pose is kept
 * only when L_affine - L_similarity > (q / 2) ln n, q = d(d+1) - d(d+1)/2 - 1
 * (q = 5 in 3-D: 13.1 nats for 190 points; 2 in 2-D). A real stretch of one
 * axis (depth mis-scaled by the optics, an animal pressed flat) gains far more
 * than that; with none, the affine map's extra freedom fits only the noise of
 * the labelling, and the similarity labels better (docs/algorithms.md, "Pose
 * family").
 */
function chooseFamily(similarity: Transform, affine: Transform, likelihoodOf: (t: Transform) => number, d: number, n: number): { transform: Transform; likelihood: number } {
  const extra = d * (d + 1) - (d * (d + 1)) / 2 - 1;
  const lAffine = likelihoodOf(affine), lSimilarity = likelihoodOf(similarity);
  return lAffine - lSimilarity > (extra / 2) * Math.log(n) ? { transform: affine, likelihood: lAffine } : { transform: similarity, likelihood: lSimilarity };
}

/**
 * Compass search (refine.ts) of the final pose on the points' one-to-one
 * likelihood: a map of the given family on top of the start, small steps (0.01 rad, 0.01
 * log-scale and shear, a sixth of the cell spacing), POLISH_EVALUATIONS
 * evaluations. The start is scored from fresh column factors with
 * FRESH_SWEEPS Sinkhorn sweeps; each later evaluation starts from the
 * previous one's factors (nearby maps, nearly the same factors) with
 * POLISH_SWEEPS.
 */
function polishOnPointLikelihood(
  prepared: PreparedTemplate,
  points: Points,
  start: Transform,
  params: MatchModelParameters,
  fixed: readonly Pair[],
  limits: Plausibility,
  kind: 'similarity' | 'affine',
): Transform {
  const score = pointLikelihoodScorer(prepared, points, params, fixed);
  let first = true;
  const objective = (t: Transform): number => {
    if (!isPlausible(t, limits)) return -Infinity;
    const value = score(t, first ? FRESH_SWEEPS : POLISH_SWEEPS, first);
    first = false;
    return value;
  };
  return compassSearch(objective, start, prepared.centroid, polishSteps(prepared.spacing), kind, POLISH_EVALUATIONS).transform;
}

/** Compass steps of the polishes on L: 0.01 rad, 0.01 log-scale and shear, a sixth of the cell spacing. */
function polishSteps(spacing: number): { rotation: number; scale: number; translation: number; shear: number } {
  return { rotation: 0.01, scale: 0.01, translation: spacing / 6, shear: 0.01 };
}

/**
 * The pose search's objective on a set of points: the MLESAC mixture
 * likelihood (density-grid.ts; outlier share 0.25) as the score and four EM
 * steps on it (refine.ts) as the local optimisation, kept only when they raise
 * the score.
 */
function poseObjective(prepared: PreparedTemplate, points: Points, outlierDensity: number, limits: Plausibility): PoseObjective {
  const searchShare = 0.25;
  const mixture = new MixtureScorer(prepared.density, points, searchShare);
  const ctx: MixtureContext = { model: prepared.model, grid: prepared.pairGrid, outlierShare: searchShare, outlierDensity };
  return {
    score: (t: Transform) => mixture.score(toFlat(t)),
    optimise: (e: PoseEstimate): PoseEstimate => {
      const r = emRefine(ctx, points, e.transform, 'similarity', limits, 4);
      const s = mixture.score(toFlat(r.transform));
      return s.score >= e.score ? { transform: r.transform, score: s.score, hits: s.hits } : e;
    },
  };
}

/**
 * The sample without its crowded points (crowding.ts), for the pose search and
 * the wide screening levels: `index` gives each kept point's index in the
 * sample, `fixed` the given pairs renumbered (points with a given label are
 * always kept). Null when fewer than D + 2 points are crowded (too few to carry
 * a pose of their own) or fewer than 2 (D + 1) would remain.
 */
function withoutCrowdedPoints(points: Points, fixed: readonly Pair[], limit: number): { points: Points; fixed: Pair[]; index: number[] } | null {
  const d = points[0].length;
  const crowded = crowdedPoints(points, limit);
  const given = new Set(fixed.map((f) => f.point));
  const index = points.map((_, i) => i).filter((i) => !crowded[i] || given.has(i));
  if (points.length - index.length < d + 2 || index.length < 2 * (d + 1)) return null;
  const renumber = new Map(index.map((i, j) => [i, j]));
  return {
    points: index.map((i) => points[i]),
    fixed: fixed.map((f) => ({ point: renumber.get(f.point) as number, cell: f.cell })),
    index,
  };
}

/**
 * The one-to-one matching of the free points and cells at the map t and its
 * gain: given pairs count with their own gains; the other points and cells
 * are matched one-to-one (greedy, or optimal when `exact`).
 */
function matchFree(
  prepared: PreparedTemplate,
  points: Points,
  t: Transform,
  params: MatchModelParameters,
  fixed: readonly Pair[],
  exact: boolean,
): { gain: number; cellOfPoint: Int32Array } {
  const { model } = prepared;
  const n = points.length, K = model.size;
  const jacobian = jacobianOf(t);
  const grid = gridForPositivePairs(prepared, jacobian, params);
  const g = pairGains(model, grid, mapPoints(t, points), jacobian, params, true, true);
  const fg = fixedGain(model, points, t, params, fixed);
  if (fixed.length === 0) {
    const m = exact ? exactMatching(g, n, K) : greedyMatching(g, n, K);
    return { gain: m.total, cellOfPoint: m.cellOfPoint };
  }
  const { rows, colIndex } = freeRowsAndColumns(n, K, fixed);
  const free = restrictGains(g, rows, colIndex);
  const m = exact ? exactMatching(free, rows.length, K) : greedyMatching(free, rows.length, K);
  const cellOfPoint = new Int32Array(n).fill(-1);
  rows.forEach((i, r) => (cellOfPoint[i] = m.cellOfPoint[r]));
  for (const f of fixed) cellOfPoint[f.point] = f.cell;
  return { gain: m.total + fg, cellOfPoint };
}

/**
 * The points and cells outside the given pairs: `rows` lists the free points
 * in order, `colIndex[k]` is k for a free cell and -1 for a given one (the
 * arguments of restrictGains).
 */
function freeRowsAndColumns(n: number, K: number, fixed: readonly Pair[]): { rows: number[]; colIndex: Int32Array } {
  const fixedPoint = new Set(fixed.map((f) => f.point));
  const fixedCells = new Set(fixed.map((f) => f.cell));
  const rows: number[] = [];
  for (let i = 0; i < n; i++) if (!fixedPoint.has(i)) rows.push(i);
  const colIndex = new Int32Array(K);
  for (let k = 0; k < K; k++) colIndex[k] = fixedCells.has(k) ? -1 : k;
  return { rows, colIndex };
}

/**
 * The part of the pair gain g_ik common to all pairs (softassign.ts):
 * log(rho J) - log(Lambda u) - log(1 - rho) - (d/2) log(2 pi c), c the inflation.
 */
function pairGainOffset(d: number, jacobian: number, params: MatchModelParameters): number {
  const infl = params.inflation ?? 1;
  return Math.log(params.detection * jacobian) - Math.log(params.outliers * params.outlierDensity) - Math.log(1 - params.detection) - 0.5 * d * Math.log(2 * Math.PI * infl);
}

/**
 * The smallest of the prepared grids that lists every pair with g_ik > 0:
 * g_ik = offset - (1/2) log det S_k - e2 / (2c) > 0 needs
 * e2 < 2c (offset - (1/2) min_k log det S_k), and pairGains never keeps
 * e2 > 3.5^2 c; so a grid of radius sqrt of the smaller bound misses none.
 */
function gridForPositivePairs(prepared: PreparedTemplate, jacobian: number, params: MatchModelParameters): CellGrid {
  const infl = params.inflation ?? 1;
  const bound = 2 * infl * (pairGainOffset(prepared.model.dim, jacobian, params) - 0.5 * prepared.minLogDet);
  const reach = Math.sqrt(Math.max(0, Math.min(12.25 * infl, bound)));
  const grids = prepared.positiveGrids;
  for (const g of grids) if (g.radius >= reach) return g;
  throw new Error(`internal: no prepared cell grid reaches ${reach.toFixed(2)} Mahalanobis units`);
}

/**
 * rho and Lambda re-estimated from the one-to-one posterior (three rounds,
 * marginals by belief propagation as for the confidences; with the Sinkhorn
 * balancing until December 2026: five seeds x 32, outliers given a label
 * with cells in ganglia 13.6% -> 11.7%, ratio 0.953 -> 0.959, half jitter
 * 0.953 -> 0.952).
 */
function estimateParameters(model: CellModel, grid: CellGrid, mapped: Points, jacobian: number, start: MatchModelParameters): MatchModelParameters {
  let params = start;
  const n = mapped.length;
  for (let it = 0; it < 3; it++) {
    const g = pairGains(model, grid, mapped, jacobian, params);
    const mg = betheMarginals(g, n, model.size);
    let matched = 0;
    for (let j = 0; j < mg.pair.length; j++) matched += mg.pair[j];
    params = { ...params, detection: Math.min(0.98, Math.max(0.3, matched / model.size)), outliers: Math.max(0.5, n - matched) };
  }
  return params;
}

/** The outliers' excess density (excess-density.ts) with the sample mapped by t. */
function outlierExcessAt(prepared: PreparedTemplate, points: Points, t: Transform, params: MatchModelParameters): Float64Array {
  return outlierExcess(prepared.model, prepared.spacing, mapPoints(t, points), jacobianOf(t), params, prepared.widened);
}

/**
 * The parameters of the last stage at mapped positions: the outliers' excess
 * density there (excess-density.ts), then rho and Lambda from the posterior
 * (estimateParameters).
 */
function finalParameters(prepared: PreparedTemplate, mapped: Points, jacobian: number, start: MatchModelParameters): MatchModelParameters {
  const withExcess = { ...start, outlierExcess: outlierExcess(prepared.model, prepared.spacing, mapped, jacobian, start, prepared.widened) };
  return estimateParameters(prepared.model, prepared.pairGrid, mapped, jacobian, withExcess);
}

function jacobianOf(t: Transform): number {
  return Math.abs(determinantFlat(toFlat(t).a, t.translation.length));
}

/**
 * Sum of the gains g_ik of the given pairs at the map t, computed directly (also
 * for pairs far outside the cell grid, whose large negative gain must count:
 * a pose that contradicts the given labels is improbable).
 */
function fixedGain(model: CellModel, points: Points, t: Transform, params: MatchModelParameters, fixed: readonly Pair[]): number {
  if (fixed.length === 0) return 0;
  const infl = params.inflation ?? 1;
  const base = pairGainOffset(model.dim, jacobianOf(t), params);
  let s = 0;
  const mapped = mapPoints(t, fixed.map((f) => points[f.point]));
  fixed.forEach((f, i) => {
    s += base - 0.5 * model.logDets[f.cell] - (0.5 * cellMahalanobisSquared(model, f.cell, mapped[i])) / infl;
  });
  return s;
}

function fitFixed(model: CellModel, points: Points, fixed: readonly Pair[], limits: Plausibility): Transform | null {
  try {
    const fit = fitTransform('similarity', fixed.map((f) => model.meanRows[f.cell]), fixed.map((f) => points[f.point]));
    const inv = invertTransform(fit.transform);
    return isPlausible(inv, limits) ? inv : null;
  } catch (e) {
    if (e instanceof FitError) return null;
    throw e;
  }
}

/** Rotations by pi about each principal axis of the template, about its centroid (d = 2: one; d = 3: three). */
function halfTurns(axes: number[][], centroid: number[]): Transform[] {
  const d = centroid.length;
  const out: Transform[] = [];
  for (let c = 0; c < (d === 2 ? 1 : d); c++) {
    // R = 2 u u^T - I rotates by pi about u (3-D); in 2-D, R = -I.
    const u = axes.map((row) => row[c]);
    const linear = Array.from({ length: d }, (_, a) =>
      Array.from({ length: d }, (_, b) => (d === 2 ? (a === b ? -1 : 0) : 2 * u[a] * u[b] - (a === b ? 1 : 0))),
    );
    const translation = centroid.map((v, a) => v - linear[a].reduce((s, x, b) => s + x * centroid[b], 0));
    out.push({ kind: 'rigid', linear, translation });
  }
  return out;
}

/**
 * Rotations about the template's first principal axis through its centroid by
 * 2 pi j / steps, j = 1 .. steps - 1 (in 2-D: rotations about the centroid;
 * in 3-D slips.ts, rotationAbout).
 */
function rollsAboutLongAxis(axes: number[][], centroid: number[], steps: number): Transform[] {
  const d = centroid.length;
  const out: Transform[] = [];
  const u = axes.map((row) => row[0]);
  for (let j = 1; j < steps; j++) {
    const a = (2 * Math.PI * j) / steps;
    if (d === 3) {
      out.push(rotationAbout(u, centroid, a));
      continue;
    }
    const linear = [
      [Math.cos(a), -Math.sin(a)],
      [Math.sin(a), Math.cos(a)],
    ];
    const translation = centroid.map((v, r) => v - linear[r].reduce((s, x, c) => s + x * centroid[c], 0));
    out.push({ kind: 'rigid', linear, translation });
  }
  return out;
}

/**
 * Successive halving with a guard for diversity: the first `quota` of the
 * pool (sorted by gain, best first), then up to `extra` more, the best of
 * the rest that lie farther than `separation` (RMS over `points`) from every
 * pose taken so far.
 */
function betterHalfAndDistinct<T extends { transform: Transform }>(pool: readonly T[], points: Points, quota: number, extra: number, separation: number): T[] {
  const kept = pool.slice(0, quota);
  for (let j = quota, added = 0; j < pool.length && added < extra; j++)
    if (kept.every((k) => poseDistance(k.transform, pool[j].transform, points) > separation)) {
      kept.push(pool[j]);
      added++;
    }
  return kept;
}

function distinctTop(poses: PoseEstimate[], points: Points, keep: number): PoseEstimate[] {
  const sorted = poses.slice().sort((a, b) => b.score - a.score);
  const out: PoseEstimate[] = [];
  for (const p of sorted) {
    if (out.some((q) => poseDistance(q.transform, p.transform, points) < 1)) continue;
    out.push(p);
    if (out.length >= keep) break;
  }
  return out;
}

function distinctModes(modes: readonly { transform: Transform; gain: number }[], points: Points, keep: number, separation: number): { transform: Transform; gain: number }[] {
  const out: { transform: Transform; gain: number }[] = [];
  for (const m of modes) {
    if (out.some((q) => poseDistance(q.transform, m.transform, points) < separation)) continue;
    out.push(m);
    if (out.length >= keep) break;
  }
  return out;
}

/** Median nearest-neighbour distance of the template means. */
function typicalSpacing(model: CellModel): number {
  const nn: number[] = [];
  for (let k = 0; k < model.size; k++) {
    let best = Infinity;
    for (let l = 0; l < model.size; l++) {
      if (l === k) continue;
      let s = 0;
      for (let a = 0; a < model.dim; a++) s += (model.meanRows[k][a] - model.meanRows[l][a]) ** 2;
      best = Math.min(best, s);
    }
    if (Number.isFinite(best)) nn.push(Math.sqrt(best));
  }
  nn.sort((a, b) => a - b);
  return nn.length ? nn[nn.length >> 1] : 1;
}

/**
 * Hard EM on the matching likelihood (softassign.ts): match one-to-one
 * (greedy, or the exact assignment when `exact`), fit template -> sample on
 * the matched pairs (weights 1 / (tr S_k / d)) and invert; repeat while the
 * matching gain grows. Given pairs stay matched. The gains use one fixed
 * (rho, Lambda), so that results from different starts compare.
 */
export function hardEmRefine(
  prepared: PreparedTemplate,
  points: Points,
  start: Transform,
  kind: Transform['kind'],
  limits: Plausibility,
  params: MatchModelParameters,
  fixed: readonly Pair[],
  options: { iterations?: number; exact?: boolean } = {},
): { transform: Transform; gain: number; iterations: number } {
  const evaluate = (t: Transform): { gain: number; cellOfPoint: Int32Array } =>
    matchFree(prepared, points, t, params, fixed, options.exact ?? false);
  let cur = start;
  let e = evaluate(cur);
  let it = 0;
  for (; it < (options.iterations ?? 10); it++) {
    const next = fitMatching(prepared.model, points, e.cellOfPoint, kind, limits);
    if (next === null) break;
    const en = evaluate(next);
    if (en.gain <= e.gain + 1e-6) break;
    cur = next;
    e = en;
  }
  return { transform: cur, gain: e.gain, iterations: it };
}

/** Weighted fit template -> sample on the matched pairs, inverted; null when too few pairs, singular or implausible. */
function fitMatching(model: CellModel, points: Points, cellOfPoint: Int32Array, kind: Transform['kind'], limits: Plausibility): Transform | null {
  const src: number[][] = [], tgt: number[][] = [], w: number[] = [];
  cellOfPoint.forEach((k, i) => {
    if (k < 0) return;
    src.push(model.meanRows[k]);
    tgt.push(points[i] as number[]);
    w.push(1 / model.isoVar[k]);
  });
  if (src.length < model.dim + 2) return null;
  let next: Transform;
  try {
    next = invertTransform(fitTransform(kind, src, tgt, { weights: w }).transform);
  } catch (err) {
    if (err instanceof FitError) return null;
    throw err;
  }
  return isPlausible(next, limits) ? next : null;
}

/** The optimal one-to-one matching (pairs with g_ik > 0) by the linear assignment solver. */
function exactMatching(g: PairGains, points: number, cells: number): HardMatching {
  const cost: number[][] = [];
  for (let i = 0; i < points; i++) {
    const row = new Array<number>(cells).fill(Infinity);
    for (let j = g.rowStart[i]; j < g.rowStart[i + 1]; j++) if (g.gains[j] > 0) row[g.cells[j]] = Math.min(row[g.cells[j]], -g.gains[j]);
    cost.push(row);
  }
  const r = assignWithAbstention(cost, new Array<number>(points).fill(0));
  return { total: -r.total, cellOfPoint: Int32Array.from(r.rowToColumn) };
}

/** Final one-to-one assignment with abstention and the posterior confidences. */
function assignAndScore(
  model: CellModel,
  gains: PairGains,
  mapped: Points,
  fixedCell: ReadonlyMap<number, number>,
  givenLabels: readonly (string | null)[],
  radius: number,
  abstainBelow: number,
  rule: Assignment,
  otherModes: readonly { gains: PairGains; weight: number }[] = [],
): Proposal[] {
  const n = mapped.length, K = model.size;
  const fixedCells = new Set(fixedCell.values());
  // Free rows and columns.
  const rows: number[] = [];
  for (let i = 0; i < n; i++) if (!fixedCell.has(i) && givenLabels[i] === null) rows.push(i);
  const cols: number[] = [];
  const colIndex = new Int32Array(K).fill(-1);
  for (let k = 0; k < K; k++)
    if (!fixedCells.has(k)) {
      colIndex[k] = cols.length;
      cols.push(k);
    }
  // Posterior marginals on the free part only, by belief propagation (belief-propagation.ts).
  const freeGains = restrictGains(gains, rows, colIndex);
  const marg = betheMarginals(freeGains, rows.length, cols.length);
  // Posterior per row as a map column -> probability, averaged over the pose modes.
  const totalWeight = 1 + otherModes.reduce((a, m) => a + m.weight, 0);
  const rowPosterior: Map<number, number>[] = rows.map(() => new Map());
  const rowOutlier = new Float64Array(rows.length);
  const accumulate = (g: PairGains, mg: ReturnType<typeof sinkhorn>, w: number): void => {
    for (let r = 0; r < rows.length; r++) {
      rowOutlier[r] += (w * mg.outlier[r]) / totalWeight;
      for (let j = g.rowStart[r]; j < g.rowStart[r + 1]; j++) {
        const c = g.cells[j];
        rowPosterior[r].set(c, (rowPosterior[r].get(c) ?? 0) + (w * mg.pair[j]) / totalWeight);
      }
    }
  };
  accumulate(freeGains, marg, 1);
  for (const m of otherModes) {
    const fg = restrictGains(m.gains, rows, colIndex);
    accumulate(fg, betheMarginals(fg, rows.length, cols.length), m.weight);
  }
  // Among the pairs with g_ik > 0 within the hit radius: 'map' maximises the summed gains (the most
  // probable joint labelling), 'mea' the summed posterior marginals P(i -> k), i.e. the number of
  // labels right expected under the model (by linearity of expectation); no label costs 0.
  const cost: number[][] = rows.map(() => new Array<number>(cols.length).fill(Infinity));
  rows.forEach((i, r) => {
    for (let j = freeGains.rowStart[r]; j < freeGains.rowStart[r + 1]; j++) {
      const c = freeGains.cells[j];
      if (freeGains.gains[j] > 0 && freeGains.distances[j] <= radius * radius)
        cost[r][c] = rule === 'mea' ? -(rowPosterior[r].get(c) ?? 0) : -freeGains.gains[j];
    }
  });
  const assignment = rows.length > 0 && cols.length > 0 ? assignWithAbstention(cost, rows.map(() => 0)) : null;
  const proposals: Proposal[] = new Array(n);
  for (let i = 0; i < n; i++) {
    if (fixedCell.has(i) || givenLabels[i] !== null) {
      const k = fixedCell.get(i);
      const label = givenLabels[i] as string;
      proposals[i] = {
        label,
        confidence: 1,
        distance: k === undefined ? null : Math.sqrt(cellMahalanobisSquared(model, k, mapped[i])),
        alternatives: [{ label, probability: 1 }],
      };
    }
  }
  rows.forEach((i, r) => {
    const alts: { label: string; probability: number }[] = [];
    for (const [c, p] of rowPosterior[r]) alts.push({ label: model.labels[cols[c]], probability: p });
    alts.sort((a, b) => b.probability - a.probability || (a.label < b.label ? -1 : 1));
    const top = alts.slice(0, 3);
    const c = assignment ? assignment.rowToColumn[r] : -1;
    let label: string | null = null, confidence = rowOutlier[r], distance: number | null = null;
    if (c >= 0) {
      const k = cols[c];
      const prob = rowPosterior[r].get(c) ?? 0;
      if (prob >= abstainBelow) {
        label = model.labels[k];
        confidence = prob;
        distance = Math.sqrt(cellMahalanobisSquared(model, k, mapped[i]));
      }
    }
    proposals[i] = { label, confidence, distance, alternatives: top };
  });
  return proposals;
}

/** The pair table restricted to the given rows, with cells renumbered by colIndex (dropped when -1). */
function restrictGains(g: PairGains, rows: readonly number[], colIndex: Int32Array): PairGains {
  const rowStart = new Int32Array(rows.length + 1);
  const cells: number[] = [], gains: number[] = [], dists: number[] = [];
  rows.forEach((i, r) => {
    for (let j = g.rowStart[i]; j < g.rowStart[i + 1]; j++) {
      const c = colIndex[g.cells[j]];
      if (c < 0) continue;
      cells.push(c);
      gains.push(g.gains[j]);
      dists.push(g.distances[j]);
    }
    rowStart[r + 1] = cells.length;
  });
  return { rowStart, cells: Int32Array.from(cells), gains: Float64Array.from(gains), distances: Float64Array.from(dists) };
}

/**
 * Labels for points already mapped into the template frame (for example by a
 * known deformation: the accuracy suite's oracle). As in the matcher's last
 * stage, the outliers' excess density is measured at these positions
 * (excess-density.ts) and rho and Lambda are estimated from the posterior;
 * given labels stay fixed.
 * @param jacobian |det| of the sample -> template map at the points
 */
export function labelMappedPoints(
  template: Template,
  sample: Sample,
  mapped: Points,
  jacobian: number,
  options: { hitRadius?: number; abstainBelow?: number; assignment?: Assignment } = {},
): Proposal[] {
  const prepared = prepareTemplate(template);
  const { model } = prepared;
  const n = mapped.length;
  const fixedCell = givenLabelCells(model, sample.labels);
  let params: MatchModelParameters = {
    detection: 0.85,
    outliers: Math.max(1, n - 0.85 * model.size),
    outlierDensity: 1 / boundingVolume(sample.coords),
  };
  params = finalParameters(prepared, mapped, jacobian, params);
  const gains = pairGains(model, prepared.pairGrid, mapped, jacobian, params);
  return assignAndScore(model, gains, mapped, fixedCell, sample.labels, options.hitRadius ?? DEFAULT_HIT_RADIUS, options.abstainBelow ?? 0, options.assignment ?? DEFAULT_ASSIGNMENT);
}

/**
 * Labels already in the sample as fixed point -> cell pairs, in point order.
 * Labels the template does not know are ignored; the first point carrying a
 * label wins (the readers reject repeated labels anyway).
 */
function givenLabelCells(model: CellModel, labels: readonly (string | null)[]): Map<number, number> {
  const fixedCell = new Map<number, number>();
  const used = new Set<number>();
  labels.forEach((label, i) => {
    if (label === null) return;
    const k = model.labelIndex.get(label);
    if (k === undefined || used.has(k)) return;
    used.add(k);
    fixedCell.set(i, k);
  });
  return fixedCell;
}
