/**
 * Template against template: which cells sit differently between two templates
 * (strains, stages, conditions), beyond the animal-to-animal spread.
 */
import { FitError, UsageError } from '../errors.js';
import { isPositiveDefinite } from '../geometry/covariance.js';
import { scaleMatrix } from '../geometry/linear-algebra.js';
import { applyToPoint, transformScale } from '../geometry/transform.js';
import type { Rng } from '../random.js';
import { benjaminiHochberg } from '../stats/multiple-testing.js';
import type { Matrix, Template, TemplateCell, Transform } from '../types.js';
import { fitRobustAlignment, leaveOneOutAlignment, transformCovariance } from './alignment.js';
import { hotellingTwoSample, type HotellingForm } from './hotelling.js';
import { lengthConfidenceInterval } from './length-interval.js';
import { permutationShapeTest, type AnimalPositions, type PermutationTestResult } from './permutation.js';
import { procrustesDistances, type ProcrustesDistances } from './procrustes-distance.js';

/** Which covariance stands for each group's spread in the test. */
export type CovarianceSource = 'template' | 'sample';

export interface CompareOptions {
  /** Fit a uniform scale between the frames (default true); false = rigid (`--no-scale`). */
  readonly scale?: boolean;
  /** Hotelling form (default 'unequal', Krishnamoorthy & Yu 2004). */
  readonly form?: HotellingForm;
  /**
   * 'template' (default): the template's stored covariance, a shrunk (posterior)
   * estimate, stands in for the sample covariance S_i; 'sample': the unshrunk
   * sample covariance recomputed from the stored sums, (SS - s s^T / n) / (n - 1).
   */
  readonly covariance?: CovarianceSource;
  /** Confidence level of the displacement-length interval (default 0.95). */
  readonly level?: number;
  /** q-value threshold for `significant` (default 0.05). */
  readonly alpha?: number;
  /** Permutations for the overall shape test (default 999; 0 = none). */
  readonly permutations?: number;
  /** Required when permutations > 0 and both templates keep members' positions. */
  readonly rng?: Rng;
  /**
   * true (default): measure each cell with the alignment refitted without it and add the
   * alignment's prediction covariance to the test (leaveOneOutAlignment); false: one
   * alignment for all cells, treated as exact.
   */
  readonly alignmentUncertainty?: boolean;
}

export interface CellComparison {
  readonly label: string;
  /** Cell mean in A's frame. */
  readonly meanA: number[];
  /** Cell mean of B mapped into A's frame. */
  readonly meanB: number[];
  /** meanB - meanA (um, A's frame): the arrow from A to B. */
  readonly displacement: number[];
  /** |displacement| (um). */
  readonly length: number;
  /** Confidence interval of the length (um) at `level`; see lengthConfidenceInterval. */
  readonly lengthInterval: [number, number];
  readonly countA: number;
  readonly countB: number;
  /** Covariances used in the test, in A's frame (um^2). */
  readonly covarianceA: number[][];
  readonly covarianceB: number[][];
  readonly tSquared: number;
  readonly f: number;
  readonly df1: number;
  readonly df2: number;
  readonly pValue: number;
  /** Benjamini-Hochberg adjusted p-value across the tested cells. */
  readonly qValue: number;
  /** Robust weight the cell got in the alignment (0 = treated as displaced, ignored). */
  readonly alignmentWeight: number;
  /** The B-to-A transform this cell was measured with (the alignment refitted without it). */
  readonly transform: Transform;
  /** Covariance (um^2, A's frame) that the alignment's uncertainty adds to the test; zeros when not used. */
  readonly alignmentCovariance: number[][];
  readonly sparse: boolean;
}

export interface UntestedCell {
  readonly label: string;
  readonly countA: number;
  readonly countB: number;
  readonly reason: string;
}

export interface ShapeDifference {
  /** Shared cells used. */
  readonly cells: number;
  /** Procrustes distances between the two templates' mean configurations. */
  readonly distances: ProcrustesDistances;
  /** Permutation test from members' kept positions, or null with the reason in `permutationNote`. */
  readonly permutation: PermutationTestResult | null;
  readonly permutationNote: string | null;
}

export interface TemplateComparison {
  readonly dim: number;
  readonly form: HotellingForm;
  readonly covariance: CovarianceSource;
  readonly level: number;
  readonly alpha: number;
  /** Whether each cell was measured with a leave-one-out alignment whose uncertainty enters the test. */
  readonly alignmentUncertainty: boolean;
  readonly alignment: {
    readonly kind: 'similarity' | 'rigid';
    /** Maps B's frame into A's. */
    readonly transform: Transform;
    readonly scale: number;
    readonly residualScale: number;
    readonly iterations: number;
    readonly converged: boolean;
    /** Shared cells given zero weight by the robust fit (treated as displaced). */
    readonly excluded: string[];
  };
  /** Tested cells sorted by q-value, then p-value, then label. */
  readonly cells: CellComparison[];
  /** Shared cells that could not be tested, with the reason. */
  readonly untested: UntestedCell[];
  readonly onlyInA: string[];
  readonly onlyInB: string[];
  /** Number of cells with q < alpha. */
  readonly significant: number;
  readonly shape: ShapeDifference;
}

