/**
 * Small hand-built profiles for the checks tests: every count is written out, so each
 * expected finding can be worked out on paper.
 */
import type { BaselineProfile, CategoricalProfile, DatasetCounts, DayProfile, NumericProfile, WithinListCounts } from '../../../src/profile/index.ts';
import type { BinSpec, QualityCounts } from '../../../src/stats/index.ts';

export function quality(rows: number, missing: Partial<Omit<QualityCounts, 'rows' | 'finite'>> = {}): QualityCounts {
  const q = { nulls: 0, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, ...missing };
  return { rows, ...q, finite: rows - q.nulls - q.nan - q.posInf - q.negInf - q.typeErrors };
}

/** A numeric profile whose sample is `values` (sorted here); quality defaults to all finite. */
export function numeric(values: number[], options: { quality?: QualityCounts; binCounts?: number[]; withinList?: WithinListCounts | null; kind?: 'numeric' | 'binary' } = {}): NumericProfile {
  const sorted = Float64Array.from(values).sort();
  const distinct = new Set(values).size;
  return {
    kind: options.kind ?? 'numeric',
    quality: options.quality ?? quality(values.length),
    binCounts: options.binCounts ?? [],
    sortedSample: sorted,
    distinct,
    mean: values.length > 0 ? values.reduce((a, b) => a + b, 0) / values.length : null,
    withinList: options.withinList ?? null,
  };
}

export function categorical(categories: Record<string, number>, nulls = 0, withinList: WithinListCounts | null = null): CategoricalProfile {
  const rows = Object.values(categories).reduce((a, b) => a + b, 0) + nulls;
  return { kind: 'categorical', quality: quality(rows, { nulls }), categories: new Map(Object.entries(categories)), otherRows: 0, distinct: Object.keys(categories).length, withinList };
}

/** Lists of `size` items each, nothing wrong with them. */
export function dataset(lists: number, size: number, extra: Partial<DatasetCounts> = {}): DatasetCounts {
  const listSizeCounts = Array.from({ length: size }, (_, i) => (i === size - 1 ? lists : 0));
  return {
    rows: lists * size,
    lists,
    nullListIdRows: 0,
    nullItemIdRows: 0,
    listSizeCounts,
    singletonLists: size === 1 ? lists : 0,
    listsWithDuplicateItems: 0,
    listsWithPositionGaps: 0,
    labelRows: 0,
    labelPositives: 0,
    listsWithoutPositive: 0,
    ...extra,
  };
}

export function day(date: string, ds: DatasetCounts, features: DayProfile['features'], totals?: { rows?: number; lists?: number }): DayProfile {
  return { date, dataset: ds, totalRows: totals?.rows ?? ds.rows, totalLists: totals?.lists ?? ds.lists, sampled: false, features };
}

/** A baseline of `days` days, each with the same rows and lists as `ds` divided evenly. */
export function baseline(ds: DatasetCounts, features: BaselineProfile['features'], bins: Record<string, BinSpec> = {}, days = 2): BaselineProfile {
  return {
    fingerprint: 'test',
    window: { type: 'trailing', from: '2025-03-01', to: `2025-03-0${days}` },
    days: Array.from({ length: days }, (_, i) => ({ date: `2025-03-0${i + 1}`, rows: ds.rows / days, lists: ds.lists / days })),
    dataset: ds,
    bins,
    features,
    sampleSize: 1000,
    createdAt: '2025-03-03T00:00:00.000Z',
  };
}
