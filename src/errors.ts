/**
 * The project's error types. The library throws only these; `src/cli/` maps
 * them to exit codes (InputError and FitError: 1).
 */

/** Where in an input a problem sits. `row` is the 1-based line of the file (header = 1). */
export interface InputLocation {
  readonly file: string;
  readonly row?: number;
  readonly column?: string;
}

/**
 * Bad input at the I/O edge: carries file, row, column and the reason.
 * Message shape: `samples/a.csv:17: column "z": "1.2.3" is not a finite number`.
 */
export class InputError extends Error {
  readonly file: string;
  readonly row: number | undefined;
  readonly column: string | undefined;
  readonly reason: string;

  constructor(location: InputLocation, reason: string) {
    super(formatLocation(location) + reason);
    this.name = 'InputError';
    this.file = location.file;
    this.row = location.row;
    this.column = location.column;
    this.reason = reason;
  }
}

/**
 * A computation that cannot give a meaningful answer for the data it was given
 * (too few points, collinear or coplanar configurations, a covariance that is
 * not positive definite). The message says what was observed and what is required.
 */
export class FitError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'FitError';
  }
}

/** A bad parameter passed to a library function (a programming or usage error). */
export class UsageError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'UsageError';
  }
}

export function formatLocation(location: InputLocation): string {
  let out = location.file;
  if (location.row !== undefined) out += `:${location.row}`;
  out += ': ';
  if (location.column !== undefined) out += `column "${location.column}": `;
  return out;
}

/** True for any error this project throws on purpose. */
export function isCairnError(e: unknown): e is InputError | FitError | UsageError {
  return e instanceof InputError || e instanceof FitError || e instanceof UsageError;
}
