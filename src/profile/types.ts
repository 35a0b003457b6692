/**
 * Profiles: what a day (or a baseline window) looks like, as mergeable partial states.
 * Counts add up across days and across database shards; that is what lets the same
 * checks run on rows streamed into Plumbline or on aggregates computed inside PostgreSQL.
 *
 * Privacy: profiles hold aggregates and value samples only; no list or item ids.
 */
import type { BinSpec, QualityCounts } from '../stats/index.ts';

export interface WithinListCounts {
  /** Lists with at least two non-null finite values of this feature (the lists that can be judged). */
  listsJudged: number;
  /** Lists in which the feature is constant. */
  flatLists: number;
  /** Lists breaking the feature's within-list rule (flat lists are not counted here). */
  ruleViolations: number;
}

export interface NumericProfile {
  kind: 'numeric' | 'binary';
  quality: QualityCounts;
  /** Counts over the baseline's bins; the last entry is the missing bin (null, NaN, type error). */
  binCounts: number[];
  /** Finite values, sorted ascending: the baseline's capped sample, or the day's evaluated values. */
  sortedSample: Float64Array;
  /** Distinct finite values in sortedSample. */
  distinct: number;
  mean: number | null;
  withinList: WithinListCounts | null;
  /**
   * Pushdown engine only: counts of the day's finite values over the baseline's fine bins
   * (BaselineProfile.fineBins). With it, KS D comes from the binned ECDFs, with an error bound.
   */
  fineBinCounts?: number[];
  /** Within-list association with the served order and the score (item-level numeric features). */
  association?: AssociationCounts | null;
  /**
   * In memory only, when asked for (ListGrouping.perList = 'record'): the within-list checks
   * per list of the day, from which slices made of whole lists take theirs (profile/slices.ts).
   * Never stored.
   */
  perList?: PerListRecords;
  /**
   * Pushdown engine only: exact counts of the day's finite values beyond the baseline's
   * extreme-value bounds (PushdownSpecs.extremeBounds), with the day's exact extremes.
   */
  extremeCounts?: { lower: number; upper: number; below: number; above: number; min: number | null; max: number | null };
}

export interface CategoricalProfile {
  kind: 'categorical';
  quality: QualityCounts;
  /**
   * Rows per category (nulls are in quality.nulls). A Map, not an object: category values are
   * data, and `constructor` or `__proto__` must be keys like any other. At most
   * source.maxCategories entries, the most frequent; the rest are counted in otherRows.
   */
  categories: Map<string, number>;
  /** Rows in categories beyond the kept ones. */
  otherRows: number;
  /**
   * Distinct categories (after truncation to source.maxCategoryLength): of the day, or for a
   * baseline the largest daily count among its days.
   */
  distinct: number;
  withinList: WithinListCounts | null;
}

export type FeatureProfile = NumericProfile | CategoricalProfile;

/**
 * A feature's day-to-day variation over its baseline window (profile/variation.ts): the
 * yardstick of the per-day distinct check and of the adaptive drift thresholds.
 */
export interface FeatureVariation {
  /** Baseline days with a leave-one-out statistic, in window order. */
  looDays: string[];
  /** PSI of each of those days against the rest of the window (over the baseline's bins). */
  psi: number[];
  /** KS D of each of those days against the rest of the window (numeric features). */
  ks?: number[];
  /** Distinct values of each baseline day's sample thinned to each ladder size (numeric features). */
  distinct?: {
    sizes: number[];
    /** perDay[d][i]: day d's distinct count at sizes[i]; a day's list ends at the largest size its sample reaches. */
    perDay: number[][];
  };
}

