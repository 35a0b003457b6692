/**
 * Baseline-quantile binning for the population stability index.
 *
 * A `BinSpec` is computed once from the baseline window and stored; every daily run counts
 * its values into the same bins. Missing values (SQL null, NaN, type errors) are not part of
 * the spec: callers append their count as one last "null" bin.
 *
 * Treat a BinSpec as immutable once used: binCount, assignBin, binCounts and binLabels
 * validate it and cache a lookup table per spec object (replace the arrays, do not edit
 * them in place).
 */
import { StatsInputError } from './errors.ts';
import { requireInteger, requireSortedFinite } from './validate.ts';

/** Bins from baseline quantiles. Bins in order: for each i, the open/closed interval between edges, and singleton bins for point masses. */
export interface BinSpec {
  /** strictly increasing cut values */
  edges: number[];
  /** pointMass[i] true: edges[i] is a bin of its own, [e,e]; the interval before it is (prev, e) open on the right. false: interval (prev, e] right-closed. */
  pointMass: boolean[];
}

/**
 * Bin edges from a sorted baseline sample (quantile binning with point masses).
 *
 * What: cut values for `bins` bins of roughly equal baseline share, in the `BinSpec` layout:
 * for edges e_0 < e_1 < ... < e_{k-1} the bins are, in order,
 * (-inf, e_0] or (-inf, e_0) then [e_0, e_0] when e_0 is a point mass, then (e_0, e_1] or
 * (e_0, e_1) + [e_1, e_1], ..., and last (e_{k-1}, +inf).
 *
 * Rules:
 * - Quantile definition: the inverse of the empirical CDF (Hyndman & Fan 1996, definition 1):
 *   q(p) = x_(ceil(n p)), the smallest sample value whose empirical CDF is >= p. Edges are
 *   q(j / bins) for j = 1 .. bins - 1. Each edge is an observed value, so with right-closed
 *   bins every bin holds as close to 1/bins of the baseline as ties allow, and no bin is a
 *   near-empty sliver between interpolated cuts. (simple-statistics' `quantileSorted`
 *   interpolates, R type 7, which puts cuts between observed values; not used here for
 *   that reason.)
 * - Ties merged: equal edges collapse into one, so edges are strictly increasing and a
 *   feature may get fewer than `bins` interval bins.
 * - Point mass: a single value holding at least 1/bins of the sample (count * bins >= n, for
 *   example the zeros of a column that is 90 % zeros) becomes an edge with a singleton bin
 *   [v, v] of its own, and the interval just before it is open, (prev, v). Plain decile bins
 *   would put it inside (prev, v] and could not see the share of that value change.
 * - Low cardinality: when the sample has at most `bins` distinct values, every distinct
 *   value is a point mass; the open intervals around and between them catch values the
 *   baseline never saw (a binary 0/1 feature gets (-inf,0) [0,0] (0,1) [1,1] (1,+inf)).
 * - Empty sample: no edges, one bin (-inf, +inf) that holds every value.
 *
 * Why: PSI needs bins fixed by the baseline; equal-share bins make every bin informative,
 * and point-mass bins make the share of a repeated value (zeros, a default) visible.
 *
 * Cost: O(n) over the sorted sample (one pass for distinct values and runs, O(bins) for the
 * quantiles), plus the O(n) order check.
 *
 * Example: binEdgesFromSorted(Float64Array.of(0, 0, 0, 0, 0, 0, 1, 2, 3, 4), 4)
 *   => { edges: [0, 2], pointMass: [true, false] }, bins (-inf,0) [0,0] (0,2] (2,+inf)
 *   with baseline shares 0, 0.6, 0.2, 0.2
 *
 * Source: quantile definition 1 of Hyndman, R. J. & Fan, Y. (1996), Sample quantiles in
 * statistical packages, The American Statistician 50(4): 361-365; PSI binning on baseline
 * quantiles as in Siddiqi, N. (2006), Credit Risk Scorecards, Wiley.
 *
 * @param sortedFinite baseline values, sorted ascending, all finite (throws otherwise)
 * @param bins target number of equal-share bins, integer >= 1
 */
