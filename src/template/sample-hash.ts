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
  const h = createHash('sha256');
  h.update(`cairn-sample-v1\n${sample.dim}\n`);
  for (let i = 0; i < sample.coords.length; i++) {
    const c = sample.coords[i].map((v) => (Object.is(v, -0) ? '0' : String(v))).join(',');
    h.update(`${c},${JSON.stringify(sample.labels[i] ?? null)}\n`);
  }
  return h.digest('hex');
}
