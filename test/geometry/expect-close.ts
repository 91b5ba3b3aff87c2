/** Float comparison helpers for the geometry tests (not a test file itself). */
import { expect } from 'vitest';

/** |actual - expected| <= 10^-digits * max(1, |expected|): `digits` significant-ish digits. */
export function expectClose(actual: number, expected: number, digits: number, what = ''): void {
  const tol = Math.pow(10, -digits) * Math.max(1, Math.abs(expected));
  if (!(Math.abs(actual - expected) <= tol)) {
    expect.fail(`${what} ${actual} differs from ${expected} by more than ${tol}`);
  }
}

/** Element-wise expectClose for vectors and matrices of the same shape. */
export function expectArrayClose(actual: unknown, expected: unknown, digits: number, what = ''): void {
  if (Array.isArray(expected)) {
    expect(Array.isArray(actual), `${what} is an array`).toBe(true);
    const a = actual as unknown[];
    expect(a.length, `${what} length`).toBe(expected.length);
    expected.forEach((e, i) => expectArrayClose(a[i], e, digits, `${what}[${i}]`));
  } else {
    expectClose(actual as number, expected as number, digits, what);
  }
}
