/**
 * Content hash of a sample, used to recognise a sample that is already a
 * template member whatever its file is called.
 */
import { createHash } from 'node:crypto';
import type { Sample } from '../types.js';

/**
 * SHA-256 (lowercase hex) of the sample's canonical content: the dimension,
 * then one line per point in input order with its coordinates (JavaScript's
 * shortest round-trip decimal form, so equal numbers give equal text) and its
 * label as a JSON string (`null` when unlabelled):
 *
 *   cairn-sample-v1\n d\n x,y[,z],"label"\n ...
 *
 * The id, the source file, the row numbers and the feature columns are not part
 * of the content: renaming a file or adding a feature column does not make a new
 * member. -0 and 0 hash alike.
 */
export function sampleHash(sample: Sample): string {
  // The text is built whole and hashed in one call (one update per point was most of the cost).
  let text = `cairn-sample-v1\n${sample.dim}\n`;
  for (let i = 0; i < sample.coords.length; i++) {
    const p = sample.coords[i];
    for (let a = 0; a < p.length; a++) {
      const v = p[a];
      text += v === 0 ? '0,' : `${v},`;
    }
    const l = sample.labels[i];
    text += l === null || l === undefined ? 'null\n' : `${JSON.stringify(l)}\n`;
  }
  return createHash('sha256').update(text).digest('hex');
}