/** Sample covariance from a cell's sufficient statistics: (SS - s s^T / n) / (n - 1). */
export function sampleCovarianceFromSums(cell: TemplateCell): number[][] {
  const n = cell.count;
  if (n < 2) throw new FitError(`cell ${cell.label}: sample covariance needs at least 2 observations, got ${n}`);
  return cell.sumOfSquares.map((row, i) => row.map((v, j) => (v - (cell.sum[i] * cell.sum[j]) / n) / (n - 1)));
}

/**
 * Compare template B against template A.
 *
 * 1. Align B's frame to A's on the shared cells (fitRobustAlignment: precision-
 *    weighted, iteratively reweighted similarity or rigid fit; displaced cells get
 *    zero weight). Each cell is then measured with the alignment refitted without
 *    it, and the refit's prediction covariance is added to the test's covariance
 *    (leaveOneOutAlignment), unless `alignmentUncertainty` is false.
 * 2. Per shared cell: displacement meanB' - meanA in A's frame (B's mean and
 *    covariance mapped by the fitted transform: x -> cRx + t, S -> c^2 R S R^T), its
 *    length with a confidence interval (projection of Hotelling's confidence
 *    ellipsoid, lengthConfidenceInterval), and the two-sample Hotelling T^2 test
 *    (hotellingTwoSample) with its F p-value.
 * 3. Benjamini-Hochberg q-values over the tested cells (Benjamini & Hochberg 1995).
 * 4. Overall: Procrustes distances between the mean configurations on the shared
 *    cells; with members' positions kept in both templates, a seeded permutation test.
 *
 * @throws FitError when the templates differ in dimension, share too few cells, or
 *   cannot be aligned; UsageError for bad options.
 */
