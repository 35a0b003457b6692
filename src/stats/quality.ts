/**
 * Data-quality counts of one numeric column: missing, non-finite and out-of-range values,
 * and the distinct count of a sorted sample. Counts (not ratios) so that partial results
 * (chunks, partitions, SQL aggregates) merge by addition.
 */
import { StatsInputError } from './errors.ts';

export interface QualityCounts {
  rows: number;
  nulls: number;
  nan: number;
  posInf: number;
  negInf: number;
  typeErrors: number;
  outOfRange: number;
  finite: number;
}

/** Codes of the `missing` array. */
export const MISSING_PRESENT = 0;
export const MISSING_NULL = 1;
export const MISSING_TYPE_ERROR = 2;

/**
 * Quality counts of one column (null, NaN, infinite, type-error and out-of-range counts).
 *
 * What: over rows = values.length rows, with missing[r] = 0 (value present), 1 (SQL null) or
 * 2 (type error: a non-numeric value where a number was expected); `missing` may be null
 * when nothing is missing. For present rows: NaN, +Infinity and -Infinity are counted
 * apart, every other value is finite. The categories partition the rows:
 * rows = nulls + typeErrors + nan + posInf + negInf + finite. outOfRange is a subset of
 * finite: finite values below range.min or above range.max (bounds inclusive, either bound
 * optional). +-Infinity count as non-finite, never as out of range.
 *
 * Why: null, NaN, infinite and out-of-range ratios are data-quality checks of their own, and
 * their counts are the denominators of the distribution checks.
 *
 * Cost: O(rows), no allocation.
 *
 * Example: qualityCounts(Float64Array.of(1, NaN, Infinity, 5, 0), Uint8Array.of(0, 0, 0, 0, 1), { max: 4 })
 *   => { rows: 5, nulls: 1, nan: 1, posInf: 1, negInf: 0, typeErrors: 0, outOfRange: 1, finite: 2 }
 *
 * Source: IEEE 754-2019 (NaN and infinities); ISO/IEC 9075 SQL (null).
 */
export function qualityCounts(
  values: Float64Array,
  missing: Uint8Array | null,
  range?: { min?: number; max?: number },
): QualityCounts {
  const fn = 'qualityCounts';
  const rows = values.length;
  if (missing !== null && missing.length !== rows) {
    throw new StatsInputError(`${fn} requires missing codes for every row; got ${missing.length} codes for ${rows} values`);
  }
  const min = range?.min ?? -Infinity;
  const max = range?.max ?? Infinity;
  if (Number.isNaN(min) || Number.isNaN(max)) throw new StatsInputError(`${fn} requires range bounds that are numbers, not NaN`);
  if (min > max) throw new StatsInputError(`${fn} requires range.min <= range.max; got ${min} > ${max}`);
  let nulls = 0;
  let typeErrors = 0;
  let nan = 0;
  let posInf = 0;
  let negInf = 0;
  let finite = 0;
  let outOfRange = 0;
  for (let r = 0; r < rows; r++) {
    if (missing !== null) {
      const code = missing[r];
      if (code === MISSING_NULL) {
        nulls++;
        continue;
      }
      if (code === MISSING_TYPE_ERROR) {
        typeErrors++;
        continue;
      }
      if (code !== MISSING_PRESENT) throw new StatsInputError(`${fn} requires missing codes 0, 1 or 2; row ${r} has ${code}`);
    }
    const x = values[r];
    if (x !== x) nan++;
    else if (x === Infinity) posInf++;
    else if (x === -Infinity) negInf++;
    else {
      finite++;
      if (x < min || x > max) outOfRange++;
    }
  }
  return { rows, nulls, nan, posInf, negInf, typeErrors, outOfRange, finite };
}

/** Quality counts of no rows: the identity of mergeQualityCounts. */
export function emptyQualityCounts(): QualityCounts {
  return { rows: 0, nulls: 0, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, finite: 0 };
}

/**
 * Sum of two quality counts (for example two chunks of one day, or two partitions).
 * O(1). Example: mergeQualityCounts(a, a).rows => 2 * a.rows.
 * Source: counts are additive; this unit's QualityCounts layout.
 */
export function mergeQualityCounts(a: QualityCounts, b: QualityCounts): QualityCounts {
  return {
    rows: a.rows + b.rows,
    nulls: a.nulls + b.nulls,
    nan: a.nan + b.nan,
    posInf: a.posInf + b.posInf,
    negInf: a.negInf + b.negInf,
    typeErrors: a.typeErrors + b.typeErrors,
    outOfRange: a.outOfRange + b.outOfRange,
    finite: a.finite + b.finite,
  };
}

/**
 * Distinct count of a sorted sample: the number of runs of equal values.
 *
 * Values compare with ===, so -0 and 0 are one value; NaNs (which Float64Array sort places
 * last) count as one value together. Throws when the input is not sorted ascending, since
 * a run count of unsorted data would be silently wrong. (simple-statistics'
 * uniqueCountSorted does the same count without the order check and counts every NaN
 * apart, hence this version.)
 *
 * Why: a collapse of the distinct count (a feature suddenly constant or nearly so) is a
 * data-quality finding, and the sorted sample exists anyway for KS.
 *
 * Cost: O(n), no allocation. Example: distinctCountSorted(Float64Array.of(0, 0, 1, 2, 2)) => 3
 *
 * Source: run counting over a sorted sequence (Knuth, The Art of Computer Programming,
 * vol. 3, 5.2).
 */
export function distinctCountSorted(sorted: Float64Array): number {
  const n = sorted.length;
  if (n === 0) return 0;
  let count = 1;
  let prev = sorted[0];
  let sawNaN = prev !== prev;
  for (let i = 1; i < n; i++) {
    const x = sorted[i];
    if (x !== x) {
      if (!sawNaN) count++;
      sawNaN = true;
      continue;
    }
    if (sawNaN || x < prev) {
      throw new StatsInputError(`distinctCountSorted requires values sorted ascending (NaN last); index ${i} is out of order`);
    }
    if (x !== prev) count++;
    prev = x;
  }
  return count;
}
