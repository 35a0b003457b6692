/**
 * Merging day profiles into a baseline profile. Counts add; value samples are pooled in
 * proportion to each day's finite values, so a busy weekday weighs more than a quiet
 * Sunday, exactly as it would in one long column.
 */
import type { Config } from '../config/index.ts';
import { binEdgesFromSorted, boundCategories, emptyQualityCounts, distinctCountSorted, mergeQualityCounts, thinSorted, type BinSpec, type QualityCounts } from '../stats/index.ts';
import { countsOverBins } from './day.ts';
import { windowVariation } from './variation.ts';
import type { AssociationCounts, RankingDay, BaselineProfile, CategoricalProfile, DatasetCounts, DayProfile, FeatureProfile, NumericProfile, WithinListCounts } from './types.ts';

function addDataset(a: DatasetCounts, b: DatasetCounts): DatasetCounts {
  const sizes = a.listSizeCounts.length >= b.listSizeCounts.length ? [...a.listSizeCounts] : [...b.listSizeCounts];
  const other = a.listSizeCounts.length >= b.listSizeCounts.length ? b.listSizeCounts : a.listSizeCounts;
  other.forEach((c, i) => (sizes[i] = sizes[i]! + c));
  return {
    rows: a.rows + b.rows,
    lists: a.lists + b.lists,
    nullListIdRows: a.nullListIdRows + b.nullListIdRows,
    nullItemIdRows: a.nullItemIdRows + b.nullItemIdRows,
    listSizeCounts: sizes,
    singletonLists: a.singletonLists + b.singletonLists,
    listsWithDuplicateItems: a.listsWithDuplicateItems + b.listsWithDuplicateItems,
    listsWithPositionGaps: a.listsWithPositionGaps + b.listsWithPositionGaps,
    labelRows: a.labelRows + b.labelRows,
    labelPositives: a.labelPositives + b.labelPositives,
    listsWithoutPositive: a.listsWithoutPositive + b.listsWithoutPositive,
  };
}

export const EMPTY_DATASET: DatasetCounts = {
  rows: 0,
  lists: 0,
  nullListIdRows: 0,
  nullItemIdRows: 0,
  listSizeCounts: [],
  singletonLists: 0,
  listsWithDuplicateItems: 0,
  listsWithPositionGaps: 0,
  labelRows: 0,
  labelPositives: 0,
  listsWithoutPositive: 0,
};

function addWithinList(a: WithinListCounts | null, b: WithinListCounts | null): WithinListCounts | null {
  if (a === null) return b;
  if (b === null) return a;
  return { listsJudged: a.listsJudged + b.listsJudged, flatLists: a.flatLists + b.flatLists, ruleViolations: a.ruleViolations + b.ruleViolations };
}

/** Keeps a day profile small enough to store: each sample thinned to `cap` values. */
export function capDayProfile(day: DayProfile, cap: number): DayProfile {
  const features: Record<string, FeatureProfile> = {};
  for (const [name, f] of Object.entries(day.features)) {
    if (f.kind === 'categorical') {
      features[name] = f;
      continue;
    }
    // Bin counts belong to one baseline's bins: a later baseline has bins of its own (so do extreme counts).
    const { fineBinCounts: _fine, extremeCounts: _extreme, ...rest } = f;
    features[name] = { ...rest, binCounts: [], sortedSample: thinSorted(f.sortedSample, cap) };
  }
  return { ...day, features };
}

/**
 * Fine bins per numeric feature for the pushdown engine's binned Kolmogorov-Smirnov D:
 * about a thousand baseline-quantile bins, so each holds about 0.1 % of the baseline, which
 * bounds the error of D at about that much where the data are continuous.
 */
export const FINE_BINS = 1000;

/**
 * The union of two bin specs: every edge of either, a point mass where either has one. The
 * result refines both (each of their bins is a union of its bins), so counts over it add up
 * to counts over `coarse` exactly.
 */
export function refineBins(coarse: BinSpec, fine: BinSpec): BinSpec {
  const mass = new Map<number, boolean>();
  for (const spec of [coarse, fine]) spec.edges.forEach((e, i) => mass.set(e, (mass.get(e) ?? false) || spec.pointMass[i]!));
  const edges = [...mass.keys()].sort((a, b) => a - b);
  return { edges, pointMass: edges.map((e) => mass.get(e)!) };
}

/** Fine bins of one feature from its pooled baseline sample and its PSI bins. */
export function fineBinsFromSorted(sortedSample: Float64Array, coarse: BinSpec): BinSpec {
  return refineBins(coarse, binEdgesFromSorted(sortedSample, FINE_BINS));
}

/** The baseline with fine bins for every numeric feature (computed when a stored baseline predates them). */
export function withFineBins(baseline: BaselineProfile): BaselineProfile {
  if (baseline.fineBins !== undefined) return baseline;
  const fineBins: Record<string, BinSpec> = {};
  for (const [name, spec] of Object.entries(baseline.bins)) {
    const f = baseline.features[name];
    if (f !== undefined && f.kind !== 'categorical') fineBins[name] = fineBinsFromSorted(f.sortedSample, spec);
  }
  return { ...baseline, fineBins };
}