export function compareTemplates(a: Template, b: Template, options: CompareOptions = {}): TemplateComparison {
  const form = options.form ?? 'unequal';
  const covarianceSource = options.covariance ?? 'template';
  const level = options.level ?? 0.95;
  const alpha = options.alpha ?? 0.05;
  const permutations = options.permutations ?? 999;
  if (!(level > 0 && level < 1)) throw new UsageError(`compareTemplates: level must lie in (0, 1), got ${level}`);
  if (!(alpha > 0 && alpha < 1)) throw new UsageError(`compareTemplates: alpha must lie in (0, 1), got ${alpha}`);
  if (!Number.isInteger(permutations) || permutations < 0) {
    throw new UsageError(`compareTemplates: permutations must be a non-negative integer, got ${permutations}`);
  }
  if (covarianceSource !== 'template' && covarianceSource !== 'sample') {
    throw new UsageError(`compareTemplates: covariance must be 'template' or 'sample', got '${String(covarianceSource)}'`);
  }
  if (a.dim !== b.dim) throw new FitError(`the templates have different dimensions (${a.dim} vs ${b.dim})`);
  const d = a.dim;

  const cellsB = new Map(b.cells.map((c) => [c.label, c]));
  const cellsA = new Map(a.cells.map((c) => [c.label, c]));
  const shared = a.cells.filter((c) => cellsB.has(c.label)).map((c) => c.label);
  const onlyInA = a.cells.filter((c) => !cellsB.has(c.label)).map((c) => c.label).sort();
  const onlyInB = b.cells.filter((c) => !cellsA.has(c.label)).map((c) => c.label).sort();

  // The alignment uses every shared cell, with the template covariances (always positive definite).
  const meanCov = (cell: TemplateCell): number[][] => scaleMatrix(cell.covariance, 1 / Math.max(1, cell.count));
  const alignmentInput = {
    source: shared.map((l) => cellsB.get(l)!.mean),
    target: shared.map((l) => cellsA.get(l)!.mean),
    sourceCovariances: shared.map((l) => meanCov(cellsB.get(l)!)),
    targetCovariances: shared.map((l) => meanCov(cellsA.get(l)!)),
  };
  const alignment = fitRobustAlignment(alignmentInput, { kind: options.scale === false ? 'rigid' : 'similarity' });
  const t = alignment.transform;
  const withUncertainty = options.alignmentUncertainty ?? true;

  const tested: Omit<CellComparison, 'qValue'>[] = [];
  const untested: UntestedCell[] = [];
  shared.forEach((label, index) => {
    const ca = cellsA.get(label)!;
    const cb = cellsB.get(label)!;
    let cellTransform = t;
    let alignmentCovariance: number[][] | undefined;
    if (withUncertainty) {
      try {
        const loo = leaveOneOutAlignment(alignmentInput, alignment, index);
        cellTransform = loo.transform;
        alignmentCovariance = loo.predictionCovariance;
      } catch (e) {
        if (!(e instanceof FitError)) throw e;
        // too few other cells: keep the joint fit, without its uncertainty
      }
    }
    const meanA = ca.mean.slice();
    const meanB = applyToPoint(cellTransform, cb.mean);
    const displacement = meanB.map((v, j) => v - meanA[j]);
    if (ca.count < 2 || cb.count < 2) {
      untested.push({ label, countA: ca.count, countB: cb.count, reason: `needs at least 2 observations in each template` });
      return;
    }
    let covA: Matrix;
    let covBOwn: Matrix;
    if (covarianceSource === 'sample') {
      covA = sampleCovarianceFromSums(ca);
      covBOwn = sampleCovarianceFromSums(cb);
      if (!isPositiveDefinite(covA) || !isPositiveDefinite(covBOwn)) {
        untested.push({ label, countA: ca.count, countB: cb.count, reason: 'sample covariance is not positive definite (too few observations)' });
        return;
      }
    } else {
      covA = ca.covariance;
      covBOwn = cb.covariance;
    }
    const covB = transformCovariance(cellTransform.linear, covBOwn);
    let test;
    try {
      // Group 1 = B, group 2 = A, so the difference is meanB - meanA (the displacement).
      test = hotellingTwoSample(
        { mean: meanB, covariance: covB, count: cb.count },
        { mean: meanA, covariance: covA, count: ca.count },
        form,
        level,
        alignmentCovariance,
      );
    } catch (e) {
      if (e instanceof FitError) {
        untested.push({ label, countA: ca.count, countB: cb.count, reason: e.message });
        return;
      }
      throw e;
    }
    const length = Math.sqrt(displacement.reduce((acc, v) => acc + v * v, 0));
    tested.push({
      label,
      meanA,
      meanB,
      displacement,
      length,
      lengthInterval: lengthConfidenceInterval(displacement, test.differenceCovariance, test.criticalTSquared),
      countA: ca.count,
      countB: cb.count,
      covarianceA: covA.map((r) => r.slice()),
      covarianceB: covB,
      tSquared: test.tSquared,
      f: test.f,
      df1: test.df1,
      df2: test.df2,
      pValue: test.pValue,
      alignmentWeight: alignment.robustWeights[index],
      transform: cellTransform,
      alignmentCovariance: alignmentCovariance ?? meanA.map(() => meanA.map(() => 0)),
      sparse: ca.sparse || cb.sparse,
    });
  });
  const q = benjaminiHochberg(tested.map((c) => c.pValue));
  const cells: CellComparison[] = tested.map((c, i) => ({ ...c, qValue: q[i] }));
  cells.sort((x, y) => x.qValue - y.qValue || x.pValue - y.pValue || (x.label < y.label ? -1 : x.label > y.label ? 1 : 0));

  return {
    dim: d,
    form,
    covariance: covarianceSource,
    level,
    alpha,
    alignmentUncertainty: withUncertainty,
    alignment: {
      kind: alignment.kind,
      transform: t,
      scale: transformScale(t),
      residualScale: alignment.residualScale,
      iterations: alignment.iterations,
      converged: alignment.converged,
      excluded: shared.filter((_, i) => alignment.robustWeights[i] === 0),
    },
    cells,
    untested,
    onlyInA,
    onlyInB,
    significant: cells.filter((c) => c.qValue < alpha).length,
    shape: shapeDifference(a, b, shared, cellsA, cellsB, t, permutations, options.rng),
  };
}

function shapeDifference(
  a: Template,
  b: Template,
  shared: readonly string[],
  cellsA: ReadonlyMap<string, TemplateCell>,
  cellsB: ReadonlyMap<string, TemplateCell>,
  t: Transform,
  permutations: number,
  rng: Rng | undefined,
): ShapeDifference {
  const distances = procrustesDistances(
    shared.map((l) => cellsA.get(l)!.mean),
    shared.map((l) => applyToPoint(t, cellsB.get(l)!.mean)),
  );
  let permutation: PermutationTestResult | null = null;
  let note: string | null = null;
  const groupA = memberPositions(a, null);
  const groupB = memberPositions(b, t);
  if (permutations === 0) note = 'not run (permutations = 0)';
  else if (groupA.length < 2 || groupB.length < 2) {
    note = `not run: members' positions kept for ${groupA.length} animal(s) of A and ${groupB.length} of B (need 2 each)`;
  } else {
    if (!rng) throw new UsageError('compareTemplates: a seeded rng is required for the permutation test');
    try {
      permutation = permutationShapeTest(groupA, groupB, shared, permutations, rng);
    } catch (e) {
      if (!(e instanceof FitError)) throw e;
      note = `not run: ${e.message}`;
    }
  }
  return { cells: shared.length, distances, permutation, permutationNote: note };
}

/** Members' kept positions mapped into the template frame (and then by `extra`, when given). */
export function memberPositions(template: Template, extra: Transform | null): AnimalPositions[] {
  return template.members
    .filter((m) => m.positions.length > 0)
    .map((m) => {
      const map = new Map<string, number[]>();
      for (const p of m.positions) {
        const inTemplate = applyToPoint(m.transform, p.coords);
        map.set(p.label, extra ? applyToPoint(extra, inTemplate) : inTemplate);
      }
      return map;
    });
}
