/**
 * The plain data shapes that flow between modules. Coordinates are always
 * row-per-point arrays (n x d) of micrometres; d is 2 or 3.
 */

export type Dim = 2 | 3;

/** n x d array of point coordinates, one row per point. */
export type Points = readonly (readonly number[])[];

/** d x d matrix, row-major nested arrays. */
export type Matrix = readonly (readonly number[])[];

/**
 * One animal's detected points. Arrays are parallel: `coords[i]`, `labels[i]`,
 * `rows[i]` and `features.values[i]` describe point i, in input order.
 */
export interface Sample {
  /** Sample id: the file name without extension, or the `sample` column value. */
  readonly id: string;
  /** The file it was read from (for messages). */
  readonly source: string;
  readonly dim: Dim;
  /** n x d, micrometres (after any voxel-size conversion). */
  readonly coords: Points;
  /** Cell label per point; null = unlabelled. */
  readonly labels: readonly (string | null)[];
  /** 1-based line in the source file of each point (header is line 1). */
  readonly rows: readonly number[];
  /** Further numeric columns carried along per point. */
  readonly features: { readonly names: readonly string[]; readonly values: readonly (readonly number[])[] };
}

/**
 * An affine map y = A x + t. Similarity and rigid transforms are affine maps
 * whose `linear` part is scale * rotation; `kind` records which family was fitted.
 */
export interface Transform {
  readonly kind: 'similarity' | 'rigid' | 'affine';
  /** d x d linear part A. */
  readonly linear: Matrix;
  /** Length-d translation t. */
  readonly translation: readonly number[];
}

/** Per-cell statistics in the template frame. */
export interface TemplateCell {
  readonly label: string;
  /** Mean position (um, template frame). */
  readonly mean: readonly number[];
  /** Posterior (shrunk) covariance of the cell position across animals, um^2; positive definite. */
  readonly covariance: Matrix;
  /** Number of member observations used in the statistics (flagged labels excluded). */
  readonly count: number;
  /** Sufficient statistics for exact updates: sum of aligned positions. */
  readonly sum: readonly number[];
  /** Sufficient statistics: sum of outer products x x^T of aligned positions. */
  readonly sumOfSquares: Matrix;
  /** True when count is below the template's minimum count setting. */
  readonly sparse: boolean;
}

/** A sample that contributed to the template. */
export interface TemplateMember {
  readonly id: string;
  /** SHA-256 (hex) of the sample's canonical content (coords + labels). */
  readonly hash: string;
  /** Maps the sample's own coordinates into the template frame. */
  readonly transform: Transform;
  /** Root-mean-square residual (um) of its labelled points after alignment. */
  readonly residual: number;
  /** Labelled points used for the alignment. */
  readonly labelled: number;
  /** The member's labelled points in its own coordinates, kept for `--refit`. */
  readonly positions: readonly {
    readonly label: string;
    readonly coords: readonly number[];
    /** 1-based line in the member's file (optional; lets --refit name flagged rows). */
    readonly row?: number;
  }[];
}

/** A hand label that looks wrong under its cell's distribution. */
export interface FlaggedLabel {
  readonly sample: string;
  /** 1-based line in the sample's file. */
  readonly row: number;
  readonly label: string;
  /** Mahalanobis distance (not squared) to the cell, computed without this sample. */
  readonly distance: number;
  /** A cell under which the point is more probable, when there is one. */
  readonly likelierLabel: string | null;
  readonly likelierDistance: number | null;
}

export const TEMPLATE_FORMAT = 'cairn-template';
export const TEMPLATE_VERSION = 1;

export interface TemplateSettings {
  /** Consensus convergence tolerance (um RMS change). */
  readonly tolerance: number;
  readonly maxIterations: number;
  /** Transform family used to align members. */
  readonly alignment: 'similarity' | 'rigid' | 'affine';
  /** Cells seen fewer than this many times are marked sparse. */
  readonly minCount: number;
  /** Strength (pseudo-observations) of the pooled-covariance prior. */
  readonly priorStrength: number;
  /** Tail probability below which a hand label is flagged (see flagReference). */
  readonly flagProbability: number;
  /** Robust weight function used for the consensus. */
  readonly robust: string;
  /**
   * Direction in which each member's map is estimated: 'template-to-sample' (fit the
   * template onto the member, then invert; the default when absent) or
   * 'sample-to-template' (ordinary generalised Procrustes).
   */
  readonly memberFit?: 'template-to-sample' | 'sample-to-template';
  /**
   * Tail distribution used with flagProbability: 'student-t' (the cell's predictive
   * multivariate t; the default when absent) or 'chi-square'.
   */
  readonly flagReference?: 'student-t' | 'chi-square';
}

export interface Template {
  readonly format: typeof TEMPLATE_FORMAT;
  readonly version: typeof TEMPLATE_VERSION;
  readonly dim: Dim;
  readonly units: 'um';
  readonly cells: readonly TemplateCell[];
  readonly members: readonly TemplateMember[];
  /** Pooled within-cell covariance, the prior's centre. */
  readonly pooledCovariance: Matrix;
  readonly settings: TemplateSettings;
  readonly flagged: readonly FlaggedLabel[];
  readonly tool: { readonly name: 'cairn'; readonly version: string };
  /** ISO time of writing; absent under --no-timestamp. */
  readonly created?: string;
}
