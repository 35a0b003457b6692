/**
 * How a feature varies from one baseline day to the next, kept with the baseline so that
 * a day can be judged against the baseline's own day-to-day variation instead of against
 * the pooled window alone:
 *
 * - distinct counts per day at a ladder of sample sizes: an item-level feature whose
 *   items rotate daily has many times more distinct values in a pooled month than on any
 *   day; comparing the day with the baseline *days* at the same sample size compares like
 *   with like (checks/evaluate.ts, distinct_ratio_drop);
 * - leave-one-out drift: each baseline day against the rest of the window by the same
 *   statistic (PSI over the baseline's bins, KS D), the distribution the adaptive
 *   thresholds are learned from (checks/adaptive.ts).
 *
 * Leave-one-out without re-pooling. The pooled sample is the union of the days' thinned
 * pieces, so with N pooled values of which n_d are day d's piece, the rest's cumulative
 * count at any x is count_all(x) - count_piece(x). KS D of the day (its whole stored
 * sample, less sampling noise than its piece) against the rest is taken over LOO_GRID_BINS
 * quantile bins of the pooled sample, as the pushdown engine's binned D: a lower bound of
 * the exact D, short of it by at most the largest share of one bin in either sample. That
 * keeps the cost at O(day sample + piece + bins) per day instead of O(N). PSI's rest counts
 * are the window's counts minus the day's, over the baseline's bins (the bins themselves
 * include the day: a small approximation, stated here).
 *
 * Assumptions: baseline days are exchangeable apart from the variation that should be
 * learned (seasonality, promotions); the stored day samples are thinned to the day cap, so
 * the leave-one-out statistics carry somewhat more sampling noise than a full day compared
 * with the pool does, which errs toward higher (quieter) thresholds.
 */
import type { Config } from '../config/index.ts';
import { NULL_CATEGORY, OTHER_CATEGORY, binCountsSorted, binEdgesFromSorted, categoryPsi, distinctCountSorted, psi, thinSorted, type BinSpec } from '../stats/index.ts';
import { countsOverBins } from './day.ts';
import type { CategoricalProfile, DayProfile, FeatureVariation, NumericProfile } from './types.ts';

/** Sample sizes at which per-day distinct counts are kept (each day up to its sample's size). */
export const DISTINCT_LADDER = [10, 20, 50, 100, 200, 500, 1000, 2000, 5000, 10_000, 20_000, 50_000, 100_000, 200_000, 500_000, 1_000_000] as const;

/** Quantile bins of the pooled sample over which leave-one-out KS D is taken. */
export const LOO_GRID_BINS = 1000;

interface LooGrid {
  spec: BinSpec;
  /** Cumulative counts of the pooled sample at the end of each bin. */
  cumAll: Float64Array;
  n: number;
}

function cumulative(counts: Float64Array): Float64Array {
  const out = new Float64Array(counts.length);
  let c = 0;
  for (let i = 0; i < counts.length; i++) out[i] = c += counts[i]!;
  return out;
}

function looGrid(merged: Float64Array): LooGrid {
  const spec = binEdgesFromSorted(merged, LOO_GRID_BINS);
  return { spec, cumAll: cumulative(binCountsSorted(spec, merged)), n: merged.length };
}

/** Binned KS D of a day's sample against the pooled sample without the day's piece. */
export function binnedLooD(grid: LooGrid, daySample: Float64Array, piece: Float64Array): number {
  const rest = grid.n - piece.length;
  if (rest <= 0 || daySample.length === 0) return 0;
  const cumPiece = cumulative(binCountsSorted(grid.spec, piece));
  const cumDay = cumulative(binCountsSorted(grid.spec, daySample));
  let d = 0;
  for (let i = 0; i < cumDay.length; i++) {
    const gap = Math.abs((grid.cumAll[i]! - cumPiece[i]!) / rest - cumDay[i]! / daySample.length);
    if (gap > d) d = gap;
  }
  return d;
}

/** Distinct counts of a sorted sample thinned to each ladder size it reaches. */
export function distinctLadder(sorted: Float64Array): number[] {
  const out: number[] = [];
  for (const k of DISTINCT_LADDER) {
    if (k > sorted.length) break;
    out.push(distinctCountSorted(thinSorted(sorted, k)));
  }
  return out;
}

