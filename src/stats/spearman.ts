/**
 * Spearman's rank correlation with ties by average ranks, for short lists (a result list of
 * tens to hundreds of items), on typed arrays with caller-owned scratch space so that a day
 * of a million rows x 50 features allocates nothing per list.
 *
 * Hand-written although simple-statistics has `sampleRankCorrelation`: that one takes plain
 * arrays and allocates per call, and this runs once per list and feature in a run's hot loop.
 */
import { StatsInputError } from './errors.ts';

/**
 * Average ranks (1-based) of values[0 .. n) into out[0 .. n): tied values share the mean of
 * the ranks they span, as in Spearman (1904) and scipy.stats.rankdata(method='average').
 *
 * How: the values are copied into `sorted` and sorted; a value's rank is then
 * (#less + 1 + #less-or-equal) / 2, both counts by binary search. O(n log n).
 *
 * Example: averageRanksInto([10, 20, 20, 5], 4, scratch, out) => out [2, 3.5, 3.5, 1]
 *
 * Values must be finite (NaN has no order). `sorted` and `out` need length >= n.
 */
export function averageRanksInto(values: ArrayLike<number>, n: number, sorted: Float64Array, out: Float64Array, view?: Float64Array): void {
  if (sorted.length < n || out.length < n || values.length < n) throw new StatsInputError(`averageRanksInto requires arrays of length >= n = ${n}`);
  for (let i = 0; i < n; i++) sorted[i] = values[i]!;
  // `view`, when given, is sorted.subarray(0, n) made once by the caller (no allocation per list).
  const s = (view !== undefined && view.length === n && view.buffer === sorted.buffer ? view : sorted.subarray(0, n)).sort();
  for (let i = 0; i < n; i++) {
    const v = values[i]!;
    let lo = 0;
    let hi = n;
    while (lo < hi) {
      const mid = (lo + hi) >>> 1;
      if (s[mid]! < v) lo = mid + 1;
      else hi = mid;
    }
    // s[lo] is v itself; look further only when the next value ties with it (rare for continuous values).
    let le = lo + 1;
    if (le < n && s[le] === v) {
      hi = n;
      while (le < hi) {
        const mid = (le + hi) >>> 1;
        if (s[mid]! <= v) le = mid + 1;
        else hi = mid;
      }
    }
    out[i] = (lo + 1 + le) / 2;
  }
}

/**
 * Pearson correlation of two average-rank vectors of length n (each a permutation of
 * 1..n up to ties, so both means are (n + 1) / 2): Spearman's rho. Sums of half-integers
 * are exact in float64 for lists far longer than any result list, so the only rounding is
 * in the final division and square root. Returns null when either side is constant
 * (rho undefined). `ryOffset`: ry's ranks start there (a list inside a day-long array). O(n).
 */
export function rhoFromRanks(rx: ArrayLike<number>, ry: ArrayLike<number>, n: number, ryOffset = 0): number | null {
  const m = (n + 1) / 2;
  let sxy = 0;
  let sxx = 0;
  let syy = 0;
  for (let i = 0; i < n; i++) {
    const a = rx[i]! - m;
    const b = ry[ryOffset + i]! - m;
    sxy += a * b;
    sxx += a * a;
    syy += b * b;
  }
  if (sxx === 0 || syy === 0) return null;
  const r = sxy / Math.sqrt(sxx * syy);
  // |r| <= 1 in exact arithmetic; clamp the last-bit rounding.
  return r > 1 ? 1 : r < -1 ? -1 : r;
}

/** Reusable buffers for spearmanInto; grown on demand. */
export class RankScratch {
  sorted = new Float64Array(64);
  rx = new Float64Array(64);
  ry = new Float64Array(64);
  private views = new Map<number, Float64Array>();
  ensure(n: number): void {
    if (this.sorted.length >= n) return;
    const len = Math.max(n, this.sorted.length * 2);
    this.sorted = new Float64Array(len);
    this.rx = new Float64Array(len);
    this.ry = new Float64Array(len);
    this.views.clear();
  }
  /** sorted.subarray(0, n), made once per length (lists of a day have few distinct lengths). */
  sortedView(n: number): Float64Array {
    let v = this.views.get(n);
    if (v === undefined) this.views.set(n, (v = this.sorted.subarray(0, n)));
    return v;
  }
}

/**
 * Spearman's rho of the pairs (x[i], y[i]), i < n, with scratch buffers; null when n < 3 or
 * either side is constant. Values must be finite. O(n log n).
 */
export function spearmanInto(x: ArrayLike<number>, y: ArrayLike<number>, n: number, scratch: RankScratch): number | null {
  if (n < 3) return null;
  scratch.ensure(n);
  averageRanksInto(x, n, scratch.sorted, scratch.rx, scratch.sortedView(n));
  averageRanksInto(y, n, scratch.sorted, scratch.ry, scratch.sortedView(n));
  return rhoFromRanks(scratch.rx, scratch.ry, n);
}

/**
 * Spearman's rank correlation coefficient rho of two samples of paired values.
 *
 * What: the Pearson correlation of the average ranks of x and of y (ties get the mean of
 * the ranks they span). In [-1, 1]; +1 when y rises with x, -1 when it falls. Returns null
 * when there are fewer than 3 pairs or either sample is constant (the coefficient is
 * undefined there).
 *
 * Why: the association of a feature with the served order inside one result list; ranks
 * make it blind to any monotone rescaling of the feature (normalisation per query).
 *
 * Cost: O(n log n). Throws on different lengths or non-finite values.
 *
 * Example: spearmanRho([1, 2, 3, 4, 5], [5, 6, 7, 8, 7]) => 0.8207826816681233
 * (scipy.stats.spearmanr, Debian python3-scipy 1.10.1)
 *
 * Source: Spearman, C. (1904), The proof and measurement of association between two
 * things, American Journal of Psychology 15(1): 72-101; ties by average ranks as in
 * scipy.stats.spearmanr.
 */
export function spearmanRho(x: ArrayLike<number>, y: ArrayLike<number>): number | null {
  const fn = 'spearmanRho';
  if (x.length !== y.length) throw new StatsInputError(`${fn} requires paired samples of equal length; got ${x.length} and ${y.length}`);
  for (let i = 0; i < x.length; i++) {
    if (!Number.isFinite(x[i]) || !Number.isFinite(y[i])) throw new StatsInputError(`${fn} requires finite values; pair ${i} is (${String(x[i])}, ${String(y[i])})`);
  }
  return spearmanInto(x, y, x.length, new RankScratch());
}
