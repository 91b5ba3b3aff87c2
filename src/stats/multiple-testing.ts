/**
 * Multiple-testing adjustment.
 */
import { UsageError } from '../errors.js';

/**
 * Benjamini-Hochberg adjusted p-values (q-values) controlling the false
 * discovery rate (Benjamini & Hochberg 1995, J. R. Stat. Soc. B 57:289-300,
 * step-up procedure of section 3):
 *
 *   q_(i) = min_{j >= i} min(1, m p_(j) / j)
 *
 * for p-values sorted ascending p_(1) <= ... <= p_(m); returned in the input
 * order. This is the same definition as R's `p.adjust(method = "BH")`.
 * Rejecting every hypothesis with q <= alpha is the BH procedure at level alpha.
 * Ties keep their input order; an empty input gives an empty output.
 *
 * @throws UsageError when a p-value is NaN or outside [0, 1].
 */
export function benjaminiHochberg(pValues: readonly number[]): number[] {
  const m = pValues.length;
  for (let i = 0; i < m; i++) {
    const p = pValues[i];
    if (Number.isNaN(p) || p < 0 || p > 1) {
      throw new UsageError(`benjaminiHochberg: p-value ${i} must lie in [0, 1], got ${p}`);
    }
  }
  const order = pValues.map((_, i) => i).sort((a, b) => pValues[a] - pValues[b] || a - b);
  const q = new Array<number>(m);
  let running = 1;
  for (let rank = m; rank >= 1; rank--) {
    const index = order[rank - 1];
    running = Math.min(running, (m / rank) * pValues[index]); // (m / rank) * p as R does: never below p
    q[index] = Math.min(1, running);
  }
  return q;
}
