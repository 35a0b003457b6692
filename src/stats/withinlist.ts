/**
 * Within-list statistics: per-list aggregates of one feature and the rules a list-normalised
 * feature must satisfy. Every rule is decided from the aggregate alone (count, min, max,
 * sum, sum of squares, distinct count), so a SQL engine can compute the same aggregates
 * with GROUP BY list id (count, min, max, sum(v), sum(v*v), count(DISTINCT v) over the
 * finite non-null values) and the same verdict follows.
 */
import { StatsInputError } from './errors.ts';
import { LARGE_MAGNITUDE } from './safesum.ts';
import { requireInteger, requireNonNegative } from './validate.ts';

/** Over the finite non-null values of one feature in one list. */
export interface ListAggregate {
  count: number;
  min: number;
  max: number;
  /** Sum and sum of squares of the values below LARGE_MAGNITUDE (so neither can overflow). */
  sum: number;
  sumSq: number;
  distinct: number;
  /** Values with |x| >= LARGE_MAGNITUDE (not in sum and sumSq). Optional for aggregates built by hand: 0. */
  large?: number;
}

export type WithinListRule = 'minmax' | 'zscore' | 'rank' | 'sum_to_one';

export const WITHIN_LIST_RULES: readonly WithinListRule[] = ['minmax', 'zscore', 'rank', 'sum_to_one'];

/**
 * Aggregate of one feature over one list (count, min, max, sum, sum of squares, distinct).
 *
 * What: over the rows rows[start .. end) (row indexes of one list into `values`), only rows
 * whose missing code is 0 and whose value is finite. Values of magnitude LARGE_MAGNITUDE or
 * more are counted in `large` and left out of sum and sumSq, which therefore never overflow. For a list with no such value:
 * count 0, min +Infinity, max -Infinity, sum 0, sumSq 0 (the identities of min, max and +;
 * SQL returns null there). distinct is the number of different values, or -1 when
 * `wantDistinct` is false.
 *
 * Why: the within-list rules and the flat-list check need only these numbers, which a
 * database can produce per list as well.
 *
 * Cost: O(k) for k = end - start rows; with wantDistinct, O(k log k) to sort the list's
 * values in `scratch` (a Float64Array of length >= k reused across lists to avoid
 * allocation; a new one is allocated when it is missing or too short). Sums are plain
 * (lists are short, tens to hundreds of items).
 *
 * Example: listAggregate(Float64Array.of(0, 1, 0.5, 9), [0, 1, 2], 0, 3, null, true)
 *   => { count: 3, min: 0, max: 1, sum: 1.5, sumSq: 1.25, distinct: 3 }
 *
 * Source: the SQL aggregate functions count, min, max, sum and count(DISTINCT) of ISO/IEC 9075.
 */
export function listAggregate(
  values: Float64Array,
  rows: ArrayLike<number>,
  start: number,
  end: number,
  missing: Uint8Array | null,
  wantDistinct: boolean,
  scratch?: Float64Array,
): ListAggregate {
  const fn = 'listAggregate';
  if (!Number.isInteger(start) || !Number.isInteger(end) || start < 0 || end < start || end > rows.length) {
    throw new StatsInputError(`${fn} requires 0 <= start <= end <= rows.length; got start ${start}, end ${end}, rows.length ${rows.length}`);
  }
  if (missing !== null && missing.length !== values.length) {
    throw new StatsInputError(`${fn} requires missing codes for every value; got ${missing.length} codes for ${values.length} values`);
  }
  const k = end - start;
  let buf: Float64Array | null = null;
  if (wantDistinct) buf = scratch !== undefined && scratch.length >= k ? scratch : new Float64Array(k);
  let count = 0;
  let min = Infinity;
  let max = -Infinity;
  let sum = 0;
  let sumSq = 0;
  let large = 0;
  for (let t = start; t < end; t++) {
    const r = rows[t];
    if (!(Number.isInteger(r) && r >= 0 && r < values.length)) {
      throw new StatsInputError(`${fn} requires row indexes into values; rows[${t}] is ${String(r)}`);
    }
    if (missing !== null && missing[r] !== 0) continue;
    const x = values[r];
    if (!Number.isFinite(x)) continue;
    if (x < min) min = x;
    if (x > max) max = x;
    // A large value would overflow the sum of squares (above about 1.3e154); it is counted instead.
    if (Math.abs(x) < LARGE_MAGNITUDE) {
      sum += x;
      sumSq += x * x;
    } else large++;
    if (buf !== null) buf[count] = x;
    count++;
  }
  let distinct = -1;
  if (buf !== null) {
    distinct = 0;
    if (count > 0) {
      const part = buf.subarray(0, count).sort();
      distinct = 1;
      for (let i = 1; i < count; i++) if (part[i] !== part[i - 1]) distinct++;
    }
  }
  return { count, min, max, sum, sumSq, distinct, large };
}

/**
 * Flat-list check: a list with at least two values, all equal (count >= 2 and min === max).
 *
 * Why: a feature that should vary inside a list but is constant in it carries no ranking
 * signal for that list (a join that fell back to a default, a normalisation over one item).
 * Lists with fewer than two values are not judged. O(1).
 *
 * Example: isFlatList({ count: 3, min: 2, max: 2, sum: 6, sumSq: 12, distinct: 1 }) => true
 *
 * Source: definition of this unit (within-list checks of list-normalised ranking features).
 */
export function isFlatList(agg: ListAggregate): boolean {
  return agg.count >= 2 && agg.min === agg.max;
}