export function binEdgesFromSorted(sortedFinite: Float64Array, bins: number): BinSpec {
  const fn = 'binEdgesFromSorted';
  requireInteger(fn, 'bins', bins, 1);
  requireSortedFinite(fn, 'sortedFinite', sortedFinite);
  const n = sortedFinite.length;
  if (n === 0) return { edges: [], pointMass: [] };

  // One pass over runs of equal values: the point masses, and the distinct values while
  // there are at most `bins` of them (more than that and they are not needed).
  const firstValues: number[] = [];
  const massValues: number[] = [];
  let distinct = 0;
  let runStart = 0;
  for (let i = 1; i <= n; i++) {
    if (i === n || sortedFinite[i] !== sortedFinite[runStart]) {
      const v = sortedFinite[runStart] === 0 ? 0 : sortedFinite[runStart]; // fold -0 into 0
      distinct++;
      if (distinct <= bins) firstValues.push(v);
      if ((i - runStart) * bins >= n) massValues.push(v);
      runStart = i;
    }
  }

  if (distinct <= bins) {
    return { edges: firstValues, pointMass: firstValues.map(() => true) };
  }

  // Inverse-ECDF quantiles at j / bins, then merge with the point masses.
  const quantileEdges: number[] = [];
  for (let j = 1; j < bins; j++) {
    const v = sortedFinite[Math.ceil((n * j) / bins) - 1];
    quantileEdges.push(v === 0 ? 0 : v);
  }

  const edges: number[] = [];
  const pointMass: boolean[] = [];
  let qi = 0;
  let mi = 0;
  while (qi < quantileEdges.length || mi < massValues.length) {
    const q = qi < quantileEdges.length ? quantileEdges[qi] : Infinity;
    const m = mi < massValues.length ? massValues[mi] : Infinity;
    const isMass = m <= q;
    const v = isMass ? m : q;
    if (isMass) mi++;
    else qi++;
    const last = edges.length - 1;
    if (last >= 0 && edges[last] === v) {
      if (isMass) pointMass[last] = true;
    } else {
      edges.push(v);
      pointMass.push(isMass);
    }
  }
  return { edges, pointMass };
}

/** Per-spec lookup table: index of the interval bin just before edge i (i = edges.length: last bin). */
interface CompiledSpec {
  edges: Float64Array;
  pointMass: Uint8Array;
  edgesRef: number[];
  pointMassRef: boolean[];
  length: number;
  /** binBefore[i] = bin index of the interval that ends at edges[i]; binBefore[k] = last bin */
  binBefore: Int32Array;
}

const compiled = new WeakMap<BinSpec, CompiledSpec>();

/**
 * Validates a spec and builds its lookup table once per spec object (specs are treated as
 * immutable: arrays returned by binEdgesFromSorted are not meant to be edited in place).
 */
function compile(fn: string, spec: BinSpec): CompiledSpec {
  const hit = compiled.get(spec);
  if (hit !== undefined && hit.edgesRef === spec.edges && hit.pointMassRef === spec.pointMass && hit.length === spec.edges.length) {
    return hit;
  }
  const { edges, pointMass } = spec;
  if (!Array.isArray(edges) || !Array.isArray(pointMass) || edges.length !== pointMass.length) {
    throw new StatsInputError(`${fn} requires a BinSpec whose edges and pointMass arrays have the same length`);
  }
  const k = edges.length;
  const binBefore = new Int32Array(k + 1);
  let bin = 0;
  for (let i = 0; i < k; i++) {
    const e = edges[i];
    if (!Number.isFinite(e)) throw new StatsInputError(`${fn} requires finite bin edges; edges[${i}] is ${String(e)}`);
    if (i > 0 && !(e > edges[i - 1])) {
      throw new StatsInputError(`${fn} requires strictly increasing bin edges; edges[${i}] <= edges[${i - 1}]`);
    }
    if (typeof pointMass[i] !== 'boolean') throw new StatsInputError(`${fn} requires pointMass[${i}] to be a boolean`);
    binBefore[i] = bin;
    bin += pointMass[i] ? 2 : 1;
  }
  binBefore[k] = bin;
  const c: CompiledSpec = {
    edges: Float64Array.from(edges),
    pointMass: Uint8Array.from(pointMass, (p) => (p ? 1 : 0)),
    edgesRef: edges,
    pointMassRef: pointMass,
    length: k,
    binBefore,
  };
  compiled.set(spec, c);
  return c;
}

