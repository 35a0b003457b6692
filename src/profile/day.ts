/**
 * From a day's columns to its profile: quality counts, within-list counts, list-level
 * counts and the sorted finite values of every numeric feature. Pure: no I/O.
 */
import type { Config } from '../config/index.ts';
import type { DayColumns } from '../source/index.ts';
import { NULL_POSITION } from '../source/index.ts';
import {
  binCounts,
  distinctCountSorted,
  isFlatList,
  listAggregate,
  qualityCounts,
  ruleViolated,
  type BinSpec,
  type QualityCounts,
} from '../stats/index.ts';
import type { CategoricalProfile, DatasetCounts, DayProfile, FeatureProfile, NumericProfile, WithinListCounts } from './types.ts';

/** Lists longer than this share the last list-size bin. */
export const MAX_LIST_SIZE_BIN = 100;

/** Rows grouped by list: rows of list l are order[start[l] .. start[l + 1]). */
export interface ListGrouping {
  start: Int32Array;
  order: Int32Array;
}

/** Counting sort of row indexes by list index: O(rows + lists). Rows without a list are left out. */
export function groupByList(listOf: Int32Array, lists: number): ListGrouping {
  const start = new Int32Array(lists + 1);
  for (let i = 0; i < listOf.length; i++) {
    const l = listOf[i]!;
    if (l >= 0) start[l + 1]!++;
  }
  for (let l = 0; l < lists; l++) start[l + 1]! += start[l]!;
  const fill = start.slice(0, lists);
  const order = new Int32Array(start[lists]!);
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
  for (let i = 0; i < cols.rows; i++) if (cols.listOf[i]! < 0) nullListIdRows++;

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
    listSizeCounts: Array.from(sizes),
    singletonLists,
    listsWithDuplicateItems,
    listsWithPositionGaps,
    labelRows,
    labelPositives,
    listsWithoutPositive,
  };
}

function numericProfile(
  cols: DayColumns,
  g: ListGrouping,
  fi: number,
  feature: Config['features'][number],
  bins: BinSpec | undefined,
): NumericProfile {
  const values = cols.numeric[fi]!;
  const missing = cols.missing[fi] ?? null;
  const quality = qualityCounts(values, missing, feature.range);

  let finite = 0;
  for (let i = 0; i < values.length; i++) if (Number.isFinite(values[i]!)) finite++;
  const sorted = new Float64Array(finite);
  let k = 0;
  let sum = 0;
  for (let i = 0; i < values.length; i++) {
    const v = values[i]!;
    if (Number.isFinite(v)) {
      sorted[k++] = v;
      sum += v;
    }
  }
  sorted.sort();

  let withinList: WithinListCounts | null = null;
  if (feature.scope === 'item') {
    const rule = feature.withinList?.rule;
    const tolerance = feature.withinList?.tolerance ?? 0;
    let listsJudged = 0;
    let flatLists = 0;
    let ruleViolations = 0;
    let scratch = new Float64Array(64);
    for (let l = 0; l < cols.lists; l++) {
      const a = g.start[l]!;
      const b = g.start[l + 1]!;
      if (b - a < 2) continue;
      if (scratch.length < b - a) scratch = new Float64Array((b - a) * 2);
      const agg = listAggregate(values, g.order, a, b, missing, rule === 'rank', scratch);
      if (agg.count < 2) continue;
      listsJudged++;
      if (isFlatList(agg)) flatLists++;
      else if (rule !== undefined && ruleViolated(rule, agg, tolerance)) ruleViolations++;
    }
    withinList = { listsJudged, flatLists, ruleViolations };
  }

  return {
    kind: feature.kind === 'binary' ? 'binary' : 'numeric',
    quality,
    binCounts: bins === undefined ? [] : countsOverBins(bins, sorted, quality),
    sortedSample: sorted,
    distinct: distinctCountSorted(sorted),
    mean: finite > 0 ? sum / finite : null,
    withinList,
  };
}

/**
 * Counts over the baseline's bins, from sorted finite values scaled up to the finite
 * count, plus infinities in the outer bins and a last bin for missing values (null,
 * NaN, type errors). Scaling lets a capped sample stand for all its day's rows.
 */
export function countsOverBins(bins: BinSpec, sortedFinite: Float64Array, q: QualityCounts): number[] {
  const counts = Array.from(binCounts(bins, sortedFinite));
  const sampleTotal = sortedFinite.length;
  const scale = sampleTotal > 0 ? q.finite / sampleTotal : 0;
  for (let i = 0; i < counts.length; i++) counts[i] = counts[i]! * scale;
  counts[0] = counts[0]! + q.negInf;
  counts[counts.length - 1] = counts[counts.length - 1]! + q.posInf;
  counts.push(q.nulls + q.nan + q.typeErrors);
  return counts;
}

function categoricalProfile(cols: DayColumns, g: ListGrouping, fi: number, feature: Config['features'][number]): CategoricalProfile {
  const col = cols.categorical[fi]!;
  const counts = new Float64Array(col.dictionary.length);
  let nulls = 0;
  for (let i = 0; i < col.codes.length; i++) {
    const c = col.codes[i]!;
    if (c < 0) nulls++;
    else counts[c]!++;
  }
  const categories: Record<string, number> = {};
  col.dictionary.forEach((name, c) => {
    categories[name] = counts[c]!;
  });

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
  return { kind: 'categorical', quality, categories, distinct: col.dictionary.length, withinList };
}

/** The profile of one day; `bins` (the baseline's) fill in binCounts when given. */
export function buildDayProfile(cols: DayColumns, config: Config, bins: Record<string, BinSpec> | null): DayProfile {
  const g = groupByList(cols.listOf, cols.lists);
  const features: Record<string, FeatureProfile> = {};
  config.features.forEach((f, fi) => {
    features[f.name] = f.kind === 'categorical' ? categoricalProfile(cols, g, fi, f) : numericProfile(cols, g, fi, f, bins?.[f.name]);
  });
  return {
    date: cols.date,
    dataset: datasetCounts(cols, g),
    totalRows: cols.totalRows,
    // A sampled day keeps whole lists, so lists scale like rows.
    totalLists: cols.sampled && cols.rows > 0 ? Math.round((cols.lists * cols.totalRows) / cols.rows) : cols.lists,
    sampled: cols.sampled,
    features,
  };
}
