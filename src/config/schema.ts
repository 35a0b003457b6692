/**
 * The configuration file, as one strict zod schema. Every type the rest of Plumbline
 * uses for configuration is inferred from here (`z.infer`), so the file format and the
 * code cannot drift apart. Defaults live here too, in one place, and are documented in
 * README.md ("Configuration reference") and in deploy/plumbline.example.yaml.
 */
import { validate as isValidCron } from 'node-cron';
import { z } from 'zod';

/**
 * A PostgreSQL identifier as written in the config: letters, digits and underscores,
 * not starting with a digit, at most 63 bytes (NAMEDATALEN - 1). Identifiers are also
 * checked against the catalogue at start and always quoted; this rule keeps config
 * files free of quoting puzzles and of anything that could smuggle SQL.
 */
export const IDENTIFIER_PATTERN = /^[A-Za-z_][A-Za-z0-9_]{0,62}$/;
const identifier = z
  .string()
  .regex(IDENTIFIER_PATTERN, 'must be a plain SQL identifier (letters, digits, _; not starting with a digit; at most 63 characters)');

/** `table` or `schema.table`. */
const qualifiedName = z
  .string()
  .regex(
    /^([A-Za-z_][A-Za-z0-9_]{0,62}\.)?[A-Za-z_][A-Za-z0-9_]{0,62}$/,
    'must be "table" or "schema.table" with plain SQL identifiers',
  );

const isoDate = z
  .string()
  .regex(/^\d{4}-\d{2}-\d{2}$/, 'must be a date written YYYY-MM-DD')
  .refine((s) => !Number.isNaN(Date.parse(`${s}T00:00:00Z`)) && new Date(`${s}T00:00:00Z`).toISOString().startsWith(s), 'is not a real calendar date');

const positiveInt = z.number().int().positive();

/**
 * Upper bounds of durations and counts, so that a typo fails at load time with its path
 * instead of breaking at run time. Node's timers take at most 2^31 - 1 ms (about 24.8
 * days; a longer delay fires after 1 ms, again and again), and PostgreSQL's
 * statement_timeout is an int of milliseconds (at most 2147483647).
 */
const INT32_MAX_MS = 2_147_483_647;
export const LIMITS = {
  statementTimeoutSeconds: Math.floor(INT32_MAX_MS / 1000),
  /** Rows of one day the stream engine holds in memory (about 40 GB at 50 features, see README "Sizing"). */
  maxRowsPerDay: 100_000_000,
  /** A timer Plumbline sets from the config: at most a day, far below Node's limit. */
  timerSeconds: 86_400,
  deadlineMinutes: 7 * 24 * 60,
  /** Daily runs: a year. */
  runs: 366,
} as const;
const countOfRuns = positiveInt.max(LIMITS.runs, `must be at most ${LIMITS.runs} (runs are daily: a year)`);

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}

/**
 * zod skips a refinement once any other part of the object has failed, so a file with a
 * wrong type somewhere would hide its duplicate names or misplaced rules until the next
 * try. The cross-field checks therefore run whenever the value is a mapping at all, and
 * one pass lists every problem.
 */
const everyProblem = { when: (payload: { value: unknown }): boolean => isRecord(payload.value) };

function isTimeZone(tz: string): boolean {
  try {
    new Intl.DateTimeFormat('en-US', { timeZone: tz });
    return true;
  } catch {
    return false;
  }
}
const ratio = z.number().min(0).max(1);

/** Status rises with the value: `value >= warn` is warn, `value >= critical` is critical. */
export const AboveThreshold = z
  .strictObject({ warn: z.number().nonnegative(), critical: z.number().nonnegative() })
  .refine((t) => t.warn <= t.critical, { message: 'warn must not exceed critical' });

/** Status when a ratio to the baseline leaves a band around 1. */
export const BandThreshold = z
  .strictObject({
    warnBelow: z.number().nonnegative(),
    criticalBelow: z.number().nonnegative(),
    warnAbove: z.number().positive(),
    criticalAbove: z.number().positive(),
  })
  .refine((t) => t.criticalBelow <= t.warnBelow && t.warnBelow <= 1 && 1 <= t.warnAbove && t.warnAbove <= t.criticalAbove, {
    message: 'expected criticalBelow <= warnBelow <= 1 <= warnAbove <= criticalAbove',
  });