/**
 * Number of value bins of a spec: one interval per edge, one singleton per point mass, and
 * the last interval (e_last, +inf). The null bin is not included. O(B) the first time a spec
 * is seen, O(1) after.
 *
 * Example: binCount({ edges: [0, 1], pointMass: [true, false] }) => 4: (-inf,0) [0,0] (0,1] (1,+inf)
 *
 * Source: the BinSpec layout of this unit (see binEdgesFromSorted).
 */
export function binCount(spec: BinSpec): number {
  const c = compile('binCount', spec);
  return c.binBefore[c.length] + 1;
}

function assignCompiled(c: CompiledSpec, x: number): number {
  const edges = c.edges;
  const k = c.length;
  if (k === 0) return 0;
  // Lower bound (first i with x <= edges[i]) as a fixed-step binary search whose steps are
  // conditional moves rather than branches: random data mispredicts branches about half
  // the time, which dominated the cost of counting a million values.
  let base = 0;
  let len = k;
  while (len > 1) {
    const half = len >>> 1;
    base = edges[base + half - 1] < x ? base + half : base;
    len -= half;
  }
  const i = edges[base] < x ? base + 1 : base;
  if (i < k && c.pointMass[i] === 1 && x === edges[i]) return c.binBefore[i] + 1;
  return c.binBefore[i];
}

/**
 * Bin assignment: the index of the bin that holds `x`.
 *
 * Intervals are right-closed, (prev, e], except the one just before a point mass, which is
 * (prev, e) because e has its own bin [e, e]; the last bin is (e_last, +inf). -Infinity goes
 * to the first bin and +Infinity to the last. NaN has no bin (it is a missing value): throws.
 *
 * Why: the same rule must place baseline and current values, and a SQL CASE/width_bucket
 * expression must be able to reproduce it exactly.
 *
 * Cost: O(log B) binary search over the edges (after a one-time O(B) table per spec).
 *
 * Example: with { edges: [0, 1], pointMass: [true, false] }: assignBin(s, -1) => 0,
 * assignBin(s, 0) => 1, assignBin(s, 0.5) => 2, assignBin(s, 1) => 2, assignBin(s, 2) => 3.
 *
 * Source: the BinSpec layout of this unit (see binEdgesFromSorted).
 */
export function assignBin(spec: BinSpec, x: number): number {
  if (Number.isNaN(x)) throw new StatsInputError('assignBin requires a number, not NaN (NaN is counted as missing by the caller)');
  return assignCompiled(compile('assignBin', spec), x);
}

/**
 * Histogram counts over a spec: how many of `values` fall in each value bin.
 *
 * NaN values are skipped (the caller counts them as missing and appends the null bin);
 * +-Infinity go to the last / first bin as in assignBin. The counts therefore sum to the
 * number of non-NaN values.
 *
 * Why: PSI compares these counts (plus the null bin) between baseline and current.
 *
 * Cost: O(n log B) time, O(B) memory.
 *
 * Example: binCounts({ edges: [0.5], pointMass: [false] }, Float64Array.of(0, 0.5, 1, NaN)) => [2, 1]
 *
 * Source: the BinSpec layout of this unit (see binEdgesFromSorted).
 */