export interface DatasetCounts {
  rows: number;
  lists: number;
  /** Rows whose list id is null (they belong to no list and are not evaluated per list). */
  nullListIdRows: number;
  /** Rows whose item id is null (with or without a list id; never counted as duplicates). */
  nullItemIdRows: number;
  /** Lists per size; index i holds lists of size i + 1, the last entry lists of size >= its index + 1. */
  listSizeCounts: number[];
  singletonLists: number;
  listsWithDuplicateItems: number;
  listsWithPositionGaps: number;
  /**
   * Label counts over the rows that have a list id, when a label column is configured.
   * labelRows are the rows with a label (not null, not NaN); rows without one are left out
   * of the positive rate (they are not negatives) and are counted by null_label_ratio.
   */
  labelRows: number;
  labelPositives: number;
  listsWithoutPositive: number;
}

/** The profile of one evaluated day. */
export interface DayProfile {
  date: string;
  dataset: DatasetCounts;
  /** Rows and lists before whole-list sampling. */
  totalRows: number;
  totalLists: number;
  sampled: boolean;
  features: Record<string, FeatureProfile>;
  /** Outcome from labels in served order, when a label column is configured. */
  outcome?: OutcomeCounts | null;
  /** The day's slices (src/profile/slices.ts), in memory only: each is stored as a day profile of its own. */
  slices?: SliceProfile[];
  /** As stored: the names of the slices profiled with this day. */
  sliceNames?: string[];
}

/**
 * One numeric feature's within-list outcome per list of a day (index = list). `flags`: bit 0
 * the list was judged, bit 1 it is flat, bit 2 it breaks the feature's rule. The rho arrays
 * hold each list's Spearman correlation, NaN where the list was not counted; null when the
 * feature has no such association.
 */
export interface PerListRecords {
  flags: Uint8Array;
  positionRho: Float64Array | null;
  scoreRho: Float64Array | null;
}

export const LIST_JUDGED = 1;
export const LIST_FLAT = 2;
export const LIST_BREAKS_RULE = 4;

/** A slice's profile of one day. */
export interface SliceProfile {
  slice: string;
  kind: 'top' | 'segment';
  profile: DayProfile;
}

/** The profile of a baseline window, computed once per window and config fingerprint. */
export interface BaselineProfile {
  fingerprint: string;
  window: { type: string; from: string; to: string };
  /** Days of the window that had rows, with their row and list counts. */
  days: { date: string; rows: number; lists: number }[];
  dataset: DatasetCounts;
  /** Bin edges per numeric feature, from the baseline sample's quantiles. */
  bins: Record<string, BinSpec>;
  /**
   * Pushdown engine only: about FINE_BINS quantile bins per numeric feature, refining `bins`,
   * over which the day's values are counted in SQL for a binned Kolmogorov-Smirnov D.
   */
  fineBins?: Record<string, BinSpec>;
  features: Record<string, FeatureProfile>;
  sampleSize: number;
  createdAt: string;
  /** Per baseline day: outcome and within-list association aggregates (for the day-to-day spread). */
  rankingDays?: RankingDay[];
  /** Day-to-day variation per feature; absent on baselines stored before it existed. */
  variation?: Record<string, FeatureVariation>;
  /** Names of the slices seen on the window's days (each slice's baseline is stored apart). */
  slices?: string[];
}

/**
 * Per-list Spearman correlations of one feature over a day's lists, as mergeable sums: lists
 * counted (with at least 3 complete pairs and both sides varying), sum and sum of squares
 * of rho, and lists with rho above and below 0.
 */
export interface RankCorrelationSums {
  count: number;
  sum: number;
  sumSq: number;
  positive: number;
  negative: number;
}

/** Within-list association of an item-level numeric feature with the served order and the model score. */
export interface AssociationCounts {
  /** Against the position (1 = top): a feature the ranker rewards has a negative rho here. */
  position: RankCorrelationSums;
  /** Against the model score (source.columns.score); null without one, and for the score itself. */
  score: RankCorrelationSums | null;
}

/** Outcome of the served order from labels, over the lists with at least one positive label. */
export interface OutcomeCounts {
  /** The k of NDCG@k. */
  k: number;
  /** Lists with a positive label and a served position (those MRR and NDCG are over). */
  lists: number;
  reciprocalRank: { count: number; sum: number; sumSq: number };
  ndcg: { count: number; sum: number; sumSq: number };
  /** Positive labels per served-rank bucket (stats POSITION_BUCKET_LABELS): the click curve. */
  positivesByBucket: number[];
}