export type AboveThreshold = z.infer<typeof AboveThreshold>;
export type BandThreshold = z.infer<typeof BandThreshold>;

/**
 * Defaults for every check. Drift thresholds: PSI 0.1 / 0.25 is the rule of thumb of
 * credit scoring (common practice, Siddiqi 2006); KS D 0.1 / 0.2 is our own choice of
 * effect size, gated by a Benjamini-Hochberg adjusted p-value below `ks.alpha`.
 * Ratio checks compare the current ratio with the baseline's: the thresholds apply to
 * the increase (current - baseline), so a feature that is always 30 % null is quiet.
 */
export const DEFAULT_THRESHOLDS = {
  psi: { warn: 0.1, critical: 0.25 },
  ks: { warn: 0.1, critical: 0.2 },
  null_ratio: { warn: 0.01, critical: 0.05 },
  nonfinite_ratio: { warn: 0.0001, critical: 0.001 },
  type_error_ratio: { warn: 0.0001, critical: 0.001 },
  out_of_range_ratio: { warn: 0.001, critical: 0.01 },
  // On the drop against the baseline days' median distinct count at the day's sample size.
  distinct_ratio_drop: { warn: 0.2, critical: 0.5 },
  // On the rise of the share of values beyond the baseline's extreme-value bounds.
  extreme_value_ratio: { warn: 0.001, critical: 0.01 },
  new_category_ratio: { warn: 0.01, critical: 0.05 },
  // Distinct categories of the day over the baseline's: our own choice (a tail that triples, ids leaking into a category column).
  category_cardinality: { warn: 3, critical: 10 },
  rule_violation_ratio: { warn: 0.01, critical: 0.05 },
  flat_list_ratio: { warn: 0.05, critical: 0.2 },
  list_size_psi: { warn: 0.1, critical: 0.25 },
  duplicate_item_ratio: { warn: 0.001, critical: 0.01 },
  position_gap_ratio: { warn: 0.001, critical: 0.01 },
  null_list_id_ratio: { warn: 0.0001, critical: 0.001 },
  null_item_id_ratio: { warn: 0.0001, critical: 0.001 },
  null_label_ratio: { warn: 0.01, critical: 0.05 },
  singleton_list_ratio: { warn: 0.05, critical: 0.2 },
  no_positive_list_ratio: { warn: 0.05, critical: 0.15 },
  row_count_ratio: { warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 3 },
  list_count_ratio: { warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 3 },
  label_positive_ratio: { warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 2 },
  position_rank_correlation: { warn: 0.1, critical: 0.2 },
  score_rank_correlation: { warn: 0.1, critical: 0.2 },
  mean_reciprocal_rank: { warn: 0.03, critical: 0.06 },
  ndcg: { warn: 0.03, critical: 0.06 },
  positive_position_psi: { warn: 0.02, critical: 0.05 },
} as const;

/**
 * Adaptive drift thresholds (checks/adaptive.ts): for each feature, PSI and KS D of every
 * baseline day against the rest of the window (leave one out); warn at `margin` times the
 * `quantile` of those values, never below `floor`; critical at `criticalMultiple` times warn,
 * never below `floor` times `criticalMultiple`. Off by default: the fixed thresholds apply.
 */
const AdaptiveSchema = z
  .strictObject({
    enabled: z.boolean().default(false),
    /** 1: the largest leave-one-out value (a window of 28 days estimates a 95 % quantile poorly). */
    quantile: z.number().gt(0).max(1).default(1),
    margin: z.number().min(1).default(1.5),
    criticalMultiple: z.number().min(1).default(2),
    /** Fewest leave-one-out days needed to learn a threshold; with fewer, the fixed thresholds apply. */
    minDays: positiveInt.min(3).default(7),
    floor: z
      .strictObject({
        psi: z.number().positive().default(0.02),
        ks: z.number().positive().default(0.03),
      })
      .prefault({}),
  })
  .prefault({});

