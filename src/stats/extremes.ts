/**
 * Bounds beyond which a value is extreme for its baseline, and the count of values beyond
 * them: the check that sees a unit change or an overflow in a feature whose valid range
 * nobody declared.
 *
 * What: with q_lo and q_hi the baseline's `lowerQuantile` and `upperQuantile` (by default
 * 0.1 % and 99.9 %) and IQR its interquartile range, the bounds are
 *   lower = q_lo - k * IQR,   upper = q_hi + k * IQR.
 * A value is extreme when it lies strictly below `lower` or strictly above `upper`.
 * Quantiles by linear interpolation (Hyndman & Fan 1996, definition 7; numpy's default),
 * from simple-statistics' `quantileSorted`. When the IQR is 0 (a feature mostly at one
 * value) the spread q_hi - q_lo stands in for it, so the bounds still leave room around
 * the values the baseline saw.
 *
 * Why: PSI puts 1e308 in the top quantile bin and KS sees only the share that moved, so
 * 10 % of values set to 1e308 stay under both thresholds; the share beyond the baseline's
 * own extremes does not depend on someone having written a range down. Extreme quantiles
 * widened by a multiple of the IQR are Tukey's fences (1977) moved out to the tails, so
 * heavy-tailed features do not trip them on a normal day.
 *
 * Cost: O(1) for the bounds (sorted input), O(log n) for the counts.
 *
 * Example: extremeBoundsSorted(Float64Array.of(0, 1, 2, 3, 4), { iqrMultiple: 1 })
 *   => q_lo 0.004, q_hi 3.996, IQR 2, { lower: -1.996, upper: 5.996 }
 *
 * Source: Tukey, J. W. (1977), Exploratory Data Analysis, Addison-Wesley (fences at
 * quartiles +- 1.5 IQR; here at extreme quantiles +- k IQR, our own choice).
 */
import { quantileSorted } from 'simple-statistics';
import { StatsInputError } from './errors.ts';
import { asReadonlyArray, requireNonNegative } from './validate.ts';

export interface ExtremeBounds {
  lower: number;
  upper: number;
  /** The baseline quantiles and spread the bounds came from. */
  lowerQuantileValue: number;
  upperQuantileValue: number;
  iqr: number;
}

export interface ExtremeBoundsOptions {
  /** k: multiples of the IQR added beyond the extreme quantiles. */
  iqrMultiple: number;
  lowerQuantile?: number;
  upperQuantile?: number;
}

/**
 * The extreme-value bounds of a sorted, finite baseline sample (at least one value).
 * See the module comment for the rule.
 */
export function extremeBoundsSorted(sortedFinite: Float64Array, options: ExtremeBoundsOptions): ExtremeBounds {
  const fn = 'extremeBoundsSorted';
  if (sortedFinite.length === 0) throw new StatsInputError(`${fn} requires at least one value`);
  requireNonNegative(fn, 'iqrMultiple', options.iqrMultiple);
  const pLo = options.lowerQuantile ?? 0.001;
  const pHi = options.upperQuantile ?? 0.999;
  if (!(pLo >= 0 && pLo <= 0.25 && pHi >= 0.75 && pHi <= 1)) throw new StatsInputError(`${fn} requires 0 <= lowerQuantile <= 0.25 and 0.75 <= upperQuantile <= 1`);
  const x = asReadonlyArray(sortedFinite);
  const lo = quantileSorted(x, pLo);
  const hi = quantileSorted(x, pHi);
  if (!Number.isFinite(lo) || !Number.isFinite(hi) || lo > hi) throw new StatsInputError(`${fn} requires finite values sorted ascending`);
  const iqr = quantileSorted(x, 0.75) - quantileSorted(x, 0.25);
  const spread = iqr > 0 ? iqr : hi - lo;
  return { lower: lo - options.iqrMultiple * spread, upper: hi + options.iqrMultiple * spread, lowerQuantileValue: lo, upperQuantileValue: hi, iqr };
}

/** How many entries of the sorted array are < v (binary search). */
function countBelow(sorted: Float64Array, v: number): number {
  let lo = 0;
  let hi = sorted.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid]! < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/** How many entries of the sorted array are <= v (binary search). */
function countAtMost(sorted: Float64Array, v: number): number {
  let lo = 0;
  let hi = sorted.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (sorted[mid]! <= v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Values of a sorted, finite array strictly below `lower` and strictly above `upper`, with
 * the smallest and largest value (null when empty). O(log n).
 *
 * Example: countBeyondSorted(Float64Array.of(-5, 0, 1, 9), -1, 2) => { below: 1, above: 1, min: -5, max: 9 }
 */
export function countBeyondSorted(sortedFinite: Float64Array, lower: number, upper: number): { below: number; above: number; min: number | null; max: number | null } {
  if (!(lower <= upper)) throw new StatsInputError(`countBeyondSorted requires lower <= upper (got ${lower}, ${upper})`);
  const n = sortedFinite.length;
  return {
    below: countBelow(sortedFinite, lower),
    above: n - countAtMost(sortedFinite, upper),
    min: n > 0 ? sortedFinite[0]! : null,
    max: n > 0 ? sortedFinite[n - 1]! : null,
  };
}
