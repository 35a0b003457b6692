/**
 * The JSON report: a public, versioned contract (`run --format json`, `/api/v1/reports/...`,
 * and the `report` column of the store). This file is its one definition. Adding an
 * optional field is a minor change; renaming or removing one bumps REPORT_SCHEMA_VERSION.
 *
 * Privacy: a report holds aggregates only. No list id, item id or query text appears in
 * a finding or its evidence.
 */
import type { WithinListRule } from '../config/index.ts';

export const REPORT_SCHEMA_VERSION = 1 as const;

export type Status = 'ok' | 'warn' | 'critical';
export const STATUS_LEVEL: Record<Status, 0 | 1 | 2> = { ok: 0, warn: 1, critical: 2 };
export const STATUS_OF_LEVEL: readonly Status[] = ['ok', 'warn', 'critical'];

export function worstStatus(statuses: Iterable<Status>): Status {
  let level = 0;
  for (const s of statuses) level = Math.max(level, STATUS_LEVEL[s]);
  return STATUS_OF_LEVEL[level]!;
}

/** Checks on one feature. */
export const FEATURE_CHECKS = [
  'psi',
  'ks',
  'null_ratio',
  'nonfinite_ratio',
  'type_error_ratio',
  'out_of_range_ratio',
  'constant',
  'distinct_ratio_drop',
  'extreme_value_ratio',
  'new_category_ratio',
  'category_cardinality',
  'rule_violation_ratio',
  'flat_list_ratio',
  'position_rank_correlation',
  'score_rank_correlation',
] as const;
export type FeatureCheck = (typeof FEATURE_CHECKS)[number];

/** Checks on the whole day (feature is null). */
export const DATASET_CHECKS = [
  'snapshot_missing',
  'row_count_ratio',
  'list_count_ratio',
  'list_size_psi',
  'duplicate_item_ratio',
  'position_gap_ratio',
  'null_list_id_ratio',
  'null_item_id_ratio',
  'singleton_list_ratio',
  'label_positive_ratio',
  'no_positive_list_ratio',
  'null_label_ratio',
  'mean_reciprocal_rank',
  'ndcg',
  'positive_position_psi',
] as const;
export type DatasetCheck = (typeof DATASET_CHECKS)[number];

export type CheckName = FeatureCheck | DatasetCheck;

/** Which alerting delay (config `alerting.consecutiveRuns`) a check uses. */
export type CheckKind = 'drift' | 'quality' | 'within_list' | 'dataset' | 'ranking' | 'outcome';
export const CHECK_KIND: Record<CheckName, CheckKind> = {
  psi: 'drift',
  ks: 'drift',
  null_ratio: 'quality',
  nonfinite_ratio: 'quality',
  type_error_ratio: 'quality',
  out_of_range_ratio: 'quality',
  constant: 'quality',
  distinct_ratio_drop: 'quality',
  extreme_value_ratio: 'quality',
  new_category_ratio: 'drift',
  category_cardinality: 'quality',
  rule_violation_ratio: 'within_list',
  flat_list_ratio: 'within_list',
  snapshot_missing: 'dataset',
  row_count_ratio: 'dataset',
  list_count_ratio: 'dataset',
  list_size_psi: 'dataset',
  duplicate_item_ratio: 'dataset',
  position_gap_ratio: 'dataset',
  null_list_id_ratio: 'dataset',
  null_item_id_ratio: 'dataset',
  null_label_ratio: 'dataset',
  singleton_list_ratio: 'dataset',
  label_positive_ratio: 'dataset',
  no_positive_list_ratio: 'dataset',
  position_rank_correlation: 'ranking',
  score_rank_correlation: 'ranking',
  mean_reciprocal_rank: 'outcome',
  ndcg: 'outcome',
  positive_position_psi: 'outcome',
};

/** Thresholds as they were applied to a finding. */
export type AppliedThresholds =
  /** `learned`: adaptive thresholds learned from the baseline's own day-to-day variation (evidence.learnedThreshold says how). */
  | { type: 'above'; warn: number; critical: number; learned?: boolean }
  | { type: 'band'; warnBelow: number; criticalBelow: number; warnAbove: number; criticalAbove: number }
  | { type: 'flag' };