const ThresholdsSchema = z
  .strictObject({
    psi: AboveThreshold.default(DEFAULT_THRESHOLDS.psi),
    ks: AboveThreshold.default(DEFAULT_THRESHOLDS.ks),
    /** Benjamini-Hochberg adjusted p-value a KS finding must fall below to count at all. */
    ksAlpha: z.number().gt(0).lt(1).default(0.01),
    /**
     * PSI must also exceed this quantile of its no-drift distribution
     * ((1/n + 1/m) * chi-square with B-1 degrees of freedom), so small samples do not page.
     */
    psiNoiseQuantile: z.number().gt(0).lt(1).default(0.999),
    null_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.null_ratio),
    nonfinite_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.nonfinite_ratio),
    type_error_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.type_error_ratio),
    out_of_range_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.out_of_range_ratio),
    distinct_ratio_drop: AboveThreshold.default(DEFAULT_THRESHOLDS.distinct_ratio_drop),
    extreme_value_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.extreme_value_ratio),
    /**
     * k of the extreme-value bounds: a value is extreme below the baseline's 0.1 % quantile
     * minus k IQR or above its 99.9 % quantile plus k IQR.
     */
    extremeIqrMultiple: z.number().nonnegative().default(3),
    adaptive: AdaptiveSchema,
    new_category_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.new_category_ratio),
    category_cardinality: AboveThreshold.default(DEFAULT_THRESHOLDS.category_cardinality),
    rule_violation_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.rule_violation_ratio),
    flat_list_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.flat_list_ratio),
    list_size_psi: AboveThreshold.default(DEFAULT_THRESHOLDS.list_size_psi),
    duplicate_item_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.duplicate_item_ratio),
    position_gap_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.position_gap_ratio),
    null_list_id_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.null_list_id_ratio),
    null_item_id_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.null_item_id_ratio),
    null_label_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.null_label_ratio),
    singleton_list_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.singleton_list_ratio),
    no_positive_list_ratio: AboveThreshold.default(DEFAULT_THRESHOLDS.no_positive_list_ratio),
    row_count_ratio: BandThreshold.default(DEFAULT_THRESHOLDS.row_count_ratio),
    list_count_ratio: BandThreshold.default(DEFAULT_THRESHOLDS.list_count_ratio),
    label_positive_ratio: BandThreshold.default(DEFAULT_THRESHOLDS.label_positive_ratio),
    /** Change of the mean per-list Spearman rho (feature vs position) from the baseline days' mean. */
    position_rank_correlation: AboveThreshold.default(DEFAULT_THRESHOLDS.position_rank_correlation),
    /** Change of the mean per-list Spearman rho (feature vs model score) from the baseline days' mean. */
    score_rank_correlation: AboveThreshold.default(DEFAULT_THRESHOLDS.score_rank_correlation),
    /** Change of the mean reciprocal rank of the first positive from the baseline days' mean. */
    mean_reciprocal_rank: AboveThreshold.default(DEFAULT_THRESHOLDS.mean_reciprocal_rank),
    /** Change of the mean NDCG@k (outcome.ndcgAt) from the baseline days' mean. */
    ndcg: AboveThreshold.default(DEFAULT_THRESHOLDS.ndcg),
    /** PSI of positive labels over served-rank buckets (the click curve). */
    positive_position_psi: AboveThreshold.default(DEFAULT_THRESHOLDS.positive_position_psi),
    /**
     * A change of a per-day mean of per-list values (rank correlations, MRR, NDCG) must also
     * exceed this many standard deviations of its no-change noise (lists and day-to-day spread).
     */
    rankingNoiseZ: z.number().positive().default(3),
  })
  .prefault({});

export type Thresholds = z.infer<typeof ThresholdsSchema>;

/** Per-feature overrides: any subset of the feature-level thresholds. */
const FeatureThresholdOverrides = z
  .strictObject({
    psi: AboveThreshold.optional(),
    ks: AboveThreshold.optional(),
    null_ratio: AboveThreshold.optional(),
    nonfinite_ratio: AboveThreshold.optional(),
    type_error_ratio: AboveThreshold.optional(),
    out_of_range_ratio: AboveThreshold.optional(),
    distinct_ratio_drop: AboveThreshold.optional(),
    extreme_value_ratio: AboveThreshold.optional(),
    new_category_ratio: AboveThreshold.optional(),
    category_cardinality: AboveThreshold.optional(),
    rule_violation_ratio: AboveThreshold.optional(),
    flat_list_ratio: AboveThreshold.optional(),
    position_rank_correlation: AboveThreshold.optional(),
    score_rank_correlation: AboveThreshold.optional(),
  })
  .optional();

