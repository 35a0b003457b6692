/**
 * Spearman's rank correlation with ties by average ranks, for short lists (a result list of
 * tens to hundreds of items), on typed arrays with caller-owned scratch space so that a day
 * of a million rows x 50 features allocates nothing per list.
 *
 * Hand-written although simple-statistics has `sampleRankCorrelation`: that one takes plain
 * arrays and allocates per call, and this runs once per list and feature in a run's hot loop.
 */
import { StatsInputError } from './errors.ts';

/** Lists up to this long are ordered by insertion sort; longer ones by merge sort. */
const INSERTION_MAX = 64;

/**
 * Average ranks (1-based) of values[0 .. n) into out[0 .. n): tied values share the mean of
 * the ranks they span, as in Spearman (1904) and scipy.stats.rankdata(method='average').
 *
 * How: the indexes 0 .. n-1 are ordered by value (a stable insertion sort for n <= 64, else a
 * bottom-up merge sort over runs of 16), then one walk over the order gives each run of equal
 * values the mean of the ranks it spans. O(n log n); for result lists of tens of items the
 * insertion sort, in plain JavaScript on the caller's scratch, is about twice as fast as
 * sorting a copy with the built-in sort and finding each value by binary search
 * (tests/bench/ranking.bench.ts measures a day of them).
 *
 * Example: averageRanksInto([10, 20, 20, 5], 4, scratch, out) => out [2, 3.5, 3.5, 1]
 *
 * Values must be finite (NaN has no order). `out` needs length >= n.
 */
export function averageRanksInto(values: ArrayLike<number>, n: number, scratch: RankScratch, out: Float64Array): void {
  if (out.length < n || values.length < n) throw new StatsInputError(`averageRanksInto requires arrays of length >= n = ${n}`);
  scratch.ensure(n);
  const order = n <= INSERTION_MAX ? insertionOrder(values, n, scratch.order) : mergeOrder(values, n, scratch.order, scratch.merge);
  let i = 0;
  while (i < n) {
    const v = values[order[i]!]!;
    let j = i + 1;
    while (j < n && values[order[j]!] === v) j++;
    const r = (i + 1 + j) / 2;
    for (let t = i; t < j; t++) out[order[t]!] = r;
    i = j;
  }
}

/** Indexes 0 .. n-1 ordered by value, stable, by insertion sort into `order`. */
function insertionOrder(values: ArrayLike<number>, n: number, order: Int32Array): Int32Array {
  for (let i = 0; i < n; i++) {
    const v = values[i]!;
    let j = i - 1;
    while (j >= 0 && values[order[j]!]! > v) {
      order[j + 1] = order[j]!;
      j--;
    }
    order[j + 1] = i;
  }
  return order;
}

/** Indexes 0 .. n-1 ordered by value, stable: insertion-sorted runs of 16 merged bottom-up. Returns `a` or `b`. */
function mergeOrder(values: ArrayLike<number>, n: number, a: Int32Array, b: Int32Array): Int32Array {
  const RUN = 16;
  for (let s = 0; s < n; s += RUN) {
    const e = Math.min(n, s + RUN);
    for (let i = s; i < e; i++) {
      const v = values[i]!;
      let j = i - 1;
      while (j >= s && values[a[j]!]! > v) {
        a[j + 1] = a[j]!;
        j--;
      }
      a[j + 1] = i;
    }
  }
  let src = a;
  let dst = b;
  for (let w = RUN; w < n; w *= 2) {
    for (let lo = 0; lo < n; lo += 2 * w) {
      const mid = Math.min(n, lo + w);
      const hi = Math.min(n, lo + 2 * w);
      let p = lo;
      let q = mid;
      let k = lo;
      while (p < mid && q < hi) {
        // Ties take the left run first: stable.
        if (values[src[q]!]! < values[src[p]!]!) dst[k++] = src[q++]!;
        else dst[k++] = src[p++]!;
      }
      while (p < mid) dst[k++] = src[p++]!;
      while (q < hi) dst[k++] = src[q++]!;
    }
    const t = src;
    src = dst;
    dst = t;
  }
  return src;
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

/** Reusable buffers for averageRanksInto and spearmanInto; grown on demand. */
export class RankScratch {
  order = new Int32Array(64);
  merge = new Int32Array(64);
  rx = new Float64Array(64);
  ry = new Float64Array(64);
  ensure(n: number): void {
    if (this.order.length >= n) return;
    const len = Math.max(n, this.order.length * 2);
    this.order = new Int32Array(len);
    this.merge = new Int32Array(len);
    this.rx = new Float64Array(len);
    this.ry = new Float64Array(len);
  }
}

/**
 * Spearman's rho of the pairs (x[i], y[i]), i < n, with scratch buffers; null when n < 3 or
 * either side is constant. Values must be finite. O(n log n).
 */
export function spearmanInto(x: ArrayLike<number>, y: ArrayLike<number>, n: number, scratch: RankScratch): number | null {
  if (n < 3) return null;
  scratch.ensure(n);
  averageRanksInto(x, n, scratch, scratch.rx);
  averageRanksInto(y, n, scratch, scratch.ry);
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
