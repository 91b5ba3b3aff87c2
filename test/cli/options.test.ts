import { describe, expect, it } from 'vitest';
import { InvalidArgumentError } from 'commander';
import { hitRadiusOption, integerOption, positiveNumberOption, probabilityOption, voxelSizeOption } from '../../src/cli/options.js';

describe('command-line argument parsers', () => {
  it('accept what they promise', () => {
    expect(positiveNumberOption()('2.5')).toBe(2.5);
    expect(positiveNumberOption(true)('0')).toBe(0);
    expect(integerOption(1)('3')).toBe(3);
    expect(probabilityOption('0.95')).toBe(0.95);
    expect(voxelSizeOption('0.5,0.5,2')).toEqual([0.5, 0.5, 2]);
    expect(hitRadiusOption('auto')).toBe('auto');
    expect(hitRadiusOption('3')).toBe(3);
  });

  it('reject the rest with an invalid-argument error saying what was expected and what was given', () => {
    expect(() => positiveNumberOption()('0')).toThrow(new InvalidArgumentError('expected a positive number, got "0"'));
    expect(() => positiveNumberOption(true)('-1')).toThrow('expected a non-negative number, got "-1"');
    expect(() => integerOption(1)('1.5')).toThrow('expected an integer >= 1, got "1.5"');
    expect(() => integerOption(0)('')).toThrow('expected an integer >= 0, got ""');
    expect(() => probabilityOption('1')).toThrow('expected a probability strictly between 0 and 1, got "1"');
    expect(() => hitRadiusOption('wide')).toThrow('expected a positive number or "auto", got "wide"');
    expect(() => voxelSizeOption('a,b')).toThrow(InvalidArgumentError);
  });
});