export const WITHIN_LIST_RULES = ['minmax', 'zscore', 'rank', 'sum_to_one'] as const;
export type WithinListRule = (typeof WITHIN_LIST_RULES)[number];

export const FeatureSchema = z
  .strictObject({
    /** The name shown in reports and used as the `feature` label. */
    name: z.string().regex(/^[A-Za-z_][A-Za-z0-9_.-]{0,62}$/, 'must be letters, digits, _ . - (at most 63), starting with a letter or _'),
    /** Column of the source table (wide layout). Defaults to `name` when neither column nor key is given. */
    column: identifier.optional(),
    /** Key inside the jsonb column `source.featuresColumn` (jsonb layout). */
    key: z
      .string()
      .regex(/^[A-Za-z0-9_.:\- ]{1,200}$/, 'must be letters, digits, space, _ . : - (at most 200 characters)')
      .optional(),
    kind: z.enum(['numeric', 'binary', 'categorical']).default('numeric'),
    /** `item`: describes the item; `list`: describes the whole list (constant inside a list by design). */
    scope: z.enum(['item', 'list']).default('item'),
    range: z
      .strictObject({ min: z.number().optional(), max: z.number().optional() })
      .refine((r) => r.min === undefined || r.max === undefined || r.min <= r.max, { message: 'min must not exceed max' })
      .optional(),
    nullable: z.boolean().default(true),
    withinList: z
      .strictObject({
        rule: z.enum(WITHIN_LIST_RULES),
        /** Absolute tolerance on the rule's quantities (e.g. |min - 0| <= tolerance for minmax). */
        tolerance: z.number().nonnegative().max(1e6).default(1e-6),
      })
      .optional(),
    thresholds: FeatureThresholdOverrides,
  })
  .superRefine(
    (parsed, ctx) => {
      // Runs even when another setting of this feature is broken (see `everyProblem`), so
      // `parsed` may hold raw input: every field is checked for its type before use.
      const f = parsed as Record<string, unknown>;
      const name = typeof f['name'] === 'string' ? f['name'] : undefined;
      if (f['column'] === undefined && f['key'] === undefined && name !== undefined && !IDENTIFIER_PATTERN.test(name)) {
        ctx.addIssue({ code: 'custom', message: 'this name is not a plain SQL identifier: give the column (or key) explicitly', path: ['column'] });
      }
      if (f['column'] !== undefined && f['key'] !== undefined) {
        ctx.addIssue({ code: 'custom', message: 'give either column or key, not both', path: ['key'] });
      }
      if (f['scope'] === 'list' && f['withinList'] !== undefined) {
        ctx.addIssue({ code: 'custom', message: 'a list-level feature is constant inside a list; a within-list rule cannot apply', path: ['withinList'] });
      }
      const nonNumeric = f['kind'] === 'binary' || f['kind'] === 'categorical';
      if (nonNumeric && f['withinList'] !== undefined) {
        ctx.addIssue({ code: 'custom', message: 'within-list rules apply to numeric features only', path: ['withinList'] });
      }
      if (nonNumeric && f['range'] !== undefined) {
        ctx.addIssue({ code: 'custom', message: 'a valid range applies to numeric features only', path: ['range'] });
      }
    },
    everyProblem,
  );

export type FeatureConfig = z.infer<typeof FeatureSchema>;

const BaselineWindow = z.discriminatedUnion('type', [
  z.strictObject({ type: z.literal('trailing'), days: positiveInt.max(366) }),
  z.strictObject({ type: z.literal('same_weekday'), weeks: positiveInt.max(52) }),
  z.strictObject({ type: z.literal('fixed'), from: isoDate, to: isoDate }).refine((w) => w.from <= w.to, { message: 'from must not be after to', path: ['to'] }),
]);
export type BaselineWindow = z.infer<typeof BaselineWindow>;

/** A list-level categorical column whose values are checked one by one. */
const SegmentSchema = z.strictObject({
  column: identifier,
  /** The most frequent values of a day that get a slice of their own; the rest are pooled into one `other` slice. */
  maxValues: positiveInt.max(50).default(10),
  /** Fewest rows a value (or the pooled rest) needs on a day to be checked. */
  minRows: positiveInt.default(1000),
});

