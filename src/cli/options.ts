/**
 * Commander argument parsers shared by the commands. Each throws commander's
 * InvalidArgumentError (exit code 2, with the usage hint) saying what was
 * expected and what was given. Also the reading of --accuracy-from, which
 * two commands share, and the --assign option of match and evaluate.
 */
import { InvalidArgumentError, Option } from 'commander';
import { UsageError } from '../errors.js';
import { readTextFile } from '../io/text-file.js';
import { parseVoxelSize } from '../io/sample-reader.js';
import { measuredAccuracyFromEvaluateJson, type MeasuredAccuracy } from '../report/html.js';

/**
 * The accuracy `--accuracy-from EVAL.json` (the saved output of `cairn
 * evaluate --json`) quotes on an --html page; undefined when the option is not
 * given. Throws UsageError when it is given without --html, InputError naming
 * the file when the file is not such output.
 */
export function accuracyFromOption(accuracyFrom: string | undefined, html: string | undefined): MeasuredAccuracy | undefined {
  if (accuracyFrom === undefined) return undefined;
  if (html === undefined) throw new UsageError('--accuracy-from is quoted in the --html page; give --html FILE too');
  return measuredAccuracyFromEvaluateJson(readTextFile(accuracyFrom), accuracyFrom);
}

/** A finite number > 0 (or >= 0 with allowZero). */
export function positiveNumberOption(allowZero = false) {
  return (text: string): number => {
    const v = Number(text);
    if (text.trim() === '' || !Number.isFinite(v) || v < 0 || (!allowZero && v === 0)) {
      throw new InvalidArgumentError(`expected a ${allowZero ? 'non-negative' : 'positive'} number, got "${text}"`);
    }
    return v;
  };
}

/** An integer >= min. */
export function integerOption(min: number) {
  return (text: string): number => {
    const v = Number(text);
    if (text.trim() === '' || !Number.isInteger(v) || v < min) throw new InvalidArgumentError(`expected an integer >= ${min}, got "${text}"`);
    return v;
  };
}

/** A probability strictly between 0 and 1. */
export function probabilityOption(text: string): number {
  const p = Number(text);
  if (text.trim() === '' || !(p > 0 && p < 1)) throw new InvalidArgumentError(`expected a probability strictly between 0 and 1, got "${text}"`);
  return p;
}

/** --voxel-size X,Y[,Z]: the library's UsageError becomes commander's invalid-argument error. */
export function voxelSizeOption(text: string): number[] {
  try {
    return parseVoxelSize(text);
  } catch (e) {
    if (e instanceof UsageError) throw new InvalidArgumentError(e.message);
    throw e;
  }
}

/** --hit-radius: a positive number (Mahalanobis units) or "auto". */
export function hitRadiusOption(text: string): number | 'auto' {
  if (text === 'auto') return 'auto';
  const v = Number(text);
  if (text.trim() === '' || !(v > 0) || !Number.isFinite(v)) throw new InvalidArgumentError(`expected a positive number or "auto", got "${text}"`);
  return v;
}

/** `--assign map|mea` (MatchOptions.assignment), shared by cairn match and cairn evaluate. */
export function assignOption(): Option {
  return new Option(
    '--assign <rule>',
    'how the labels are chosen: map, the most probable labelling as a whole (default); mea, the labelling with the most labels right in expectation (the sum of their posterior probabilities)',
  )
    .choices(['map', 'mea'])
    .default('map');
}
