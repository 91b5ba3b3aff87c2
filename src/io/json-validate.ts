/**
 * A small checker for parsed JSON documents: each check records an InputError
 * whose column is the JSON path of the offending value (`cells[3].covariance`)
 * and returns the checked value, or undefined when the check failed.
 */
import { InputError } from '../errors.js';
import { isPlainObject, jsonTypeName, showJsonValue } from './json-text.js';

export class JsonChecker {
  readonly errors: InputError[] = [];
  constructor(readonly file: string) {}

  fail(path: string, reason: string): undefined {
    this.errors.push(new InputError({ file: this.file, column: path || '(top level)' }, reason));
    return undefined;
  }

  /**
   * An object whose keys are among `required` and `optional`; unknown keys are
   * errors (missing ones are reported when their value is checked). Returns the
   * object when it is one.
   */
  object(value: unknown, path: string, required: readonly string[], optional: readonly string[] = []): Record<string, unknown> | undefined {
    if (value === undefined) return this.fail(path, 'is missing');
    if (!isPlainObject(value)) return this.fail(path, `must be an object, got ${jsonTypeName(value)}`);
    for (const key of Object.keys(value)) {
      if (!required.includes(key) && !optional.includes(key)) this.fail(join(path, key), 'unknown field');
    }
    // Missing required keys are reported by the check of each value (as "is missing").
    return value;
  }

  string(value: unknown, path: string, nonEmpty = true): string | undefined {
    if (value === undefined) return this.fail(path, 'is missing');
    if (typeof value !== 'string') return this.fail(path, `must be a string, got ${jsonTypeName(value)}`);
    if (nonEmpty && value.trim() === '') return this.fail(path, 'must be a non-empty string');
    return value;
  }

  /** A finite number within [min, max] (each bound optional, inclusive unless `exclusiveMin`). */
  number(value: unknown, path: string, bounds: { min?: number; max?: number; exclusiveMin?: boolean; integer?: boolean } = {}): number | undefined {
    if (value === undefined) return this.fail(path, 'is missing');
    if (typeof value !== 'number') return this.fail(path, `must be a number, got ${jsonTypeName(value)}`);
    if (!Number.isFinite(value)) return this.fail(path, `${showJsonValue(value)} is not a finite number`);
    if (bounds.integer && !Number.isInteger(value)) return this.fail(path, `must be a whole number, got ${value}`);
    if (bounds.min !== undefined) {
      if (bounds.exclusiveMin ? !(value > bounds.min) : !(value >= bounds.min)) {
        return this.fail(path, `must be ${bounds.exclusiveMin ? 'greater than' : 'at least'} ${bounds.min}, got ${value}`);
      }
    }
    if (bounds.max !== undefined && !(value <= bounds.max)) return this.fail(path, `must be at most ${bounds.max}, got ${value}`);
    return value;
  }

  boolean(value: unknown, path: string): boolean | undefined {
    if (value === undefined) return this.fail(path, 'is missing');
    if (typeof value !== 'boolean') return this.fail(path, `must be true or false, got ${jsonTypeName(value)}`);
    return value;
  }

  oneOf<T extends string | number>(value: unknown, path: string, allowed: readonly T[]): T | undefined {
    if (value === undefined) return this.fail(path, 'is missing');
    if (!allowed.includes(value as T)) {
      return this.fail(path, `must be one of ${allowed.map((a) => JSON.stringify(a)).join(', ')}, got ${showJsonValue(value)}`);
    }
    return value as T;
  }

  array(value: unknown, path: string): unknown[] | undefined {
    if (value === undefined) return this.fail(path, 'is missing');
    if (!Array.isArray(value)) return this.fail(path, `must be an array, got ${jsonTypeName(value)}`);
    return value;
  }

  /** An array of exactly `length` finite numbers. */
  vector(value: unknown, path: string, length: number): number[] | undefined {
    const a = this.array(value, path);
    if (!a) return undefined;
    if (a.length !== length) return this.fail(path, `must have ${length} numbers (one per axis), got ${a.length}`);
    const out: number[] = [];
    let ok = true;
    for (let i = 0; i < a.length; i++) {
      const v = this.number(a[i], `${path}[${i}]`);
      if (v === undefined) ok = false;
      else out.push(v);
    }
    return ok ? out : undefined;
  }

  /** A rows x cols array of arrays of finite numbers. */
  matrix(value: unknown, path: string, rows: number, cols: number): number[][] | undefined {
    const a = this.array(value, path);
    if (!a) return undefined;
    if (a.length !== rows) return this.fail(path, `must be a ${rows}x${cols} matrix, got ${a.length} rows`);
    const out: number[][] = [];
    let ok = true;
    for (let i = 0; i < rows; i++) {
      const r = this.array(a[i], `${path}[${i}]`);
      if (!r) {
        ok = false;
        continue;
      }
      if (r.length !== cols) {
        this.fail(`${path}[${i}]`, `must have ${cols} numbers, got ${r.length}`);
        ok = false;
        continue;
      }
      const row = this.vector(r, `${path}[${i}]`, cols);
      if (!row) ok = false;
      else out.push(row);
    }
    return ok ? out : undefined;
  }
}

/** `a.b`, or `b` when `a` is the top level. */
export function join(path: string, key: string): string {
  return path ? `${path}.${key}` : key;
}