/**
 * Within-list rule check: does one list violate the feature's declared normalisation?
 *
 * Lists with count < 2 are never judged (returns false). Rules, with tolerance tol >= 0:
 * - 'minmax' (min-max scaled to [0, 1] per list): violated when the list is not flat and
 *   |min| > tol or |max - 1| > tol. Flat lists are left to isFlatList (a constant list
 *   cannot span [0, 1], and implementations map it to 0, 0.5 or 1).
 * - 'zscore' (standardised per list): violated when |mean| > tol, or when the standard
 *   deviation is off 1 by more than tol under BOTH the population (divide by n) and the
 *   sample (divide by n - 1) definition, because implementations differ in which they use.
 *   A flat list has sd 0 and is therefore a violation. The variance comes from the
 *   aggregate as (sumSq - sum^2 / n) / n, clamped at 0.
 * - 'rank' (a permutation of 1..n): violated unless min == 1, max == n, distinct == n and
 *   |sum - n(n+1)/2| <= tol * n. Needs the distinct count: throws if distinct < 0.
 * - 'sum_to_one' (shares of the list): violated when |sum - 1| > tol or min < -tol.
 *
 * Why: list-normalised features are computed per query; when that step breaks the
 * whole-day histogram can still look healthy while every list is wrong.
 *
 * Cost: O(1). Example: ruleViolated('minmax', { count: 3, min: 0, max: 0.8, sum: 1.2, sumSq: 0.8, distinct: 3 }, 1e-6) => true
 *
 * Source: definitions of the normalisations (min-max scaling, z-score standardisation,
 * ranks, shares); population versus sample standard deviation as in any statistics text.
 */
export function ruleViolated(rule: WithinListRule, agg: ListAggregate, tolerance: number): boolean {
  const fn = 'ruleViolated';
  requireNonNegative(fn, 'tolerance', tolerance);
  const n = agg.count;
  if (!(Number.isInteger(n) && n >= 0)) throw new StatsInputError(`${fn} requires an aggregate count that is an integer >= 0; got ${String(n)}`);
  if (rule === 'rank' && agg.distinct < 0) {
    throw new StatsInputError(`${fn}('rank') requires the distinct count; compute the aggregate with wantDistinct = true`);
  }
  if (n < 2) {
    if (!WITHIN_LIST_RULES.includes(rule)) throw new StatsInputError(`${fn} does not know the rule ${String(rule)}`);
    return false;
  }
  if (!(Number.isFinite(agg.min) && Number.isFinite(agg.max) && Number.isFinite(agg.sum) && Number.isFinite(agg.sumSq))) {
    throw new StatsInputError(`${fn} requires finite min, max, sum and sumSq for a list of ${n} values`);
  }
  const tol = tolerance;
  // A list holding a value of magnitude >= LARGE_MAGNITUDE (1e100) that is not flat breaks
  // every rule: minmax and rank need values near [0, 1] and 1..n, sum_to_one shares near
  // [0, 1] (or a negative one below -tol), and a z-score of a list of n values is at most
  // sqrt(n - 1) in magnitude. (Tolerances are at most 1e6, see the config schema.) Deciding
  // it here keeps the squares of such values out of the arithmetic.
  if ((agg.large ?? 0) > 0 && WITHIN_LIST_RULES.includes(rule)) return agg.min !== agg.max;
  switch (rule) {
    case 'minmax':
      if (agg.min === agg.max) return false;
      return Math.abs(agg.min) > tol || Math.abs(agg.max - 1) > tol;
    case 'zscore': {
      const mean = agg.sum / n;
      if (Math.abs(mean) > tol) return true;
      const varPop = Math.max(0, (agg.sumSq - (agg.sum * agg.sum) / n) / n);
      const sdPop = Math.sqrt(varPop);
      const sdSample = Math.sqrt((varPop * n) / (n - 1));
      return Math.abs(sdPop - 1) > tol && Math.abs(sdSample - 1) > tol;
    }
    case 'rank':
      return !(agg.min === 1 && agg.max === n && agg.distinct === n && Math.abs(agg.sum - (n * (n + 1)) / 2) <= tol * n);
    case 'sum_to_one':
      return Math.abs(agg.sum - 1) > tol || agg.min < -tol;
    default:
      throw new StatsInputError(`${fn} does not know the rule ${String(rule)}`);
  }
}

/**
 * List-size histogram: counts of lists per size 1..maxSize, sizes above maxSize in the last
 * bin (index maxSize - 1).
 *
 * Why: the list-size distribution is compared with the baseline by PSI (a retrieval stage
 * that starts returning fewer candidates changes it). Cost: O(k) for k lists.
 *
 * Example: listSizeCounts([1, 3, 3, 12], 10) => [1, 0, 2, 0, 0, 0, 0, 0, 0, 1]
 *
 * Source: definition of this unit; the histogram feeds psi().
 *
 * @param sizes list sizes, integers >= 1
 * @param maxSize number of bins, integer >= 1
 */
export function listSizeCounts(sizes: ArrayLike<number>, maxSize: number): Float64Array {
  const fn = 'listSizeCounts';
  requireInteger(fn, 'maxSize', maxSize, 1);
  const counts = new Float64Array(maxSize);
  for (let i = 0; i < sizes.length; i++) {
    const s = sizes[i];
    if (!(Number.isInteger(s) && s >= 1)) throw new StatsInputError(`${fn} requires list sizes that are integers >= 1; sizes[${i}] is ${String(s)}`);
    counts[s > maxSize ? maxSize - 1 : s - 1]++;
  }
  return counts;
}
