/**
 * Plumbline's Prometheus metrics: definitions, the cached values of the latest run, and
 * rendering in both exposition formats.
 *
 * Nothing here computes at scrape time. Report gauges are written when a run completes (or,
 * at start, from the latest report in the store) by `showReport`; health gauges by
 * `recordRun` / `restoreHealth` and the setters. A scrape only serialises what is cached, so
 * it cannot fail on a bad report and costs the same however big the day was.
 *
 * Every metric lives on this object's own `Registry`, never prom-client's global one. The
 * full list, with meanings, is in deploy/METRICS.md.
 */
import { Counter, Gauge, Registry, collectDefaultMetrics, openMetricsContentType, prometheusContentType, type OpenMetricsContentType } from 'prom-client';
import { STATUS_LEVEL, sliceOf, type Finding, type Report } from '../report/index.ts';
import type { RunStats } from '../store/index.ts';

/**
 * The monitor's own state: the store's run statistics (used to refill the health metrics at
 * start; the run counters continue from its totals) plus what this process sees now.
 */
export type MonitorHealth = Omit<RunStats, 'lastError' | 'interrupted'> & {
  /** Runs stopped by a shutdown. */
  interrupted?: number;
  sourceUp: boolean;
  storeUp: boolean;
  leader: boolean;
};

export interface RunOutcome {
  ok: boolean;
  /**
   * Stopped on purpose (shutdown): counted in plumbline_run_interruptions_total only; the
   * last-run gauges and the run and failure counters keep the newest verdict.
   */
  interrupted?: boolean;
  /** ISO timestamps. */
  startedAt: string;
  finishedAt: string;
}

export type ExpositionFormat = 'prometheus' | 'openmetrics';

export interface PlumblineMetricsOptions {
  /** A registry in the Prometheus text format (the default of `new Registry()`). Defaults to a new one. */
  registry?: Registry;
  /** Published as `plumbline_build_info{version}`. */
  version: string;
  /**
   * Register prom-client's default process metrics (`process_*`, `nodejs_*`, standard names
   * without our prefix) on the same registry. Default true; tests that pin the exposition
   * text turn it off because those values change from scrape to scrape.
   */
  defaultMetrics?: boolean;
}

type FeatureCheckLabels = 'feature' | 'check' | 'rule';
type SliceLabels = 'slice' | FeatureCheckLabels;
type Labels = Partial<Record<FeatureCheckLabels, string>>;

function epochSeconds(iso: string | null | undefined): number | null {
  if (iso === null || iso === undefined) return null;
  const ms = Date.parse(iso);
  return Number.isFinite(ms) ? ms / 1000 : null;
}

/** A snapshot date (YYYY-MM-DD) as the Unix time of its 00:00 UTC. */
export function snapshotDateSeconds(date: string): number | null {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(date)) return null;
  return epochSeconds(`${date}T00:00:00Z`);
}

/**
 * The gauges and counters of one Plumbline process.
 *
 * Conventions (Prometheus naming rules): prefix `plumbline_`, base units, `_ratio` for
 * fractions, `_seconds` / `_timestamp_seconds` for time, `_total` for counters, labels only
 * `feature`, `check`, `rule`, `slice` on the slice family (bounded by config `slices`) and
 * `version` on build_info. Metrics without a known value
 * expose no sample rather than a made-up 0 (e.g. no last success before the first one).
 */
export class PlumblineMetrics {
  readonly registry: Registry;

