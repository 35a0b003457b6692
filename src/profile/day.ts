/**
 * From a day's columns to its profile: quality counts, within-list counts, list-level
 * counts and the sorted finite values of every numeric feature. Pure: no I/O.
 */
import type { Config } from '../config/index.ts';
import {
  addToSplitSum,
  binCountsSorted,
  boundCategories,
  meanOfSplitSum,
  distinctCountSorted,
  halfSortScratchLength,
  isFlatList,
  listAggregate,
  qualityCounts,
  radixSortInPlace,
  ruleViolated,
  type BinSpec,
  type QualityCounts,
  type SplitSum,
} from '../stats/index.ts';
import { featureAssociation, outcomeCounts, servedOrder } from './association.ts';
import { LIST_BREAKS_RULE, LIST_FLAT, LIST_JUDGED, NULL_POSITION, type AssociationCounts, type PerListRecords, type CategoricalProfile, type DatasetCounts, type DayColumns, type DayProfile, type FeatureProfile, type NumericProfile, type WithinListCounts, type ListGrouping } from './types.ts';

/** Lists longer than this share the last list-size bin. */
export const MAX_LIST_SIZE_BIN = 100;

/** Counting sort of row indexes by list index: O(rows + lists). Rows without a list are left out. */
export function groupByList(listOf: Int32Array, lists: number): ListGrouping {
  const start = new Int32Array(lists + 1);
  for (let i = 0; i < listOf.length; i++) {
    const l = listOf[i]!;
    if (l >= 0) start[l + 1]!++;
  }
  for (let l = 0; l < lists; l++) start[l + 1]! += start[l]!;
  const fill = start.slice(0, lists);
  // Shared so that worker threads can read the grouping without a copy.
  const order = new Int32Array(new SharedArrayBuffer(4 * start[lists]!));
  for (let i = 0; i < listOf.length; i++) {
    const l = listOf[i]!;
    if (l >= 0) order[fill[l]!++] = i;
  }
  return { start, order };
}

function datasetCounts(cols: DayColumns, g: ListGrouping): DatasetCounts {
  const sizes = new Float64Array(MAX_LIST_SIZE_BIN);
  let singletonLists = 0;
  let listsWithDuplicateItems = 0;
  let listsWithPositionGaps = 0;
  let labelRows = 0;
  let labelPositives = 0;
  let listsWithoutPositive = 0;
  let scratch = new Float64Array(64);
  let nullListIdRows = 0;
  let nullItemIdRows = 0;
  for (let i = 0; i < cols.rows; i++) {
    if (cols.listOf[i]! < 0) nullListIdRows++;
    // A null item id hashes to NaN (never equal to another, so never a duplicate).
    if (Number.isNaN(cols.itemHash[i]!)) nullItemIdRows++;
  }

  for (let l = 0; l < cols.lists; l++) {
    const a = g.start[l]!;
    const b = g.start[l + 1]!;
    const n = b - a;
    if (n === 0) continue;
    sizes[Math.min(n, MAX_LIST_SIZE_BIN) - 1]!++;
    if (n === 1) singletonLists++;
    if (scratch.length < n) scratch = new Float64Array(n * 2);

    // Duplicate items: sort the list's item hashes and look at neighbours.
    const items = scratch.subarray(0, n);
    for (let k = 0; k < n; k++) items[k] = cols.itemHash[g.order[a + k]!]!;
    items.sort();
    for (let k = 1; k < n; k++) {
      if (items[k] === items[k - 1]) {
        listsWithDuplicateItems++;
        break;
      }
    }

    // Positions must be n consecutive integers starting at 0 or 1.
    const pos = scratch.subarray(0, n);
    let nullPosition = false;
    for (let k = 0; k < n; k++) {
      const p = cols.position[g.order[a + k]!]!;
      if (p === NULL_POSITION) nullPosition = true;
      pos[k] = p;
    }
    pos.sort();
    let gap = nullPosition || (pos[0] !== 0 && pos[0] !== 1);
    for (let k = 1; !gap && k < n; k++) if (pos[k] !== pos[k - 1]! + 1) gap = true;
    if (gap) listsWithPositionGaps++;

    if (cols.label !== null) {
      let positives = 0;
      let labelled = 0;
      for (let k = a; k < b; k++) {
        const y = cols.label[g.order[k]!]!;
        if (!Number.isNaN(y)) {
          labelled++;
          if (y > 0) positives++;
        }
      }
      labelRows += labelled;
      labelPositives += positives;
      if (positives === 0) listsWithoutPositive++;
    }
  }
  return {
    rows: cols.rows,
    lists: cols.lists,
    nullListIdRows,
    nullItemIdRows,
    listSizeCounts: Array.from(sizes),
    singletonLists,
    listsWithDuplicateItems,
    listsWithPositionGaps,
    labelRows,
    labelPositives,
    listsWithoutPositive,
  };
}