export interface BaselineOptions {
  fingerprint: string;
  window: { type: string; from: string; to: string };
  createdAt: string;
}

/** Merges day profiles (each from the same config) into the baseline of a window. */
export function mergeBaseline(days: readonly DayProfile[], config: Config, options: BaselineOptions): BaselineProfile {
  const sampleSize = config.baseline.sampleSize;
  let dataset = EMPTY_DATASET;
  for (const d of days) dataset = addDataset(dataset, d.dataset);

  const bins: Record<string, BinSpec> = {};
  const fineBins: Record<string, BinSpec> = {};
  const pushdown = config.source.engine === 'pushdown';
  const features: Record<string, FeatureProfile> = {};
  const poolOf: Record<string, { pieces: Float64Array[]; merged: Float64Array; spec: BinSpec }> = {};
  for (const f of config.features) {
    const parts = days.map((d) => d.features[f.name]).filter((p): p is FeatureProfile => p !== undefined);
    if (f.kind === 'categorical') {
      const cats = parts as CategoricalProfile[];
      const merged = new Map<string, number>();
      let quality: QualityCounts | null = null;
      let withinList: WithinListCounts | null = null;
      let distinct = 0;
      let other = 0;
      for (const p of cats) {
        for (const [k, v] of p.categories) merged.set(k, (merged.get(k) ?? 0) + v);
        other += p.otherRows;
        quality = quality === null ? p.quality : mergeQualityCounts(quality, p.quality);
        withinList = addWithinList(withinList, p.withinList);
        distinct = Math.max(distinct, p.distinct);
      }
      // Bounded like a day: the heavy hitters of the window, the rest as one bucket.
      const bounded = boundCategories(merged, config.source.maxCategories, other);
      features[f.name] = {
        kind: 'categorical',
        quality: quality ?? emptyQualityCounts(),
        categories: bounded.kept,
        otherRows: bounded.other,
        // The union of the days' categories is not known once each day is bounded: the largest daily count stands for it.
        distinct,
        withinList,
      };
      continue;
    }
    const nums = parts as NumericProfile[];
    let quality: QualityCounts | null = null;
    let withinList: WithinListCounts | null = null;
    let totalFinite = 0;
    let weightedMean = 0;
    for (const p of nums) {
      quality = quality === null ? p.quality : mergeQualityCounts(quality, p.quality);
      withinList = addWithinList(withinList, p.withinList);
      totalFinite += p.quality.finite;
    }
    // Weights before products: a mean near 1e308 times a count would overflow.
    for (const p of nums) if (p.mean !== null && totalFinite > 0) weightedMean += p.mean * (p.quality.finite / totalFinite);
    // Pool each day's sample in proportion to its finite values.
    const pieces: Float64Array[] = [];
    let pooled = 0;
    for (const p of nums) {
      if (totalFinite === 0) break;
      const k = Math.min(p.sortedSample.length, Math.max(1, Math.round((sampleSize * p.quality.finite) / totalFinite)));
      const piece = thinSorted(p.sortedSample, k);
      pieces.push(piece);
      pooled += piece.length;
    }
    const merged = new Float64Array(pooled);
    let offset = 0;
    for (const piece of pieces) {
      merged.set(piece, offset);
      offset += piece.length;
    }
    merged.sort();
    const q = quality ?? emptyQualityCounts();
    const spec = binEdgesFromSorted(merged, config.baseline.bins);
    bins[f.name] = spec;
    if (pushdown) fineBins[f.name] = fineBinsFromSorted(merged, spec);
    poolOf[f.name] = { pieces, merged, spec };
    features[f.name] = {
      kind: f.kind === 'binary' ? 'binary' : 'numeric',
      quality: q,
      binCounts: countsOverBins(spec, merged, q),
      sortedSample: merged,
      distinct: distinctCountSorted(merged),
      mean: totalFinite > 0 ? weightedMean : null,
      withinList,
    };
  }
  return {
    fingerprint: options.fingerprint,
    window: options.window,
    days: days.map((d) => ({ date: d.date, rows: d.totalRows, lists: d.totalLists })),
    dataset,
    bins,
    ...(pushdown ? { fineBins } : {}),
    features,
    sampleSize,
    createdAt: options.createdAt,
    rankingDays: days.map(rankingDay),
    variation: windowVariation(days, config, poolOf),
  };
}

/** A day's ranking aggregates as the baseline keeps them: per day, for the spread over days. */
export function rankingDay(d: DayProfile): RankingDay {
  const association: Record<string, AssociationCounts> = {};
  for (const [name, f] of Object.entries(d.features)) {
    if (f.kind !== 'categorical' && f.association !== undefined && f.association !== null) association[name] = f.association;
  }
  return { date: d.date, outcome: d.outcome ?? null, association };
}