/** One baseline day's ranking aggregates, kept apart so that checks see the spread over days. */
export interface RankingDay {
  date: string;
  outcome: OutcomeCounts | null;
  association: Record<string, AssociationCounts>;
}

/** A categorical column: codes into a dictionary of the day's values. */
export interface CategoricalColumn {
  codes: Int32Array; // -1 for null
  dictionary: string[];
}

/**
 * One day of the source as columns (read by source/read-day.ts, profiled by day.ts): per
 * feature typed arrays and per-row list indexes, never one object per row.
 */
export interface DayColumns {
  date: string;
  rows: number;
  /** Rows of the day before whole-list sampling. */
  totalRows: number;
  sampled: boolean;
  /** List index per row (0..lists-1), -1 when the list id is null. */
  listOf: Int32Array;
  lists: number;
  /** 53-bit hash of the item id per row (NaN for a null id); only compared within a list. */
  itemHash: Float64Array;
  /** Position per row; NULL_POSITION when null. */
  position: Int32Array;
  /** Label per row, NaN when null; null when no label column is configured. */
  label: Float64Array | null;
  /** Per config feature index: numeric values (NaN where missing) or null for categorical. */
  numeric: (Float64Array | null)[];
  /** Per config feature index: missing codes, or null when nothing was missing. */
  missing: (Uint8Array | null)[];
  categorical: (CategoricalColumn | null)[];
  /** Per segment column of config.slices.segments, its text value per row (absent when none are configured). */
  segments?: CategoricalColumn[];
  /**
   * Set on a slice's columns (profile/slices.ts subsetColumns): `numeric` and `missing` are then
   * the whole day's columns, and this slice's row k is their row parentRows[k]. The thread that
   * profiles a feature gathers its values, so the slice's numeric columns are never all copied
   * at once. Every other column is the slice's own.
   */
  parentRows?: Int32Array;
  /**
   * Set on a slice's columns: at most about this many finite values per feature are sorted
   * into the profile's sortedSample (config slices.valuesPerDay); see numericProfile.
   */
  valueCap?: number;
}

/** The position of a row whose position is null. */
export const NULL_POSITION = -2147483648;

/** Rows grouped by list: rows of list l are order[start[l] .. start[l + 1]). */
export interface ListGrouping {
  start: Int32Array;
  order: Int32Array;
  /** Served order and score for the within-list association (set by buildDayProfile). */
  ranking?: { served: ServedOrder; scoreFeature: string | null };
  /**
   * The within-list checks of numeric features (rules, flat lists, association): `record`
   * computes them and keeps each list's outcome too (NumericProfile.perList); `skip` leaves
   * them out, for a slice of whole lists that takes them from the day's records instead.
   */
  perList?: 'record' | 'skip';
}

/**
 * Each list's rows with a position, sorted by position (entries e of list l are
 * start[l] .. start[l + 1]). Typed arrays on SharedArrayBuffers: worker threads read them
 * without a copy.
 */
export interface ServedOrder {
  start: Int32Array;
  /** Row index per entry. */
  rows: Int32Array;
  /**
   * Average rank of the position among the list's entries (ties share the mean rank). It
   * rises with the position inside a list and is equal exactly where positions tie, so it
   * stands in for the position wherever only order and ties count (no position is kept).
   */
  positionRank: RankArray;
  /** Model score per entry (NaN when missing), or null without a score column. */
  score: Float64Array | null;
  /** Average rank of the score among the list's entries, valid when the whole list has a finite score. */
  scoreRank: RankArray | null;
  /** 1 when every entry of the list has a finite score. */
  scoreComplete: Uint8Array | null;
}

/**
 * Average ranks inside a list are half-integers: exact in float32 below 2^23, so a day whose
 * lists are all shorter (any day under 2^23 rows) keeps them in half the memory.
 */
export type RankArray = Float32Array | Float64Array;