/** The values of a column at the given rows, in that order. */
export function gatherValues(column: Float64Array, rows: Int32Array): Float64Array {
  const out = new Float64Array(rows.length);
  for (let k = 0; k < rows.length; k++) out[k] = column[rows[k]!]!;
  return out;
}

/** Missing codes at the given rows, or null when none of them is missing. */
function gatherMissing(missing: Uint8Array, rows: Int32Array): Uint8Array | null {
  const out = new Uint8Array(rows.length);
  let any = false;
  for (let k = 0; k < rows.length; k++) {
    out[k] = missing[rows[k]!]!;
    if (out[k] !== 0) any = true;
  }
  return any ? out : null;
}

/**
 * A sort buffer kept across the features one thread profiles, grown on demand: half a
 * column's worth, the least radixSortInPlace sorts with (every thread holds one at once).
 */
export class SortScratch {
  private buffer = new Float64Array(0);
  of(n: number): Float64Array {
    const length = halfSortScratchLength(n);
    if (this.buffer.length < length) this.buffer = new Float64Array(length);
    return this.buffer;
  }
}

/**
 * The profile of one numeric feature: what a profiling thread computes for each feature it
 * takes (claim.ts). Consumes `column`: the within-list checks read it in row order, then its finite
 * values are moved to its front and sorted there, and that prefix is the profile's sorted
 * sample. A day so costs one copy of its columns in memory, not a column and its sorted copy.
 * With `parentRows` (a slice, DayColumns.parentRows) the values at those rows are gathered
 * first and the copy is consumed instead; the column is left as it was. With more finite
 * values than `valueCap` (a slice, DayColumns.valueCap), the sorted sample is a sample by row
 * of about that size plus the smallest and largest value: sorting is most of a profile's
 * cost, and a slice's KS and PSI count lists, not rows (checks/slices.ts), so a sample of tens
 * of thousands of values loses nothing they could show. Its bin counts are the sample's scaled
 * to all finite values (countsOverBins); quality counts, the mean and the within-list checks
 * still count every row.
 */