/** A day's category counts with its other bucket and its nulls as bins of their own (Map keys: category names are data). */
function categoryCounts(p: CategoricalProfile): Map<string, number> {
  const out = new Map(p.categories);
  if (p.otherRows > 0) out.set(OTHER_CATEGORY, p.otherRows);
  if (p.quality.nulls > 0) out.set(NULL_CATEGORY, p.quality.nulls);
  return out;
}

/**
 * The variation of one numeric feature over its baseline days. `pieces[i]` is the thinned
 * sample day i contributed to `merged` (the pooled sample); `spec` the baseline's PSI bins.
 */
/** `withKs`: a numeric (not binary) feature, which also gets per-day distinct counts. */
export function numericVariation(days: readonly { date: string; profile: NumericProfile; piece: Float64Array }[], merged: Float64Array, spec: BinSpec, withKs: boolean): FeatureVariation {
  const dayCounts = days.map((d) => countsOverBins(spec, d.profile.sortedSample, d.profile.quality));
  const total = dayCounts.reduce((acc, c) => acc.map((x, i) => x + c[i]!), new Array<number>(dayCounts[0]?.length ?? 0).fill(0));
  const psiLoo: number[] = [];
  const ksLoo: number[] = [];
  const looDays: string[] = [];
  const grid = withKs && merged.length > 0 ? looGrid(merged) : null;
  days.forEach((d, i) => {
    const rest = total.map((x, b) => Math.max(0, x - dayCounts[i]![b]!));
    const restSum = rest.reduce((a, b) => a + b, 0);
    const daySum = dayCounts[i]!.reduce((a, b) => a + b, 0);
    const n = merged.length;
    const nd = d.piece.length;
    if (restSum <= 0 || daySum <= 0 || nd === 0 || nd >= n) return;
    looDays.push(d.date);
    psiLoo.push(psi(rest, dayCounts[i]!).psi);
    if (grid !== null && d.profile.sortedSample.length > 0) ksLoo.push(binnedLooD(grid, d.profile.sortedSample, d.piece));
  });
  return {
    looDays,
    psi: psiLoo,
    // KS and the distinct check apply to numeric features only (a binary feature has two values).
    ...(withKs ? { ks: ksLoo, distinct: { sizes: DISTINCT_LADDER.slice(), perDay: days.map((d) => distinctLadder(d.profile.sortedSample)) } } : {}),
  };
}

/** The leave-one-out PSI of a categorical feature over its baseline days. */
export function categoricalVariation(days: readonly { date: string; profile: CategoricalProfile }[]): FeatureVariation {
  const counts = days.map((d) => categoryCounts(d.profile));
  const total = new Map<string, number>();
  for (const c of counts) for (const [k, v] of c) total.set(k, (total.get(k) ?? 0) + v);
  const psiLoo: number[] = [];
  const looDays: string[] = [];
  days.forEach((d, i) => {
    const rest = new Map<string, number>();
    let restSum = 0;
    for (const [k, v] of total) {
      const r = v - (counts[i]!.get(k) ?? 0);
      if (r > 0) {
        rest.set(k, r);
        restSum += r;
      }
    }
    if (restSum <= 0 || counts[i]!.size === 0) return;
    looDays.push(d.date);
    psiLoo.push(categoryPsi(rest, counts[i]!).psi);
  });
  return { looDays, psi: psiLoo };
}

/** Variation of every feature of a window, from its day profiles and the merged baseline pieces. */
export function windowVariation(
  days: readonly DayProfile[],
  config: Config,
  pooled: Record<string, { pieces: Float64Array[]; merged: Float64Array; spec: BinSpec }>,
): Record<string, FeatureVariation> {
  const out: Record<string, FeatureVariation> = {};
  for (const f of config.features) {
    if (f.kind === 'categorical') {
      const parts = days.flatMap((d) => {
        const p = d.features[f.name];
        return p !== undefined && p.kind === 'categorical' ? [{ date: d.date, profile: p }] : [];
      });
      out[f.name] = categoricalVariation(parts);
      continue;
    }
    const pool = pooled[f.name];
    if (pool === undefined) continue;
    const parts: { date: string; profile: NumericProfile; piece: Float64Array }[] = [];
    let k = 0;
    for (const d of days) {
      const p = d.features[f.name];
      if (p === undefined || p.kind === 'categorical') continue;
      // Pieces were cut only while the window had finite values; a day without any adds an empty one.
      parts.push({ date: d.date, profile: p, piece: pool.pieces[k++] ?? new Float64Array(0) });
    }
    out[f.name] = numericVariation(parts, pool.merged, pool.spec, f.kind === 'numeric');
  }
  return out;
}