/** One bin of a baseline-vs-current comparison, kept as evidence. */
export interface BinEvidence {
  /** Human-readable bin, e.g. "(0.25, 0.5]", "[0, 0]", "null", "category 'shoes'". */
  bin: string;
  baselineShare: number;
  currentShare: number;
  /** This bin's term of the PSI sum. */
  contribution: number;
}

export interface Finding {
  /**
   * The rows the finding is about (added in schema 1, optional for reports written before):
   * `"all"` (the whole day; absent means the same), `"top<k>"` (the first k positions of every
   * list), `"segment:<column>=<value>"` (one value of a segment column; the value cut to 64
   * characters, control characters replaced) or `"segment:<column>:other"` (the values without
   * a slice of their own, and nulls). Slice findings are on features only.
   */
  slice?: string;
  /** Feature name from the config, or null for a check on the whole day. */
  feature: string | null;
  check: CheckName;
  /** Within-list rule, for rule_violation_ratio. */
  rule: WithinListRule | null;
  /** The statistic (PSI, D, a ratio, 1/0 for flags). */
  value: number;
  /** The quantity the thresholds were applied to, when it differs from value (e.g. increase over baseline). */
  score: number;
  status: Status;
  thresholds: AppliedThresholds;
  /** One line for people, e.g. "PSI 0.31 (critical >= 0.25); 3 bins moved most". */
  summary: string;
  /** Everything an engineer needs to judge the finding; aggregates only. */
  evidence: {
    baseline?: number | null;
    current?: number | null;
    n?: number;
    m?: number;
    pValue?: number | null;
    adjustedPValue?: number | null;
    noiseFloor?: number | null;
    bins?: BinEvidence[];
    [key: string]: unknown;
  };
  /** Alert state after this run (consecutive-run hysteresis). */
  alert: {
    /** Consecutive runs, ending with this one, at warn or worse. */
    consecutiveRuns: number;
    /** Consecutive runs, ending with this one, at critical. */
    consecutiveCritical: number;
    alerting: boolean;
    /** Level that is alerting, or null. */
    level: Exclude<Status, 'ok'> | null;
    since: string | null;
    /**
     * Which rule made the finding alert: `consecutive_runs` (alerting.consecutiveRuns) or
     * `immediate` (far beyond its critical threshold, alerting.immediateMultiple, or a raised
     * flag). Absent while not alerting. Also in evidence.alertRule.
     */
    rule?: AlertRule;
  };
}

export type AlertRule = 'consecutive_runs' | 'immediate';

export interface Report {
  schemaVersion: typeof REPORT_SCHEMA_VERSION;
  runDate: string;
  status: Status;
  engine: 'stream' | 'pushdown';
  startedAt: string;
  finishedAt: string;
  configFingerprint: string;
  baseline: {
    window: { type: string; from: string; to: string };
    /** Days in the window that had rows. */
    days: string[];
    rows: number;
    lists: number;
    meanRowsPerDay: number;
    meanListsPerDay: number;
    /** Values kept per feature for KS and bin edges. */
    sampleSize: number;
    fingerprint: string;
    /**
     * Where the baseline's rows came from (optional; absent means a window): the snapshot
     * table (source.table) over baseline.window, or another relation (e.g. the training set)
     * over its dates, as configured in baseline.source.
     */
    source?: { type: 'window' } | { type: 'relation'; table: string; from: string | null; to: string | null };
  };
  current: {
    rows: number;
    lists: number;
    /** Rows evaluated after whole-list sampling (equals rows when not sampled). */
    evaluatedRows: number;
    evaluatedLists: number;
    sampled: boolean;
  };
  findings: Finding[];
  /**
   * The slices evaluated this day (optional; absent when none are configured), with their
   * rows and lists and the days of their own baseline.
   */
  slices?: SliceSummary[];
}

export interface SliceSummary {
  slice: string;
  kind: 'top' | 'segment';
  rows: number;
  lists: number;
  /** Baseline days that had rows of this slice. */
  baselineDays: number;
}

/** The slice of a finding: `"all"` when the field is absent (reports written before slices). */
export function sliceOf(f: Pick<Finding, 'slice'>): string {
  return f.slice ?? 'all';
}