/**
 * Slices: row subsets of each day checked like the whole day (the top positions of every
 * list, and the values of segment columns). Off unless listed.
 */
const SlicesSchema = z
  .strictObject({
    /** For each k, the rows at the first k positions of every list form a slice `top<k>`. */
    topK: z
      .array(positiveInt.max(1000))
      .max(4)
      .refine((ks) => new Set(ks).size === ks.length, 'lists a k twice')
      .default([]),
    /** The position of the first item of a list in source.columns.position: 1 (default) or 0. */
    firstPosition: z.union([z.literal(0), z.literal(1)]).default(1),
    segments: z
      .array(SegmentSchema)
      .max(4)
      .refine((ss) => new Set(ss.map((s) => s.column)).size === ss.length, 'names a column twice')
      .default([]),
    /** Values kept per feature and slice in a slice's baseline (KS and bin edges). */
    sampleSize: positiveInt.min(1000).max(1_000_000).default(10_000),
    /**
     * About this many of a slice's finite values a day per feature are sorted for its KS, PSI
     * and distinct-value checks (a sample by row, always with the smallest and largest value;
     * PSI's bin counts are scaled up to all finite values); quality counts, means and
     * within-list checks use every row.
     */
    valuesPerDay: positiveInt.min(1000).max(5_000_000).default(50_000),
  })
  .prefault({});

export type SlicesConfig = z.infer<typeof SlicesSchema>;