export function numericProfile(
  column: Float64Array,
  columnMissing: Uint8Array | null,
  lists: number,
  g: ListGrouping,
  feature: Config['features'][number],
  bins: BinSpec | undefined,
  scratch: SortScratch = new SortScratch(),
  parentRows: Int32Array | null = null,
  valueCap = Infinity,
): NumericProfile {
  const values = parentRows === null ? column : gatherValues(column, parentRows);
  const missing = parentRows === null || columnMissing === null ? columnMissing : gatherMissing(columnMissing, parentRows);
  const quality = qualityCounts(values, missing, feature.range);

  const record = g.perList === 'record';
  const perList: PerListRecords | undefined = record ? { flags: new Uint8Array(lists), positionRho: null, scoreRho: null } : undefined;
  let withinList: WithinListCounts | null = null;
  if (feature.scope === 'item' && g.perList !== 'skip') {
    const rule = feature.withinList?.rule;
    const tolerance = feature.withinList?.tolerance ?? 0;
    let listsJudged = 0;
    let flatLists = 0;
    let ruleViolations = 0;
    let listScratch = new Float64Array(64);
    for (let l = 0; l < lists; l++) {
      const a = g.start[l]!;
      const b = g.start[l + 1]!;
      if (b - a < 2) continue;
      if (listScratch.length < b - a) listScratch = new Float64Array((b - a) * 2);
      const agg = listAggregate(values, g.order, a, b, missing, rule === 'rank', listScratch);
      if (agg.count < 2) continue;
      listsJudged++;
      let flags = LIST_JUDGED;
      if (isFlatList(agg)) {
        flatLists++;
        flags |= LIST_FLAT;
      } else if (rule !== undefined && ruleViolated(rule, agg, tolerance)) {
        ruleViolations++;
        flags |= LIST_BREAKS_RULE;
      }
      if (perList !== undefined) perList.flags[l] = flags;
    }
    withinList = { listsJudged, flatLists, ruleViolations };
  }
  let association: AssociationCounts | undefined;
  if (feature.scope === 'item' && g.ranking !== undefined && g.perList !== 'skip') {
    const withScore = feature.name !== g.ranking.scoreFeature;
    if (perList !== undefined) {
      perList.positionRho = new Float64Array(lists);
      perList.scoreRho = withScore && g.ranking.served.score !== null ? new Float64Array(lists) : null;
    }
    association = featureAssociation(values, g.ranking.served, withScore, perList === undefined ? undefined : { position: perList.positionRho!, score: perList.scoreRho });
  }

  // Row order has served its purpose: the finite values move to the front and are sorted in place.
  let k = 0;
  // Split so that 1e308 + 1e308 does not overflow (stats/safesum.ts; the pushdown SQL splits alike).
  const sum: SplitSum = { small: 0, largeScaled: 0 };
  const sampled = quality.finite > valueCap;
  if (!sampled) {
    for (let i = 0; i < values.length; i++) {
      const v = values[i]!;
      if (Number.isFinite(v)) {
        values[k++] = v;
        addToSplitSum(sum, v);
      }
    }
  } else {
    // A sample by row (a hash of the day's row index, so the same rows for every feature),
    // plus the smallest and largest value, so that the range and a constant feature stay exact.
    const threshold = Math.floor((valueCap / quality.finite) * 4294967296);
    let min = Infinity;
    let max = -Infinity;
    for (let i = 0; i < values.length; i++) {
      const v = values[i]!;
      if (!Number.isFinite(v)) continue;
      addToSplitSum(sum, v);
      if (v < min) min = v;
      if (v > max) max = v;
      const row = parentRows === null ? i : parentRows[i]!;
      if (Math.imul(row + 1, 0x9e3779b1) >>> 0 < threshold) values[k++] = v;
    }
    values[k++] = min;
    values[k++] = max;
  }
  // A sample is copied out, so that the column it was taken from can go.
  const sorted = sampled ? radixSortInPlace(values.slice(0, k), scratch.of(k)) : radixSortInPlace(values.subarray(0, k), scratch.of(k));

  const profile: NumericProfile = {
    kind: feature.kind === 'binary' ? 'binary' : 'numeric',
    quality,
    // From the sorted values; a sample's counts are scaled up to all finite values (countsOverBins).
    binCounts: bins === undefined ? [] : countsOverBins(bins, sorted, quality),
    sortedSample: sorted,
    distinct: distinctCountSorted(sorted),
    mean: quality.finite > 0 ? meanOfSplitSum(sum, quality.finite) : null,
    withinList,
  };
  if (association !== undefined) profile.association = association;
  if (perList !== undefined) profile.perList = perList;
  return profile;
}

/**
 * Counts over the baseline's bins, from sorted finite values scaled up to the finite
 * count, plus infinities in the outer bins and a last bin for missing values (null,
 * NaN, type errors). Scaling lets a capped sample stand for all its day's rows.
 */
export function countsOverBins(bins: BinSpec, sortedFinite: Float64Array, q: QualityCounts): number[] {
  const counts = Array.from(binCountsSorted(bins, sortedFinite));
  const sampleTotal = sortedFinite.length;
  const scale = sampleTotal > 0 ? q.finite / sampleTotal : 0;
  for (let i = 0; i < counts.length; i++) counts[i] = counts[i]! * scale;
  counts[0] = counts[0]! + q.negInf;
  counts[counts.length - 1] = counts[counts.length - 1]! + q.posInf;
  counts.push(q.nulls + q.nan + q.typeErrors);
  return counts;
}

function categoricalProfile(cols: DayColumns, g: ListGrouping, fi: number, feature: Config['features'][number], maxCategories: number): CategoricalProfile {
  const col = cols.categorical[fi]!;
  const counts = new Float64Array(col.dictionary.length);
  let nulls = 0;
  for (let i = 0; i < col.codes.length; i++) {
    const c = col.codes[i]!;
    if (c < 0) nulls++;
    else counts[c]!++;
  }
  const all = new Map<string, number>();
  col.dictionary.forEach((name, c) => {
    if (counts[c]! > 0) all.set(name, counts[c]!);
  });
  const { kept: categories, other: otherRows } = boundCategories(all, maxCategories);

  let withinList: WithinListCounts | null = null;
  if (feature.scope === 'item') {
    let listsJudged = 0;
    let flatLists = 0;
    for (let l = 0; l < cols.lists; l++) {
      const a = g.start[l]!;
      const b = g.start[l + 1]!;
      let first = -1;
      let present = 0;
      let flat = true;
      for (let k = a; k < b; k++) {
        const c = col.codes[g.order[k]!]!;
        if (c < 0) continue;
        present++;
        if (first < 0) first = c;
        else if (c !== first) flat = false;
      }
      if (present < 2) continue;
      listsJudged++;
      if (flat) flatLists++;
    }
    withinList = { listsJudged, flatLists, ruleViolations: 0 };
  }
  const quality: QualityCounts = { rows: cols.rows, nulls, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, finite: cols.rows - nulls };
  return { kind: 'categorical', quality, categories, otherRows, distinct: all.size, withinList };
}

