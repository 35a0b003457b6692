/**
 * Sums of float64 values that cannot overflow. A sum of finite values can exceed the largest
 * double (1e308 + 1e308), and a square already does above about 1.3e154: JavaScript then
 * yields Infinity and PostgreSQL raises SQLSTATE 22003. Values of magnitude LARGE_MAGNITUDE or
 * more are therefore summed apart, each multiplied by 2^-LARGE_SCALE_EXP (a power of two, so
 * the scaling is exact): n values below 1e100 sum to at most n * 1e100, and n scaled large
 * values to at most n * 4.3e127, both far from overflow for any realistic n. Both engines
 * (stream here, pushdown in SQL with the same split) then agree.
 */
import { StatsInputError } from './errors.ts';

/** Values with |x| >= this are "large": summed scaled, and never squared unscaled. */
export const LARGE_MAGNITUDE = 1e100;
/** Large values are summed times 2^-LARGE_SCALE_EXP. */
export const LARGE_SCALE_EXP = 600;
const LARGE_SCALE = 2 ** -LARGE_SCALE_EXP;

/** The sum of finite values as two parts: values below LARGE_MAGNITUDE, and the large ones scaled. */
export interface SplitSum {
  small: number;
  largeScaled: number;
}

/**
 * Adds a finite value to a split sum (in place) and returns it.
 *
 * Cost: O(1). Example: addToSplitSum({ small: 0, largeScaled: 0 }, 1e308).largeScaled => 1e308 * 2^-600
 *
 * Source: IEEE 754-2019 (scaling by a power of two is exact away from the subnormal range).
 */
export function addToSplitSum(acc: SplitSum, x: number): SplitSum {
  if (Math.abs(x) < LARGE_MAGNITUDE) acc.small += x;
  else acc.largeScaled += x * LARGE_SCALE;
  return acc;
}

/**
 * Mean of n finite values from their split sum: small / n + (largeScaled / n) * 2^600, which
 * stays finite whenever the mean is (each term is at most the largest magnitude in the data).
 *
 * Cost: O(1). Example: meanOfSplitSum({ small: 0, largeScaled: 2 * 1e308 * 2 ** -600 }, 2) => 1e308
 *
 * Source: definition of the arithmetic mean; this unit's split.
 */
export function meanOfSplitSum(sum: SplitSum, n: number): number {
  if (!(Number.isInteger(n) && n >= 1)) throw new StatsInputError(`meanOfSplitSum requires a count that is an integer >= 1; got ${String(n)}`);
  return sum.small / n + (sum.largeScaled / n) * 2 ** LARGE_SCALE_EXP;
}