  readonly #featurePsi: Gauge<'feature'>;
  readonly #featureKs: Gauge<'feature'>;
  readonly #featureKsP: Gauge<'feature'>;
  readonly #featureNull: Gauge<'feature'>;
  readonly #featureNonfinite: Gauge<'feature'>;
  readonly #featureOutOfRange: Gauge<'feature'>;
  readonly #featureRuleViolation: Gauge<'feature' | 'rule'>;
  readonly #featureFlatList: Gauge<'feature'>;
  readonly #featureValue: Gauge<FeatureCheckLabels>;
  readonly #featureStatus: Gauge<FeatureCheckLabels>;
  readonly #featureAlerting: Gauge<FeatureCheckLabels>;
  readonly #sliceValue: Gauge<SliceLabels>;
  readonly #sliceStatus: Gauge<SliceLabels>;
  readonly #sliceAlerting: Gauge<SliceLabels>;
  readonly #datasetValue: Gauge<'check'>;
  readonly #datasetStatus: Gauge<'check'>;
  readonly #datasetAlerting: Gauge<'check'>;
  readonly #snapshotRows: Gauge;
  readonly #snapshotLists: Gauge;
  readonly #baselineRowsPerDay: Gauge;
  readonly #baselineListsPerDay: Gauge;
  readonly #listSizePsi: Gauge;
  readonly #snapshotDate: Gauge;
  readonly #runStatus: Gauge;
  readonly #lastSuccess: Gauge;
  readonly #lastRun: Gauge;
  readonly #lastDuration: Gauge;
  readonly #lastRunSuccess: Gauge;
  readonly #runs: Counter;
  readonly #failures: Counter;
  readonly #interruptions: Counter;
  readonly #unhandled: Counter;
  #unhandledCount = 0;
  #unhandledSource: (() => number) | undefined;
  #interruptionsCount = 0;
  /** What the two counters hold (prom-client reads them back only asynchronously). */
  #runsCount = 0;
  #failuresCount = 0;
  readonly #sourceUp: Gauge;
  readonly #storeUp: Gauge;
  readonly #leader: Gauge;

  /** The unlabelled gauges that hold report values; cleared together. */
  readonly #reportScalars: Gauge[];
  readonly #reportLabelled: Gauge<string>[];
  /** Newest snapshot date (seconds) this process saw evaluated with data; survives a report whose snapshot was missing. */
  #newestSnapshot: number | null = null;

