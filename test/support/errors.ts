import { isCairnError } from '../../src/errors.js';

/** The message of the project error that `f` throws; any other error is rethrown, and no error fails the test. */
export function messageOf(f: () => unknown): string {
  try {
    f();
  } catch (e) {
    if (isCairnError(e)) return e.message;
    throw e;
  }
  throw new Error('expected a cairn error (InputError, FitError or UsageError), got none');
}
