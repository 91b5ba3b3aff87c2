/**
 * The per-sample CSV that `cairn match` writes (docs/formats.md, "Match
 * output"): one row per input point in input order, the input's columns, then
 * the proposal: `label`, `confidence`, `distance`; with `alternatives` N (1 or
 * 2), the N most probable other labels and their posterior probabilities.
 */
import { UsageError } from '../errors.js';
import type { Sample } from '../types.js';
import { formatCsv } from './csv.js';

/** The proposal for one point; label null = left unlabelled (outlier or ambiguous). */
export interface PointProposal {
  readonly label: string | null;
  /** Posterior probability of the label, in [0, 1]. */
  readonly confidence: number | null;
  /** Mahalanobis distance (not squared) to the proposed cell. */
  readonly distance: number | null;
  /** The most probable labels with their posterior probabilities, best first (may include the proposed label). */
  readonly alternatives?: readonly { readonly label: string; readonly probability: number }[];
}

/** How many other labels `cairn match --alternatives` can list (the matcher keeps the top 3 labels per point). */
export const MAX_ALTERNATIVES = 2;

/**
 * The header of the match CSV for `sample`: row, x, y, (z), (input_label),
 * features, label, confidence, distance, then alternative_j and
 * alternative_j_probability for j = 1 .. alternatives.
 */
export function matchCsvHeader(sample: Sample, alternatives = 0): string[] {
  const header = ['row', 'x', 'y'];
  if (sample.dim === 3) header.push('z');
  if (sample.labels.some((l) => l !== null)) header.push('input_label');
  header.push(...sample.features.names, 'label', 'confidence', 'distance');
  for (let j = 1; j <= alternatives; j++) header.push(`alternative_${j}`, `alternative_${j}_probability`);
  return header;
}

/**
 * The match CSV text for one sample. `proposals[i]` belongs to point i.
 * Confidence and distance are written empty when the label is null.
 * `input_label` is present when the sample has any hand label.
 * Throws UsageError when the proposals do not fit the sample (count, a
 * confidence outside [0, 1], a negative or non-finite distance, a feature
 * column named like one of the fixed columns, an alternative's probability
 * outside [0, 1]). With `alternatives` N, each row also gets the N most
 * probable labels other than its proposed one (for an unlabelled point: the
 * N most probable labels), empty where the matcher kept fewer.
 */
export function formatMatchCsv(sample: Sample, proposals: readonly PointProposal[], alternatives = 0): string {
  const n = sample.coords.length;
  if (proposals.length !== n) {
    throw new UsageError(`formatMatchCsv: ${proposals.length} proposals for ${n} points of sample ${JSON.stringify(sample.id)}`);
  }
  if (!Number.isInteger(alternatives) || alternatives < 0 || alternatives > MAX_ALTERNATIVES) {
    throw new UsageError(`formatMatchCsv: alternatives must be an integer from 0 to ${MAX_ALTERNATIVES}, got ${alternatives}`);
  }
  const header = matchCsvHeader(sample, alternatives);
  if (new Set(header).size !== header.length) {
    throw new UsageError(`formatMatchCsv: a feature column of sample ${JSON.stringify(sample.id)} is named like a fixed column (${header.join(', ')})`);
  }
  const withInputLabel = header.includes('input_label');
  const rows = proposals.map((p, i) => {
    if (p.label !== null) {
      if (p.confidence === null || !(p.confidence >= 0 && p.confidence <= 1)) {
        throw new UsageError(`formatMatchCsv: point ${i + 1}: confidence must be in [0, 1], got ${p.confidence}`);
      }
      if (p.distance === null || !(p.distance >= 0) || !Number.isFinite(p.distance)) {
        throw new UsageError(`formatMatchCsv: point ${i + 1}: distance must be a finite number >= 0, got ${p.distance}`);
      }
    }
    const row: (string | number | null)[] = [sample.rows[i], ...sample.coords[i]];
    if (withInputLabel) row.push(sample.labels[i]);
    row.push(...sample.features.values[i]);
    row.push(p.label, p.label === null ? null : p.confidence, p.label === null ? null : p.distance);
    if (alternatives > 0) {
      const others = (p.alternatives ?? []).filter((a) => a.label !== p.label);
      for (let j = 0; j < alternatives; j++) {
        const a = others[j];
        if (a !== undefined && !(a.probability >= 0 && a.probability <= 1)) {
          throw new UsageError(`formatMatchCsv: point ${i + 1}: the probability of alternative ${JSON.stringify(a.label)} must be in [0, 1], got ${a.probability}`);
        }
        row.push(a === undefined ? null : a.label, a === undefined ? null : a.probability);
      }
    }
    return row;
  });
  return formatCsv(header, rows);
}