export function binCounts(spec: BinSpec, values: Float64Array): Float64Array {
  const c = compile('binCounts', spec);
  const counts = new Float64Array(c.binBefore[c.length] + 1);
  for (let i = 0; i < values.length; i++) {
    const x = values[i];
    if (x !== x) continue; // NaN: missing, counted by the caller
    counts[assignCompiled(c, x)]++;
  }
  return counts;
}

/** First index in [lo, hi) with x[i] >= v (or >, when `strict`), binary search. */
function searchSorted(x: Float64Array, v: number, lo: number, hi: number, strict: boolean): number {
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (strict ? x[mid] <= v : x[mid] < v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Histogram counts over a spec for values that are already sorted.
 *
 * Same result as binCounts (NaN not counted, +-Infinity in the last / first bin), but the
 * bin boundaries are found by binary search in the sorted values instead of placing every
 * value: the samples are sorted anyway for the Kolmogorov-Smirnov test, so this avoids a
 * second pass of per-value searches. NaNs must be at the end, where Float64Array sort puts
 * them.
 *
 * Cost: O(n) for the order check (an unsorted input would give silently wrong counts, so it
 * is checked), plus O(B log n) for the boundaries.
 *
 * Example: binCountsSorted({ edges: [0.5], pointMass: [false] }, Float64Array.of(0, 0.5, 1, NaN)) => [2, 1]
 *
 * Source: the BinSpec layout of this unit (see binEdgesFromSorted).
 */
export function binCountsSorted(spec: BinSpec, sortedValues: Float64Array): Float64Array {
  const fn = 'binCountsSorted';
  const c = compile(fn, spec);
  let end = sortedValues.length;
  while (end > 0 && Number.isNaN(sortedValues[end - 1])) end--;
  for (let i = 1; i < end; i++) {
    if (!(sortedValues[i] >= sortedValues[i - 1])) {
      throw new StatsInputError(`${fn} requires values sorted ascending with NaN last; index ${i} is out of order`);
    }
  }
  const counts = new Float64Array(c.binBefore[c.length] + 1);
  let pos = 0;
  for (let i = 0; i < c.length; i++) {
    const e = c.edges[i];
    if (c.pointMass[i] === 1) {
      const below = searchSorted(sortedValues, e, pos, end, false);
      const through = searchSorted(sortedValues, e, below, end, true);
      counts[c.binBefore[i]] = below - pos;
      counts[c.binBefore[i] + 1] = through - below;
      pos = through;
    } else {
      const through = searchSorted(sortedValues, e, pos, end, true);
      counts[c.binBefore[i]] = through - pos;
      pos = through;
    }
  }
  counts[c.binBefore[c.length]] = end - pos;
  return counts;
}

/**
 * Human-readable bin labels in interval notation, one per value bin, e.g.
 * "(-inf, 0.25]", "[0, 0]", "(0.5, +inf)"; "(-inf, +inf)" for a spec without edges.
 * Numbers are printed with JavaScript's shortest round-trip form (String(x)).
 *
 * Why: per-bin PSI contributions are kept as evidence and shown to the on-call engineer.
 *
 * Cost: O(B).
 *
 * Example: binLabels({ edges: [0, 1], pointMass: [true, false] }) => ["(-inf, 0)", "[0, 0]", "(0, 1]", "(1, +inf)"]
 *
 * Source: ISO 31-11 interval notation.
 */
export function binLabels(spec: BinSpec): string[] {
  const c = compile('binLabels', spec);
  const labels: string[] = [];
  let prev = '-inf';
  for (let i = 0; i < c.length; i++) {
    const e = String(c.edges[i]);
    if (c.pointMass[i] === 1) {
      labels.push(`(${prev}, ${e})`, `[${e}, ${e}]`);
    } else {
      labels.push(`(${prev}, ${e}]`);
    }
    prev = e;
  }
  labels.push(`(${prev}, +inf)`);
  return labels;
}
