/**
 * Test helper: a plausible Template built directly (not by co-registration)
 * from the invented glimmerkin layout of test/support/animals.ts. Cell means
 * are the layout positions, covariances are the layout's per-cell jitter
 * covariances (positive definite, sds 0.5-1.5 um by default here), counts
 * vary so that some cells are sparse, and a few hand labels are flagged.
 * Sufficient statistics are made consistent with mean and covariance for n
 * observations (sum = n mu, sumOfSquares = (n - 1) Sigma + n mu mu^T).
 */
import { createRng, randomInt } from '../../../src/random.js';
import {
  TEMPLATE_FORMAT,
  TEMPLATE_VERSION,
  type Dim,
  type FlaggedLabel,
  type Matrix,
  type Template,
  type TemplateCell,
} from '../../../src/types.js';
import { generateLayout } from '../../support/animals.js';

export interface TestTemplateOptions {
  readonly cells?: number;
  readonly dim?: Dim;
  readonly seed?: number;
  readonly members?: number;
  readonly flagged?: number;
}

/** A template cell with consistent sufficient statistics. */
export function makeCell(label: string, mean: readonly number[], covariance: Matrix, count: number, minCount = 5): TemplateCell {
  const d = mean.length;
  return {
    label,
    mean: mean.slice(),
    covariance: covariance.map((r) => r.slice()),
    count,
    sum: mean.map((m) => count * m),
    sumOfSquares: Array.from({ length: d }, (_, a) =>
      Array.from({ length: d }, (_, b) => (count - 1) * covariance[a][b] + count * mean[a] * mean[b]),
    ),
    sparse: count < minCount,
  };
}

/** A template from explicit cells, with default settings and the given flags. */
export function makeTemplate(cells: readonly TemplateCell[], dim: Dim, flagged: readonly FlaggedLabel[] = [], members = 12): Template {
  const pooled = Array.from({ length: dim }, (_, a) => Array.from({ length: dim }, (_, b) => (a === b ? 1 : 0)));
  return {
    format: TEMPLATE_FORMAT,
    version: TEMPLATE_VERSION,
    dim,
    units: 'um',
    cells,
    members: Array.from({ length: members }, (_, i) => ({
      id: `gk-${String(i + 1).padStart(2, '0')}`,
      hash: '0'.repeat(64),
      transform: {
        kind: 'similarity' as const,
        linear: pooled.map((r) => r.slice()),
        translation: new Array<number>(dim).fill(0),
      },
      residual: 0.8 + 0.05 * i,
      labelled: 20 + i,
      positions: [],
    })),
    pooledCovariance: pooled,
    settings: {
      tolerance: 1e-4,
      maxIterations: 100,
      alignment: 'similarity',
      minCount: 5,
      priorStrength: 3,
      flagProbability: 0.001,
      robust: 'huber',
    },
    flagged,
    tool: { name: 'cairn', version: '0.1.0' },
    created: '2026-01-01T00:00:00.000Z',
  };
}

/** A seeded plausible template: `cells` cells of the invented layout, some sparse, some flagged labels. */
export function testTemplate(options: TestTemplateOptions = {}): Template {
  const rng = createRng(options.seed ?? 7);
  const dim = options.dim ?? 3;
  const layout = generateLayout(rng, { cells: options.cells ?? 36, dim, nearestSpacing: 3, jitterRange: [0.5, 1.5] });
  const members = options.members ?? 12;
  const cells = layout.labels.map((label, i) => makeCell(label, layout.positions[i], layout.jitter[i], 2 + randomInt(rng, members - 1)));
  const flagged: FlaggedLabel[] = [];
  for (let k = 0; k < (options.flagged ?? 3); k++) {
    const i = randomInt(rng, cells.length);
    const j = (i + 1) % cells.length;
    flagged.push({
      sample: `gk-${String(1 + randomInt(rng, members)).padStart(2, '0')}`,
      row: 2 + randomInt(rng, 150),
      label: cells[i].label,
      distance: 4 + 2 * rng(),
      likelierLabel: k === 0 ? null : cells[j].label,
      likelierDistance: k === 0 ? null : 1 + rng(),
    });
  }
  return makeTemplate(cells, dim, flagged, members);
}