export const ConfigSchema = z
  .strictObject({
    source: z.strictObject({
      /** Table or view holding one row per ranked item. */
      table: qualifiedName,
      columns: z
        .strictObject({
          snapshotDate: identifier.default('snapshot_date'),
          listId: identifier.default('list_id'),
          itemId: identifier.default('item_id'),
          position: identifier.default('position'),
          label: identifier.optional(),
          score: identifier.optional(),
        })
        .prefault({}),
      /** A jsonb column holding features as keys; features then name a `key`. */
      featuresColumn: identifier.optional(),
      /** `stream`: rows come to Plumbline (exact KS). `pushdown`: PostgreSQL aggregates. */
      engine: z.enum(['stream', 'pushdown']).default('stream'),
      /**
       * Pushdown engine: where the within-list association comes from. `sample`: the per-list
       * correlations of the whole-list sample the engine reads anyway (exact per list; the day's
       * mean over the sampled lists, whose standard error enters the noise). `sql`: every list,
       * in SQL with window functions (exact; costs about one sort of rows x features).
       */
      pushdownAssociation: z.enum(['sample', 'sql']).default('sample'),
      /** Keep at most about this many rows of a day, as whole lists chosen by a hash of the list id. */
      maxRowsPerDay: positiveInt.max(LIMITS.maxRowsPerDay, `must be at most ${LIMITS.maxRowsPerDay} rows (the stream engine holds the day in memory)`).default(2_000_000),
      /** Server-side statement_timeout of source reads; PostgreSQL takes at most 2147483647 ms. */
      statementTimeoutSeconds: positiveInt
        .max(LIMITS.statementTimeoutSeconds, `must be at most ${LIMITS.statementTimeoutSeconds} seconds (PostgreSQL's statement_timeout limit, 2147483647 ms)`)
        .default(900),
      /** Categorical features keep their most frequent categories up to this many a day (and in a baseline), the rest as one bucket. */
      maxCategories: positiveInt.max(100_000).default(1000),
      /** Category values are cut to this many characters (a 10 kB value must not cost 10 kB per distinct value). */
      maxCategoryLength: positiveInt.max(10_000).default(200),
    }),
    features: z.array(FeatureSchema).min(1, 'declare at least one feature'),
    baseline: z
      .strictObject({
        window: BaselineWindow.default({ type: 'trailing', days: 28 }),
        /** Values kept per feature (a deterministic sample) for KS and bin edges. */
        sampleSize: positiveInt.min(1000).max(5_000_000).default(200_000),
        /** Number of quantile bins for PSI (point masses and nulls get bins of their own). */
        bins: positiveInt.min(2).max(100).default(10),
        /** Fewest baseline days with data before drift checks run. */
        minDays: countOfRuns.default(1),
        /**
         * Another relation as the baseline, e.g. the training set the model was fitted on (same
         * columns as source.table); its dates from..to (all when omitted) replace the window.
         */
        source: z
          .strictObject({ table: qualifiedName, from: isoDate.optional(), to: isoDate.optional() })
          .refine((s) => s.from === undefined || s.to === undefined || s.from <= s.to, { message: 'from must not be after to', path: ['to'] })
          .optional(),
      })
      .prefault({}),
    slices: SlicesSchema,
    thresholds: ThresholdsSchema,
    alerting: z
      .strictObject({
        /** Consecutive runs at or above a level before a finding alerts, by kind of check. */
        consecutiveRuns: z
          .strictObject({
            drift: countOfRuns.default(2),
            quality: countOfRuns.default(1),
            within_list: countOfRuns.default(1),
            dataset: countOfRuns.default(1),
            /** position_rank_correlation, score_rank_correlation: a pipeline break shows at once. */
            ranking: countOfRuns.default(1),
            /** mean_reciprocal_rank, ndcg, positive_position_psi: outcomes move with traffic and label noise. */
            outcome: countOfRuns.default(2),
          })
          .prefault({}),
        /**
         * A critical finding this many times beyond its critical threshold (for ratio bands:
         * above criticalAbove times it, or below criticalBelow divided by it), or a raised flag,
         * alerts on its first run, whatever consecutiveRuns says. null: never.
         */
        immediateMultiple: z.number().min(1).nullable().default(3),
        /** Optional Alertmanager base URL (alerts are POSTed to /api/v2/alerts). */
        alertmanagerUrl: z.url().optional(),
      })
      .prefault({}),
    schedule: z
      .strictObject({
        /** node-cron expression (5 or 6 fields). Default 06:30 every day. */
        cron: z.string().refine((c) => isValidCron(c), 'is not a valid cron expression (5 or 6 fields)').default('30 6 * * *'),
        /** IANA time zone; UTC avoids daylight-saving gaps in which cron skips a run. */
        timezone: z.string().refine(isTimeZone, 'is not an IANA time zone (e.g. UTC, Europe/Berlin)').default('UTC'),
        /** The run at day D evaluates the snapshot of D - lagDays. */
        lagDays: z.number().int().min(0).max(30).default(1),
        /** After an outage, run at most this many missed days, oldest first. */
        catchUpMaxDays: z.number().int().min(0).max(366).default(7),
        /**
         * Wait before retrying a failed run (`serve`), doubled after each further failure, at
         * most one hour. Failures that are not connection trouble (bad config, a bug) wait 20 times as long.
         */
        retryBaseSeconds: z.number().min(1, 'must be at least 1 second').max(3600, 'must be at most 3600 seconds (an hour)').default(15),
        /** `serve`: a run still going after this long is aborted, recorded as failed and retried (a hung connection must not block later days). */
        runTimeoutMinutes: z.number().positive().max(24 * 60).default(120),
        /** `serve`: on SIGTERM a run in progress gets this long to finish; then its statements are cancelled and it is recorded as interrupted. */
        shutdownGraceSeconds: z.number().int().min(0).max(3600).default(20),
        readiness: z
          .strictObject({
            /** The day counts as ready once it has this fraction of the baseline's mean daily rows. */
            minRowFraction: ratio.default(0.5),
            /** Optional marker table: the day is ready once a row with that date exists. */
            markerTable: qualifiedName.optional(),
            markerDateColumn: identifier.default('snapshot_date'),
            retryEverySeconds: positiveInt.max(LIMITS.timerSeconds, `must be at most ${LIMITS.timerSeconds} seconds (a day)`).default(300),
            /** After this long past the scheduled time, a missing day becomes a critical finding. */
            deadlineMinutes: positiveInt.max(LIMITS.deadlineMinutes, `must be at most ${LIMITS.deadlineMinutes} minutes (a week)`).default(360),
          })
          .prefault({}),
      })
      .prefault({}),
    outcome: z
      .strictObject({
        /** The k of NDCG@k over labels in served order. */
        ndcgAt: positiveInt.max(1000).default(10),
        /**
         * Labels (clicks, purchases) arrive late: the run for day D evaluates the outcome
         * checks for D - labelLagDays, re-reading that day and its baseline days' labels from
         * the source at run time. 0: outcomes of the evaluated day itself, from its profile.
         */
        labelLagDays: z.number().int().min(0).max(60).default(0),
      })
      .prefault({}),
    http: z
      .strictObject({
        host: z.string().default('127.0.0.1'),
        port: z.number().int().min(0).max(65535).default(9467),
        /** Serve the status page at / (false: only metrics, health and the API). */
        statusPage: z.boolean().default(true),
        /**
         * Host header values (name or name:port) the server answers; others get 421, so a
         * DNS-rebinding page cannot reach it. Default: the bind address, localhost and
         * 127.0.0.1, each with the port.
         */
        allowedHosts: z.array(z.string().min(1).regex(/^[A-Za-z0-9.\-\[\]:]+$/, 'must be a host name or address, optionally with :port')).min(1).optional(),
        /** Every replica reloads the latest stored run at least this often (besides the store's notifications). */
        refreshSeconds: positiveInt.max(86_400).default(60),
        /** POST /api/v1/runs: off unless enabled; then it needs the bearer token PLUMBLINE_RUN_TOKEN (or PLUMBLINE_RUN_TOKEN_FILE). */
        manualRuns: z.strictObject({ enabled: z.boolean().default(false) }).prefault({}),
      })
      .prefault({}),
    store: z
      .strictObject({
        schema: identifier.default('plumbline'),
        /** What the leader deletes after each successful run, so the store stays bounded (src/store/retention.ts). */
        retention: z
          .strictObject({
            /** false: nothing is ever deleted. */
            enabled: z.boolean().default(true),
            /** Reports, runs and findings are kept this many days (the two newest evaluated dates always). */
            reportDays: positiveInt.max(36_600).default(400),
            /** Day profiles are kept as long as a baseline window needs them, and at least this many days. */
            dayProfileMinDays: positiveInt.max(36_600).default(35),
            /** Baselines used by this many newest evaluated dates (and this many newest saved) are kept. */
            baselinesKept: positiveInt.max(1000).default(3),
          })
          .prefault({}),
      })
      .prefault({}),
  })
  .superRefine(
    (parsed, ctx) => {
      // Runs even when other settings are broken (see `everyProblem`): raw input is possible.
      const c = parsed as unknown as Record<string, unknown>;
      const source = isRecord(c['source']) ? c['source'] : undefined;
      const features = Array.isArray(c['features']) ? (c['features'] as unknown[]) : [];
      const seen = new Map<string, number>();
      features.forEach((f, i) => {
        if (!isRecord(f)) return;
        const name = f['name'];
        if (typeof name === 'string') {
          const prev = seen.get(name);
          if (prev !== undefined) ctx.addIssue({ code: 'custom', message: `duplicate feature name (also features[${prev}])`, path: ['features', i, 'name'] });
          else seen.set(name, i);
        }
        if (f['key'] !== undefined && source !== undefined && source['featuresColumn'] === undefined) {
          ctx.addIssue({ code: 'custom', message: 'a key needs source.featuresColumn (the jsonb column)', path: ['features', i, 'key'] });
        }
      });
    },
    everyProblem,
  )
  .transform(withModelScore);