/**
 * Computes numeric feature profiles, possibly on other threads. Given the feature indexes
 * to profile, returns their profiles in the same order.
 */
export type NumericProfiler = (cols: DayColumns, g: ListGrouping, indexes: number[], config: Config, bins: Record<string, BinSpec> | null) => Promise<NumericProfile[]>;

/** Profiles every numeric feature on this thread. */
export const profileOnThisThread: NumericProfiler = async (cols, g, indexes, config, bins) => {
  const scratch = new SortScratch();
  return indexes.map((fi) => {
    const f = config.features[fi]!;
    const profile = numericProfile(cols.numeric[fi]!, cols.missing[fi] ?? null, cols.lists, g, f, bins?.[f.name], scratch, cols.parentRows ?? null, cols.valueCap);
    releaseColumn(cols, fi);
    return profile;
  });
};

/**
 * Drops a profiled column from the day's columns: numericProfile has sorted it in place (it
 * is the profile's sorted sample now), so it must not be read as a column again.
 */
export function releaseColumn(cols: DayColumns, fi: number): void {
  cols.numeric[fi] = null;
  cols.missing[fi] = null;
}

/**
 * The profile of one day; `bins` (the baseline's) fill in binCounts when given. Consumes
 * the numeric columns of `cols` (each is released once profiled). `perList`: see ListGrouping.
 */
export async function buildDayProfile(
  cols: DayColumns,
  config: Config,
  bins: Record<string, BinSpec> | null,
  profiler: NumericProfiler = profileOnThisThread,
  perList?: ListGrouping['perList'],
): Promise<DayProfile> {
  const g = groupByList(cols.listOf, cols.lists);
  if (perList !== undefined) g.perList = perList;
  // Served order (and the score) once per day, before the profiler releases the score column.
  const scoreIndex = scoreFeatureIndex(config);
  const scoreColumn = scoreIndex >= 0 ? cols.numeric[scoreIndex] ?? null : null;
  // Not needed by a slice that takes its within-list checks from the day, unless for outcomes.
  const served =
    perList === 'skip' && cols.label === null
      ? null
      : servedOrder(cols.position, g, cols.lists, scoreColumn !== null && cols.parentRows !== undefined ? gatherValues(scoreColumn, cols.parentRows) : scoreColumn);
  if (served !== null) g.ranking = { served, scoreFeature: scoreIndex >= 0 ? config.features[scoreIndex]!.name : null };
  const outcome = cols.label !== null && served !== null ? outcomeCounts(cols.label, served, config.outcome.ndcgAt) : null;
  const features: Record<string, FeatureProfile> = {};
  const numeric = config.features.map((f, fi) => (f.kind === 'categorical' ? -1 : fi)).filter((fi) => fi >= 0);
  const numericProfiles = profiler(cols, g, numeric, config, bins);
  const dataset = datasetCounts(cols, g);
  config.features.forEach((f, fi) => {
    if (f.kind === 'categorical') features[f.name] = categoricalProfile(cols, g, fi, f, config.source.maxCategories);
  });
  (await numericProfiles).forEach((p, i) => {
    features[config.features[numeric[i]!]!.name] = p;
  });
  // Keep the config's feature order.
  const ordered: Record<string, FeatureProfile> = {};
  for (const f of config.features) ordered[f.name] = features[f.name]!;
  return {
    date: cols.date,
    dataset,
    totalRows: cols.totalRows,
    // A sampled day keeps whole lists, so lists scale like rows.
    totalLists: cols.sampled && cols.rows > 0 ? Math.round((cols.lists * cols.totalRows) / cols.rows) : cols.lists,
    sampled: cols.sampled,
    features: ordered,
    outcome,
  };
}

/** Index of the feature that reads the model score column (source.columns.score), or -1. */
export function scoreFeatureIndex(config: Config): number {
  const score = config.source.columns.score;
  if (score === undefined) return -1;
  return config.features.findIndex((f) => f.kind !== 'categorical' && f.key === undefined && (f.column ?? f.name) === score);
}
