import { describe, it, expect } from 'vitest';
import { parseDecimal } from '../../src/io/number-text.js';

describe('parseDecimal', () => {
  it('reads plain decimal notation with sign, fraction and exponent, ignoring surrounding spaces', () => {
    expect(parseDecimal('12')).toBe(12);
    expect(parseDecimal('-1.5')).toBe(-1.5);
    expect(parseDecimal('+.5')).toBe(0.5);
    expect(parseDecimal('2.')).toBe(2);
    expect(parseDecimal('3e-4')).toBe(3e-4);
    expect(parseDecimal('1E+21')).toBe(1e21);
    expect(parseDecimal('  7.25\t')).toBe(7.25);
  });

  it('reads an underflowing value as 0', () => {
    expect(parseDecimal('1e-400')).toBe(0);
  });

  it('rejects NaN, infinities, overflow to infinity and anything that is not decimal notation', () => {
    for (const t of ['NaN', 'nan', 'Inf', '-Inf', 'Infinity', '-Infinity', '1e400', '-1e400', '', ' ', '1.2.3', '0x10', '1_000', '1,5', '1e', 'e5', '.', '-', '12abc', '١٢']) {
      expect(parseDecimal(t), t).toBeUndefined();
    }
  });
});
