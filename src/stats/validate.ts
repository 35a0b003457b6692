/**
 * Small input checks shared by the statistics files. Internal to `src/stats/`: not
 * re-exported from index.ts.
 */
import { StatsInputError } from './errors.ts';

/** Throws unless `x` is an integer >= `min`. */
export function requireInteger(fn: string, name: string, x: number, min: number): void {
  if (!Number.isInteger(x) || x < min) {
    throw new StatsInputError(`${fn} requires ${name} to be an integer >= ${min}; got ${String(x)}`);
  }
}

/** Throws unless `x` is a finite number >= 0. */
export function requireNonNegative(fn: string, name: string, x: number): void {
  if (!(Number.isFinite(x) && x >= 0)) {
    throw new StatsInputError(`${fn} requires ${name} to be a finite number >= 0; got ${String(x)}`);
  }
}

/**
 * Throws unless `x` is sorted ascending and every value is finite. One pass, O(n).
 * `!(x[i] >= x[i - 1])` is also true for NaN, so NaN anywhere is caught by the order test
 * or, at the ends, by the finiteness test.
 */
export function requireSortedFinite(fn: string, name: string, x: ArrayLike<number>): void {
  // Float64Arrays (a day's sorted values: tens of millions a run) get a loop of their own that
  // only ever sees them, which the JIT compiles to plain loads; the shared one sees every kind.
  if (x instanceof Float64Array) requireSortedFiniteColumn(fn, name, x);
  else requireSortedFiniteAny(fn, name, x);
}

function requireSortedFiniteColumn(fn: string, name: string, x: Float64Array): void {
  const n = x.length;
  if (n === 0) return;
  if (!Number.isFinite(x[0]) || !Number.isFinite(x[n - 1])) {
    throw new StatsInputError(`${fn} requires finite values in ${name}`);
  }
  for (let i = 1; i < n; i++) {
    if (!(x[i]! >= x[i - 1]!)) unsortedOrNaN(fn, name, x, i);
  }
}

function unsortedOrNaN(fn: string, name: string, x: ArrayLike<number>, i: number): never {
  if (Number.isNaN(x[i])) throw new StatsInputError(`${fn} requires finite values in ${name}; NaN at index ${i}`);
  throw new StatsInputError(`${fn} requires ${name} sorted ascending; index ${i} is smaller than index ${i - 1}`);
}

function requireSortedFiniteAny(fn: string, name: string, x: ArrayLike<number>): void {
  const n = x.length;
  if (n === 0) return;
  if (!Number.isFinite(x[0]) || !Number.isFinite(x[n - 1])) {
    throw new StatsInputError(`${fn} requires finite values in ${name}`);
  }
  for (let i = 1; i < n; i++) {
    if (!(x[i]! >= x[i - 1]!)) unsortedOrNaN(fn, name, x, i);
  }
}

/**
 * simple-statistics declares `readonly number[]` parameters but only reads `length` and
 * indexes, so typed arrays and other array-likes are safe to pass. This names the cast once.
 */
export function asReadonlyArray(x: ArrayLike<number>): readonly number[] {
  return x as unknown as readonly number[];
}
