/**
 * Sliding a pose along an axis of the template: the candidates that complete
 * the pose search when part of the head is missing from the image.
 *
 * The matcher turns its best pose about the template's axes (rolls and
 * half-turns through the template's centroid) to offer the modes that a
 * nearly symmetric head leaves open. When the imaged volume cuts off one end
 * of the head, the sample's cells sit off the template's centroid, so a turn
 * through the centroid lands the sample several cell spacings away along the
 * long axis from where its cells belong, beyond what the widened screening
 * levels can recover. Sliding each turned pose along that axis to its best
 * score puts it back within reach.
 */
import type { Transform } from '../types.js';

export interface Slide {
  /** The pose moved by `shift` along the axis (the input object itself when shift = 0). */
  readonly transform: Transform;
  /** Signed shift in template units (a multiple of the step). */
  readonly shift: number;
  /** Score of the moved pose. */
  readonly score: number;
}

/**
 * The best of the poses t + j step u, j = -steps .. steps (u a unit vector of
 * the template frame, t mapping sample -> template), by `score`. The
 * unshifted pose wins ties, and a shift wins over another only when it scores
 * strictly higher, so the order of evaluation decides nothing but ties
 * between shifts (the first, most negative, is kept).
 *
 * @param t pose, sample frame -> template frame
 * @param axis unit vector in the template frame (length = dimension)
 * @param step shift between tries, template units (> 0)
 * @param steps tries on each side (integer >= 0)
 * @param score the objective to maximise (higher is better)
 */
export function bestSlide(t: Transform, axis: readonly number[], step: number, steps: number, score: (t: Transform) => number): Slide {
  if (axis.length !== t.translation.length) throw new RangeError(`bestSlide: axis has ${axis.length} coordinates, the pose ${t.translation.length}`);
  if (!(step > 0) || !Number.isFinite(step)) throw new RangeError(`bestSlide: step must be a finite number > 0, got ${step}`);
  if (!(Number.isInteger(steps) && steps >= 0)) throw new RangeError(`bestSlide: steps must be a whole number >= 0, got ${steps}`);
  let best: Slide = { transform: t, shift: 0, score: score(t) };
  for (let j = -steps; j <= steps; j++) {
    if (j === 0) continue;
    const shift = j * step;
    const moved: Transform = { ...t, translation: t.translation.map((v, a) => v + shift * axis[a]) };
    const s = score(moved);
    if (s > best.score) best = { transform: moved, shift, score: s };
  }
  return best;
}