/**
 * The model score, when `source.columns.score` names it, is watched like any numeric
 * feature (named after its column): the ranker's own output drifting is the most direct
 * symptom of a broken input. A feature that already reads that column wins.
 */
function withModelScore<C extends { source: { columns: { score?: string | undefined }; featuresColumn?: string | undefined }; features: FeatureConfig[] }>(c: C): C {
  const score = c.source.columns.score;
  if (score === undefined) return c;
  const taken = c.features.some((f) => f.name === score || (f.key === undefined && (f.column ?? f.name) === score));
  if (taken) return c;
  const feature: FeatureConfig = { name: score, column: score, kind: 'numeric', scope: 'item', nullable: true };
  return { ...c, features: [...c.features, feature] };
}

export type Config = z.infer<typeof ConfigSchema>;
/** What the YAML file may say before defaults are applied. */
export type ConfigInput = z.input<typeof ConfigSchema>;

/** Where a feature's values come from, after defaults: a column or a jsonb key. */
export function featureSource(f: FeatureConfig, featuresColumn: string | undefined): { column: string } | { jsonbColumn: string; key: string } {
  if (f.key !== undefined && featuresColumn !== undefined) return { jsonbColumn: featuresColumn, key: f.key };
  return { column: f.column ?? f.name };
}
