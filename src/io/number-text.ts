/**
 * Reading numbers written as text in input files. Only plain decimal notation
 * is a number: an optional sign, digits with an optional decimal point, and
 * an optional exponent (`-1.5`, `.5`, `2.`, `3e-4`, `1E+21`), with spaces
 * around it ignored. `NaN`, `Inf`, `Infinity`, hexadecimal, thousands
 * separators, decimal commas and values that overflow to infinity (`1e400`)
 * are not finite numbers. Values that underflow (`1e-400`) read as 0.
 */

const DECIMAL = /^[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?$/;

/** The number written in `text`, or undefined when it is not a finite decimal number. */
export function parseDecimal(text: string): number | undefined {
  const t = text.trim();
  if (!DECIMAL.test(t)) return undefined;
  const x = Number(t);
  return Number.isFinite(x) ? x : undefined;
}

/** The reason text used when a value is not a finite number: `"1.2.3" is not a finite number`. */
export function notFiniteReason(shown: string): string {
  return `${shown} is not a finite number`;
}