  constructor(opts: PlumblineMetricsOptions) {
    const registry = opts.registry ?? new Registry();
    if (registry.contentType !== prometheusContentType) {
      // render() derives OpenMetrics per scrape; a registry switched to OpenMetrics would rename counters in place.
      throw new TypeError('PlumblineMetrics needs a registry in the Prometheus text format (new Registry())');
    }
    this.registry = registry;
    const registers = [registry];
    const gauge = <L extends string = never>(name: string, help: string, labelNames: readonly L[] = []): Gauge<L> =>
      new Gauge<L>({ name, help, labelNames, registers });
    const fc = ['feature', 'check', 'rule'] as const;

    // Per feature, from the latest run.
    this.#featurePsi = gauge('plumbline_feature_psi', 'Population stability index of the feature, current day against baseline, latest run.', ['feature']);
    this.#featureKs = gauge('plumbline_feature_ks_statistic', 'Two-sample Kolmogorov-Smirnov statistic D (largest CDF gap) of the feature, current day against baseline, latest run.', ['feature']);
    this.#featureKsP = gauge('plumbline_feature_ks_adjusted_p_value', 'Benjamini-Hochberg adjusted p-value of the Kolmogorov-Smirnov test of the feature, latest run.', ['feature']);
    this.#featureNull = gauge('plumbline_feature_null_ratio', 'Fraction of the day\'s rows where the feature is null, latest run.', ['feature']);
    this.#featureNonfinite = gauge('plumbline_feature_nonfinite_ratio', 'Fraction of the day\'s rows where the feature is NaN or infinite, latest run.', ['feature']);
    this.#featureOutOfRange = gauge('plumbline_feature_out_of_range_ratio', 'Fraction of the day\'s rows where the feature is outside its configured valid range, latest run.', ['feature']);
    this.#featureRuleViolation = gauge('plumbline_feature_rule_violation_ratio', 'Fraction of lists in which the feature breaks its within-list rule, latest run.', ['feature', 'rule']);
    this.#featureFlatList = gauge('plumbline_feature_flat_list_ratio', 'Fraction of lists in which the feature is constant although it should vary, latest run.', ['feature']);
    this.#featureValue = gauge('plumbline_feature_check_value', 'Value of each per-feature check of the latest run (the statistic of the finding).', fc);
    this.#featureStatus = gauge('plumbline_feature_check_status', 'Status of each per-feature check of the latest run: 0 ok, 1 warn, 2 critical.', fc);
    this.#featureAlerting = gauge('plumbline_feature_check_alerting', 'Alert state of each per-feature check after consecutive-run hysteresis: 0 not alerting, 1 alerting at warn, 2 alerting at critical.', fc);

    // Per slice (top-k positions, segment values; config `slices`), from the latest run.
    const sl = ['slice', 'feature', 'check', 'rule'] as const;
    this.#sliceValue = gauge('plumbline_slice_check_value', 'Value of each per-feature check of a slice of the day (top positions, a segment value) in the latest run.', sl);
    this.#sliceStatus = gauge('plumbline_slice_check_status', 'Status of each per-feature check of a slice of the day in the latest run: 0 ok, 1 warn, 2 critical.', sl);
    this.#sliceAlerting = gauge('plumbline_slice_check_alerting', 'Alert state of each per-feature check of a slice after consecutive-run hysteresis: 0 not alerting, 1 alerting at warn, 2 alerting at critical.', sl);

    // Whole day, from the latest run.
    this.#datasetValue = gauge('plumbline_dataset_check_value', 'Value of each dataset-level check of the latest run.', ['check']);
    this.#datasetStatus = gauge('plumbline_dataset_check_status', 'Status of each dataset-level check of the latest run: 0 ok, 1 warn, 2 critical.', ['check']);
    this.#datasetAlerting = gauge('plumbline_dataset_check_alerting', 'Alert state of each dataset-level check: 0 not alerting, 1 alerting at warn, 2 alerting at critical.', ['check']);
    this.#snapshotRows = gauge('plumbline_snapshot_rows', 'Rows in the snapshot evaluated by the latest run.');
    this.#snapshotLists = gauge('plumbline_snapshot_lists', 'Result lists in the snapshot evaluated by the latest run.');
    this.#baselineRowsPerDay = gauge('plumbline_baseline_rows_per_day', 'Mean rows per day over the baseline window of the latest run.');
    this.#baselineListsPerDay = gauge('plumbline_baseline_lists_per_day', 'Mean result lists per day over the baseline window of the latest run.');
    this.#listSizePsi = gauge('plumbline_list_size_psi', 'Population stability index of the list-size distribution, current day against baseline, latest run.');
    this.#snapshotDate = gauge('plumbline_snapshot_date_timestamp_seconds', 'Newest snapshot date evaluated with data, as the Unix time of 00:00 UTC of that date.');
    this.#runStatus = gauge('plumbline_run_status', 'Worst status of the latest run: 0 ok, 1 warn, 2 critical.');

    // The monitor's own health.
    this.#lastSuccess = gauge('plumbline_last_success_timestamp_seconds', 'Unix time the newest successful run completed.');
    this.#lastRun = gauge('plumbline_last_run_timestamp_seconds', 'Unix time the newest run completed, success or failure.');
    this.#lastDuration = gauge('plumbline_last_run_duration_seconds', 'Wall-clock duration of the newest run.');
    this.#lastRunSuccess = gauge('plumbline_last_run_success', 'Whether the newest run succeeded (1) or failed (0).');
    this.#runs = new Counter({ name: 'plumbline_runs_total', help: 'Runs completed, success or failure, over the store\'s history.', registers });
    this.#failures = new Counter({ name: 'plumbline_run_failures_total', help: 'Runs that failed, over the store\'s history.', registers });
    this.#interruptions = new Counter({ name: 'plumbline_run_interruptions_total', help: 'Runs stopped by a shutdown before they finished (not failures), over the store\'s history.', registers });
    const unhandled = (): number | undefined => this.#unhandledSource?.();
    this.#unhandled = new Counter({
      name: 'plumbline_unhandled_rejections_total',
      help: 'Promise rejections nothing handled in this process (a bug; each is logged).',
      registers,
      // Read at each scrape, so the count is current (reading a number cannot fail a scrape).
      collect: () => {
        const n = unhandled();
        if (n !== undefined) this.setUnhandledRejections(n);
      },
    });
    this.#sourceUp = gauge('plumbline_source_up', 'Whether the source database answered the latest probe (1) or not (0).');
    this.#storeUp = gauge('plumbline_store_up', 'Whether Plumbline\'s store answered the latest probe (1) or not (0).');
    this.#leader = gauge('plumbline_leader', 'Whether this replica holds the leader lock and runs the schedule (1) or only serves results (0).');
    const buildInfo = gauge('plumbline_build_info', 'Plumbline build information; always 1.', ['version']);
    buildInfo.set({ version: opts.version }, 1);

    this.#reportLabelled = [
      this.#featurePsi,
      this.#featureKs,
      this.#featureKsP,
      this.#featureNull,
      this.#featureNonfinite,
      this.#featureOutOfRange,
      this.#featureRuleViolation,
      this.#featureFlatList,
      this.#featureValue,
      this.#featureStatus,
      this.#featureAlerting,
      this.#sliceValue,
      this.#sliceStatus,
      this.#sliceAlerting,
      this.#datasetValue,
      this.#datasetStatus,
      this.#datasetAlerting,
    ] as Gauge<string>[];
    this.#reportScalars = [
      this.#snapshotRows,
      this.#snapshotLists,
      this.#baselineRowsPerDay,
      this.#baselineListsPerDay,
      this.#listSizePsi,
      this.#snapshotDate,
      this.#runStatus,
    ];
    for (const g of [...this.#reportScalars, this.#lastSuccess, this.#lastRun, this.#lastDuration, this.#lastRunSuccess, this.#sourceUp, this.#storeUp]) {
      clearScalar(g);
    }
    this.#leader.set(0);

    if (opts.defaultMetrics ?? true) {
      collectDefaultMetrics({ register: registry });
      // prom-client also publishes these sums as gauges named *_total, which the Prometheus naming
      // rules reserve for counters (promtool check metrics flags them); the per-type gauges
      // nodejs_active_handles / _requests / _resources carry the same information.
      for (const name of NONCOUNTER_TOTALS) registry.removeSingleMetric(name);
    }
  }

  /**
   * Publishes the latest report, replacing everything the previous one published: a feature
   * or check that is not in this report loses its series. `null` (no report stored yet)
   * clears all report metrics. Never throws on an odd report: non-numeric values are skipped.
   */
  showReport(report: Report | null): void {
    for (const g of this.#reportLabelled) g.reset();
    for (const g of this.#reportScalars) clearScalar(g);
    if (report === null) {
      this.#newestSnapshot = null;
      return;
    }
    let snapshotMissing = report.current.rows === 0;
    for (const f of report.findings) {
      const slice = sliceOf(f);
      if (slice !== 'all') {
        if (f.feature !== null) this.#showSliceFinding(f, slice, f.feature);
      } else if (f.feature === null) {
        this.#showDatasetFinding(f);
        if (f.check === 'snapshot_missing' && f.value !== 0) snapshotMissing = true;
      } else {
        this.#showFeatureFinding(f, f.feature);
      }
    }
    setIfNumber(this.#snapshotRows, {}, report.current.rows);
    setIfNumber(this.#snapshotLists, {}, report.current.lists);
    setIfNumber(this.#baselineRowsPerDay, {}, report.baseline.meanRowsPerDay);
    setIfNumber(this.#baselineListsPerDay, {}, report.baseline.meanListsPerDay);
    const level = STATUS_LEVEL[report.status];
    if (level !== undefined) this.#runStatus.set(level);

    // A run whose snapshot was missing did not evaluate a newer day: keep the newest one seen.
    const date = snapshotMissing ? null : snapshotDateSeconds(report.runDate);
    if (date !== null && (this.#newestSnapshot === null || date > this.#newestSnapshot)) this.#newestSnapshot = date;
    if (this.#newestSnapshot !== null) this.#snapshotDate.set(this.#newestSnapshot);
  }

  #showFeatureFinding(f: Finding, feature: string): void {
    const labels: Labels = { feature, check: f.check };
    if (f.rule !== null && f.rule !== undefined) labels.rule = f.rule;
    // The value is published even when NaN, so alert rules that join on it never lose an alert.
    setIfNumber(this.#featureValue, labels, f.value, true);
    setIfNumber(this.#featureStatus, labels, STATUS_LEVEL[f.status]);
    setIfNumber(this.#featureAlerting, labels, alertingLevel(f));
    const one = { feature };
    switch (f.check) {
      case 'psi':
        setIfNumber(this.#featurePsi, one, f.value);
        break;
      case 'ks':
        setIfNumber(this.#featureKs, one, f.value);
        setIfNumber(this.#featureKsP, one, f.evidence?.adjustedPValue);
        break;
      case 'null_ratio':
        setIfNumber(this.#featureNull, one, f.value);
        break;
      case 'nonfinite_ratio':
        setIfNumber(this.#featureNonfinite, one, f.value);
        break;
      case 'out_of_range_ratio':
        setIfNumber(this.#featureOutOfRange, one, f.value);
        break;
      case 'rule_violation_ratio':
        setIfNumber(this.#featureRuleViolation, f.rule ? { feature, rule: f.rule } : one, f.value);
        break;
      case 'flat_list_ratio':
        setIfNumber(this.#featureFlatList, one, f.value);
        break;
      default:
        break;
    }
  }

  #showSliceFinding(f: Finding, slice: string, feature: string): void {
    const labels: Partial<Record<SliceLabels, string>> = { slice, feature, check: f.check };
    if (f.rule !== null && f.rule !== undefined) labels.rule = f.rule;
    setIfNumber(this.#sliceValue, labels, f.value, true);
    setIfNumber(this.#sliceStatus, labels, STATUS_LEVEL[f.status]);
    setIfNumber(this.#sliceAlerting, labels, alertingLevel(f));
  }

  #showDatasetFinding(f: Finding): void {
    const labels = { check: f.check };
    setIfNumber(this.#datasetValue, labels, f.value, true);
    setIfNumber(this.#datasetStatus, labels, STATUS_LEVEL[f.status]);
    setIfNumber(this.#datasetAlerting, labels, alertingLevel(f));
    if (f.check === 'list_size_psi') setIfNumber(this.#listSizePsi, {}, f.value);
  }

  /** Counts a finished run (success or failure) and updates the last-run gauges. */
  recordRun(outcome: RunOutcome): void {
    if (outcome.interrupted === true) {
      this.#interruptions.inc();
      this.#interruptionsCount += 1;
      return;
    }
    this.#runs.inc();
    this.#runsCount += 1;
    if (!outcome.ok) {
      this.#failures.inc();
      this.#failuresCount += 1;
    }
    const started = epochSeconds(outcome.startedAt);
    const finished = epochSeconds(outcome.finishedAt) ?? Date.now() / 1000;
    this.#lastRun.set(finished);
    if (started !== null) this.#lastDuration.set(Math.max(0, finished - started));
    this.#lastRunSuccess.set(outcome.ok ? 1 : 0);
    if (outcome.ok) this.#lastSuccess.set(finished);
  }

  /**
   * Refills the health metrics from the store (at start, or later on a replica that does not
   * run the schedule). Counters only go up: they are raised to the store's totals (inc by the
   * difference), so a restart continues the series instead of resetting it, and calling this
   * again with the same or older totals changes nothing.
   */
  restoreHealth(h: MonitorHealth): void {
    const lastSuccess = epochSeconds(h.lastSuccessAt);
    if (lastSuccess !== null) this.#lastSuccess.set(lastSuccess);
    const lastRun = epochSeconds(h.lastRunAt);
    if (lastRun !== null) this.#lastRun.set(lastRun);
    if (typeof h.lastDurationSeconds === 'number' && Number.isFinite(h.lastDurationSeconds)) this.#lastDuration.set(h.lastDurationSeconds);
    if (h.lastOutcome !== null) this.#lastRunSuccess.set(h.lastOutcome === 'success' ? 1 : 0);
    const runs = h.successes + h.failures;
    if (Number.isFinite(runs) && runs > this.#runsCount) {
      this.#runs.inc(runs - this.#runsCount);
      this.#runsCount = runs;
    }
    if (Number.isFinite(h.failures) && h.failures > this.#failuresCount) {
      this.#failures.inc(h.failures - this.#failuresCount);
      this.#failuresCount = h.failures;
    }
    const interrupted = h.interrupted ?? 0;
    if (Number.isFinite(interrupted) && interrupted > this.#interruptionsCount) {
      this.#interruptions.inc(interrupted - this.#interruptionsCount);
      this.#interruptionsCount = interrupted;
    }
    this.setSourceUp(h.sourceUp);
    this.setStoreUp(h.storeUp);
    this.setLeader(h.leader);
  }

  /** Where plumbline_unhandled_rejections_total reads the process's count at each scrape (cli.ts's policy). */
  countUnhandledRejectionsFrom(count: () => number): void {
    this.#unhandledSource = count;
  }

  /** Raises the unhandled-rejection counter to the process's count. */
  setUnhandledRejections(count: number): void {
    if (Number.isFinite(count) && count > this.#unhandledCount) {
      this.#unhandled.inc(count - this.#unhandledCount);
      this.#unhandledCount = count;
    }
  }

  setSourceUp(up: boolean): void {
    this.#sourceUp.set(up ? 1 : 0);
  }

  setStoreUp(up: boolean): void {
    this.#storeUp.set(up ? 1 : 0);
  }

  setLeader(leader: boolean): void {
    this.#leader.set(leader ? 1 : 0);
  }

  /**
   * The exposition text and its Content-Type.
   *
   * OpenMetrics is rendered from a throw-away registry of thin views over this registry's
   * metrics: prom-client 15 writes OpenMetrics counter names by renaming the counter object
   * itself (dropping `_total`), which would leave later text-format scrapes with counters
   * that lost their `_total` suffix. The views take the rename instead.
   */
  async render(format: ExpositionFormat = 'prometheus'): Promise<{ contentType: string; body: string }> {
    if (format === 'prometheus') return { contentType: this.registry.contentType, body: await this.registry.metrics() };
    // prom-client's typings omit the constructor argument; setContentType is the typed way.
    const om = new Registry<OpenMetricsContentType>();
    om.setContentType(openMetricsContentType);
    for (const metric of this.registry.getMetricsAsArray()) {
      om.registerMetric(openMetricsView(metric) as unknown as Parameters<Registry<OpenMetricsContentType>['registerMetric']>[0]);
    }
    return { contentType: om.contentType, body: await om.metrics() };
  }
}

const NONCOUNTER_TOTALS = ['nodejs_active_handles_total', 'nodejs_active_requests_total', 'nodejs_active_resources_total'];

interface MetricLike {
  name: string;
  type: string;
  get(): Promise<{ name: string } & Record<string, unknown>>;
  getForPromString?: () => Promise<{ name: string } & Record<string, unknown>>;
}

/** A view of a metric whose `name` prom-client may rewrite for OpenMetrics without touching the metric. */
function openMetricsView(metric: unknown): MetricLike {
  const m = metric as MetricLike;
  const view: MetricLike = {
    name: m.name,
    type: m.type,
    async get() {
      const data = typeof m.getForPromString === 'function' ? await m.getForPromString() : await m.get();
      return { ...data, name: view.name };
    },
  };
  return view;
}

function alertingLevel(f: Finding): number {
  if (!f.alert?.alerting) return 0;
  return f.alert.level === 'critical' ? 2 : 1;
}

function setIfNumber<L extends string>(g: Gauge<L>, labels: Partial<Record<L, string>>, value: unknown, allowNaN = false): void {
  if (typeof value !== 'number') return;
  if (Number.isNaN(value) && !allowNaN) return;
  g.set(labels as Record<L, string>, value);
}

/** An unlabelled gauge without a sample (prom-client's reset() leaves a 0 in it). */
function clearScalar(g: Gauge): void {
  g.reset();
  g.remove({});
}

