/**
 * PlumblineMetrics: the exact exposition text for a fixed report (the reviewed output, pinned
 * the way prom-client's own tests pin theirs), vanished series, restored counters, and scrapes
 * that cannot fail. The report is built by hand in fixtures.ts; its numbers are invented and
 * only republished here.
 */
import { readFileSync } from 'node:fs';
import { Registry, register as globalRegistry } from 'prom-client';
import { describe, expect, it } from 'vitest';
import { PlumblineMetrics, snapshotDateSeconds, type MonitorHealth } from '../../../src/exporter/index.ts';
import type { Report } from '../../../src/report/contract.ts';
import { finding, sampleReport } from './fixtures.ts';
import { alerting } from '../../support/report-fixtures.ts';

const HEALTH: MonitorHealth = {
  lastSuccessAt: '2031-05-14T06:31:00Z',
  lastRunAt: '2031-05-14T06:31:00Z',
  lastDurationSeconds: 60,
  lastOutcome: 'success',
  successes: 10,
  failures: 2,
  interrupted: 1,
  sourceUp: true,
  storeUp: true,
  leader: true,
};

function quiet(): PlumblineMetrics {
  return new PlumblineMetrics({ version: '0.1.0', defaultMetrics: false });
}

/** Sample lines (no comments) of an exposition body. */
function samples(body: string): string[] {
  return body.split('\n').filter((l) => l !== '' && !l.startsWith('#'));
}

/** The value of the one sample whose name and labels are exactly `series`, or undefined. */
function sample(body: string, series: string): number | undefined {
  const line = samples(body).find((l) => l.startsWith(`${series} `));
  return line === undefined ? undefined : Number(line.slice(series.length + 1));
}

// Reviewed by hand against the report in fixtures.ts: every finding appears once in the
// check_value/status/alerting families, the rule label only on rule_violation_ratio, the
// dedicated per-feature gauges only for their checks, timestamps are Unix seconds
// (2031-05-14T00:00Z = 1936483200 and 2031-05-15T06:31:12.5Z = 1936593072.5, from
// python3: calendar.timegm(datetime.date(2031, 5, 14).timetuple())), and the counters
// continue from the restored totals (10 + 2 runs, then one more).
const EXPECTED = `# HELP plumbline_feature_psi Population stability index of the feature, current day against baseline, latest run.
# TYPE plumbline_feature_psi gauge
plumbline_feature_psi{feature="price_rel"} 0.31
plumbline_feature_psi{feature="seller_score"} 0.02

# HELP plumbline_feature_ks_statistic Two-sample Kolmogorov-Smirnov statistic D (largest CDF gap) of the feature, current day against baseline, latest run.
# TYPE plumbline_feature_ks_statistic gauge
plumbline_feature_ks_statistic{feature="price_rel"} 0.22

# HELP plumbline_feature_ks_adjusted_p_value Benjamini-Hochberg adjusted p-value of the Kolmogorov-Smirnov test of the feature, latest run.
# TYPE plumbline_feature_ks_adjusted_p_value gauge
plumbline_feature_ks_adjusted_p_value{feature="price_rel"} 3e-15

# HELP plumbline_feature_null_ratio Fraction of the day's rows where the feature is null, latest run.
# TYPE plumbline_feature_null_ratio gauge
plumbline_feature_null_ratio{feature="price_rel"} 0.002

# HELP plumbline_feature_nonfinite_ratio Fraction of the day's rows where the feature is NaN or infinite, latest run.
# TYPE plumbline_feature_nonfinite_ratio gauge
plumbline_feature_nonfinite_ratio{feature="seller_score"} 0

# HELP plumbline_feature_out_of_range_ratio Fraction of the day's rows where the feature is outside its configured valid range, latest run.
# TYPE plumbline_feature_out_of_range_ratio gauge
plumbline_feature_out_of_range_ratio{feature="seller_score"} 0.0005

# HELP plumbline_feature_rule_violation_ratio Fraction of lists in which the feature breaks its within-list rule, latest run.
# TYPE plumbline_feature_rule_violation_ratio gauge
plumbline_feature_rule_violation_ratio{feature="price_rel",rule="zscore"} 0.08

# HELP plumbline_feature_flat_list_ratio Fraction of lists in which the feature is constant although it should vary, latest run.
# TYPE plumbline_feature_flat_list_ratio gauge
plumbline_feature_flat_list_ratio{feature="seller_score"} 0.07

# HELP plumbline_feature_check_value Value of each per-feature check of the latest run (the statistic of the finding).
# TYPE plumbline_feature_check_value gauge
plumbline_feature_check_value{feature="price_rel",check="psi"} 0.31
plumbline_feature_check_value{feature="price_rel",check="ks"} 0.22
plumbline_feature_check_value{feature="price_rel",check="null_ratio"} 0.002
plumbline_feature_check_value{feature="price_rel",check="rule_violation_ratio",rule="zscore"} 0.08
plumbline_feature_check_value{feature="seller_score",check="psi"} 0.02
plumbline_feature_check_value{feature="seller_score",check="nonfinite_ratio"} 0
plumbline_feature_check_value{feature="seller_score",check="out_of_range_ratio"} 0.0005
plumbline_feature_check_value{feature="seller_score",check="flat_list_ratio"} 0.07
plumbline_feature_check_value{feature="category",check="new_category_ratio"} 0.004

# HELP plumbline_feature_check_status Status of each per-feature check of the latest run: 0 ok, 1 warn, 2 critical.
# TYPE plumbline_feature_check_status gauge
plumbline_feature_check_status{feature="price_rel",check="psi"} 2
plumbline_feature_check_status{feature="price_rel",check="ks"} 2
plumbline_feature_check_status{feature="price_rel",check="null_ratio"} 0
plumbline_feature_check_status{feature="price_rel",check="rule_violation_ratio",rule="zscore"} 2
plumbline_feature_check_status{feature="seller_score",check="psi"} 0
plumbline_feature_check_status{feature="seller_score",check="nonfinite_ratio"} 0
plumbline_feature_check_status{feature="seller_score",check="out_of_range_ratio"} 0
plumbline_feature_check_status{feature="seller_score",check="flat_list_ratio"} 1
plumbline_feature_check_status{feature="category",check="new_category_ratio"} 0

# HELP plumbline_feature_check_alerting Alert state of each per-feature check after consecutive-run hysteresis: 0 not alerting, 1 alerting at warn, 2 alerting at critical.
# TYPE plumbline_feature_check_alerting gauge
plumbline_feature_check_alerting{feature="price_rel",check="psi"} 2
plumbline_feature_check_alerting{feature="price_rel",check="ks"} 2
plumbline_feature_check_alerting{feature="price_rel",check="null_ratio"} 0
plumbline_feature_check_alerting{feature="price_rel",check="rule_violation_ratio",rule="zscore"} 2
plumbline_feature_check_alerting{feature="seller_score",check="psi"} 0
plumbline_feature_check_alerting{feature="seller_score",check="nonfinite_ratio"} 0
plumbline_feature_check_alerting{feature="seller_score",check="out_of_range_ratio"} 0
plumbline_feature_check_alerting{feature="seller_score",check="flat_list_ratio"} 1
plumbline_feature_check_alerting{feature="category",check="new_category_ratio"} 0

# HELP plumbline_slice_check_value Value of each per-feature check of a slice of the day (top positions, a segment value) in the latest run.
# TYPE plumbline_slice_check_value gauge

# HELP plumbline_slice_check_status Status of each per-feature check of a slice of the day in the latest run: 0 ok, 1 warn, 2 critical.
# TYPE plumbline_slice_check_status gauge

# HELP plumbline_slice_check_alerting Alert state of each per-feature check of a slice after consecutive-run hysteresis: 0 not alerting, 1 alerting at warn, 2 alerting at critical.
# TYPE plumbline_slice_check_alerting gauge

# HELP plumbline_dataset_check_value Value of each dataset-level check of the latest run.
# TYPE plumbline_dataset_check_value gauge
plumbline_dataset_check_value{check="snapshot_missing"} 0
plumbline_dataset_check_value{check="row_count_ratio"} 0.98
plumbline_dataset_check_value{check="list_size_psi"} 0.04
plumbline_dataset_check_value{check="duplicate_item_ratio"} 0.02

# HELP plumbline_dataset_check_status Status of each dataset-level check of the latest run: 0 ok, 1 warn, 2 critical.
# TYPE plumbline_dataset_check_status gauge
plumbline_dataset_check_status{check="snapshot_missing"} 0
plumbline_dataset_check_status{check="row_count_ratio"} 0
plumbline_dataset_check_status{check="list_size_psi"} 0
plumbline_dataset_check_status{check="duplicate_item_ratio"} 2

# HELP plumbline_dataset_check_alerting Alert state of each dataset-level check: 0 not alerting, 1 alerting at warn, 2 alerting at critical.
# TYPE plumbline_dataset_check_alerting gauge
plumbline_dataset_check_alerting{check="snapshot_missing"} 0
plumbline_dataset_check_alerting{check="row_count_ratio"} 0
plumbline_dataset_check_alerting{check="list_size_psi"} 0
plumbline_dataset_check_alerting{check="duplicate_item_ratio"} 2

# HELP plumbline_snapshot_rows Rows in the snapshot evaluated by the latest run.
# TYPE plumbline_snapshot_rows gauge
plumbline_snapshot_rows 980000

# HELP plumbline_snapshot_lists Result lists in the snapshot evaluated by the latest run.
# TYPE plumbline_snapshot_lists gauge
plumbline_snapshot_lists 39500

# HELP plumbline_baseline_rows_per_day Mean rows per day over the baseline window of the latest run.
# TYPE plumbline_baseline_rows_per_day gauge
plumbline_baseline_rows_per_day 1000000

# HELP plumbline_baseline_lists_per_day Mean result lists per day over the baseline window of the latest run.
# TYPE plumbline_baseline_lists_per_day gauge
plumbline_baseline_lists_per_day 40000

# HELP plumbline_list_size_psi Population stability index of the list-size distribution, current day against baseline, latest run.
# TYPE plumbline_list_size_psi gauge
plumbline_list_size_psi 0.04

# HELP plumbline_snapshot_date_timestamp_seconds Newest snapshot date evaluated with data, as the Unix time of 00:00 UTC of that date.
# TYPE plumbline_snapshot_date_timestamp_seconds gauge
plumbline_snapshot_date_timestamp_seconds 1936483200

# HELP plumbline_run_status Worst status of the latest run: 0 ok, 1 warn, 2 critical.
# TYPE plumbline_run_status gauge
plumbline_run_status 2

# HELP plumbline_last_success_timestamp_seconds Unix time the newest successful run completed.
# TYPE plumbline_last_success_timestamp_seconds gauge
plumbline_last_success_timestamp_seconds 1936593072.5

# HELP plumbline_last_run_timestamp_seconds Unix time the newest run completed, success or failure.
# TYPE plumbline_last_run_timestamp_seconds gauge
plumbline_last_run_timestamp_seconds 1936593072.5

# HELP plumbline_last_run_duration_seconds Wall-clock duration of the newest run.
# TYPE plumbline_last_run_duration_seconds gauge
plumbline_last_run_duration_seconds 72.5

# HELP plumbline_last_run_success Whether the newest run succeeded (1) or failed (0).
# TYPE plumbline_last_run_success gauge
plumbline_last_run_success 1

# HELP plumbline_runs_total Runs completed, success or failure, over the store's history.
# TYPE plumbline_runs_total counter
plumbline_runs_total 13

# HELP plumbline_run_failures_total Runs that failed, over the store's history.
# TYPE plumbline_run_failures_total counter
plumbline_run_failures_total 2

# HELP plumbline_run_interruptions_total Runs stopped by a shutdown before they finished (not failures), over the store's history.
# TYPE plumbline_run_interruptions_total counter
plumbline_run_interruptions_total 1

# HELP plumbline_unhandled_rejections_total Promise rejections nothing handled in this process (a bug; each is logged).
# TYPE plumbline_unhandled_rejections_total counter
plumbline_unhandled_rejections_total 0

# HELP plumbline_source_up Whether the source database answered the latest probe (1) or not (0).
# TYPE plumbline_source_up gauge
plumbline_source_up 1

# HELP plumbline_store_up Whether Plumbline's store answered the latest probe (1) or not (0).
# TYPE plumbline_store_up gauge
plumbline_store_up 1

# HELP plumbline_leader Whether this replica holds the leader lock and runs the schedule (1) or only serves results (0).
# TYPE plumbline_leader gauge
plumbline_leader 1

# HELP plumbline_build_info Plumbline build information; always 1.
# TYPE plumbline_build_info gauge
plumbline_build_info{version="0.1.0"} 1
`;

describe('PlumblineMetrics exposition', () => {
  it('renders the exact text for a fixed report and health', async () => {
    const m = quiet();
    m.showReport(sampleReport());
    m.restoreHealth(HEALTH);
    m.recordRun({ ok: true, startedAt: '2031-05-15T06:30:00.000Z', finishedAt: '2031-05-15T06:31:12.500Z' });
    const out = await m.render();
    expect(out.contentType).toBe('text/plain; version=0.0.4; charset=utf-8');
    expect(out.contentType).toBe(m.registry.contentType);
    expect(out.body).toBe(EXPECTED);
  });

  it('renders OpenMetrics with counter families named without _total, and leaves the text format intact', async () => {
    const m = quiet();
    m.restoreHealth(HEALTH);
    const om = await m.render('openmetrics');
    expect(om.contentType).toBe('application/openmetrics-text; version=1.0.0; charset=utf-8');
    expect(om.body).toContain('# TYPE plumbline_runs counter\nplumbline_runs_total 12\n');
    expect(om.body).toContain('# TYPE plumbline_run_failures counter\nplumbline_run_failures_total 2\n');
    expect(om.body).not.toContain('_total_total');
    expect(om.body.endsWith('\n# EOF\n')).toBe(true);
    // prom-client renames counters in place when a registry renders OpenMetrics; ours must not have been touched.
    const text = await m.render('prometheus');
    expect(text.body).toContain('# TYPE plumbline_runs_total counter\nplumbline_runs_total 12\n');
    expect(text.body).toContain('# TYPE plumbline_run_failures_total counter\nplumbline_run_failures_total 2\n');
    expect(text.body).not.toContain('# EOF');
  });
});

describe('PlumblineMetrics report gauges', () => {
  it('drops the series of features and checks that are not in the newest report', async () => {
    const m = quiet();
    m.showReport(sampleReport());
    const before = (await m.render()).body;
    expect(before).toContain('feature="price_rel"');
    expect(before).toContain('check="duplicate_item_ratio"');

    m.showReport(
      sampleReport({
        status: 'ok',
        findings: [
          finding({ feature: 'seller_score', check: 'psi', value: 0.03, status: 'ok' }),
          finding({ feature: null, check: 'row_count_ratio', value: 1.01, status: 'ok' }),
        ],
      }),
    );
    const after = (await m.render()).body;
    expect(after).not.toContain('price_rel');
    expect(after).not.toContain('rule=');
    expect(after).not.toContain('duplicate_item_ratio');
    expect(after).not.toContain('category');
    expect(sample(after, 'plumbline_feature_psi{feature="seller_score"}')).toBe(0.03);
    expect(sample(after, 'plumbline_feature_check_value{feature="seller_score",check="psi"}')).toBe(0.03);
    expect(sample(after, 'plumbline_dataset_check_value{check="row_count_ratio"}')).toBe(1.01);
    expect(samples(after).filter((l) => l.startsWith('plumbline_feature_ks_statistic'))).toEqual([]);
    // No list_size_psi finding any more: the scalar gauge has no sample rather than a stale one.
    expect(samples(after).filter((l) => l.startsWith('plumbline_list_size_psi'))).toEqual([]);
    expect(sample(after, 'plumbline_run_status')).toBe(0);
  });

  it('publishes slice findings in the slice family only, with the slice as a label', async () => {
    const m = quiet();
    m.showReport(
      sampleReport({
        findings: [
          finding({ slice: 'all', feature: 'price_rel', check: 'psi', value: 0.03, status: 'ok' }),
          finding({ slice: 'top10', feature: 'price_rel', check: 'psi', value: 0.41, status: 'critical', alert: alerting('critical', '2031-05-14', 1) }),
          finding({ slice: 'segment:market=isle "east"', feature: 'price_rel', check: 'rule_violation_ratio', rule: 'zscore', value: 0.2, status: 'critical' }),
        ],
      }),
    );
    const body = (await m.render()).body;
    // The whole day keeps its own value: a slice never overwrites it.
    expect(sample(body, 'plumbline_feature_psi{feature="price_rel"}')).toBe(0.03);
    expect(sample(body, 'plumbline_feature_check_value{feature="price_rel",check="psi"}')).toBe(0.03);
    expect(sample(body, 'plumbline_slice_check_value{slice="top10",feature="price_rel",check="psi"}')).toBe(0.41);
    expect(sample(body, 'plumbline_slice_check_status{slice="top10",feature="price_rel",check="psi"}')).toBe(2);
    expect(sample(body, 'plumbline_slice_check_alerting{slice="top10",feature="price_rel",check="psi"}')).toBe(2);
    // Label values are escaped by the exposition format (a segment value is data).
    expect(sample(body, 'plumbline_slice_check_value{slice="segment:market=isle \\"east\\"",feature="price_rel",check="rule_violation_ratio",rule="zscore"}')).toBe(0.2);
    expect(samples(body).filter((l) => l.startsWith('plumbline_slice_') && l.includes('slice="all"'))).toEqual([]);
  });

  it('clears every report series when there is no report, and keeps build_info', async () => {
    const m = quiet();
    m.showReport(sampleReport());
    m.showReport(null);
    const body = (await m.render()).body;
    expect(samples(body)).toEqual([
      'plumbline_runs_total 0',
      'plumbline_run_failures_total 0',
      'plumbline_run_interruptions_total 0',
      'plumbline_unhandled_rejections_total 0',
      'plumbline_leader 0',
      'plumbline_build_info{version="0.1.0"} 1',
    ]);
  });

  it('counts an interrupted run apart: neither a run nor a failure, and the last-run gauges keep the newest verdict', async () => {
    const m = quiet();
    m.recordRun({ ok: true, startedAt: '2031-05-14T06:30:00Z', finishedAt: '2031-05-14T06:31:00Z' });
    m.recordRun({ ok: false, interrupted: true, startedAt: '2031-05-15T06:30:00Z', finishedAt: '2031-05-15T06:30:20Z' });
    const body = (await m.render()).body;
    expect(samples(body)).toEqual(expect.arrayContaining([
      'plumbline_runs_total 1',
      'plumbline_run_failures_total 0',
      'plumbline_run_interruptions_total 1',
      'plumbline_last_run_success 1',
      `plumbline_last_run_timestamp_seconds ${Date.parse('2031-05-14T06:31:00Z') / 1000}`,
    ]));
    // The store's totals later: counters only rise to them.
    m.restoreHealth({ ...HEALTH, interrupted: 3 });
    m.setUnhandledRejections(2);
    m.setUnhandledRejections(1);
    const after = samples((await m.render()).body);
    expect(after).toEqual(expect.arrayContaining(['plumbline_run_interruptions_total 3', 'plumbline_unhandled_rejections_total 2']));
  });

  it('keeps the newest snapshot date with data when a later run found the snapshot missing', async () => {
    const m = quiet();
    m.showReport(sampleReport());
    const missing = sampleReport({
      runDate: '2031-05-15',
      current: { rows: 0, lists: 0, evaluatedRows: 0, evaluatedLists: 0, sampled: false },
      findings: [finding({ feature: null, check: 'snapshot_missing', value: 1, status: 'critical', thresholds: { type: 'flag' } })],
    });
    m.showReport(missing);
    let body = (await m.render()).body;
    // 2031-05-14T00:00:00Z (python3 calendar.timegm, as above).
    expect(sample(body, 'plumbline_snapshot_date_timestamp_seconds')).toBe(1936483200);
    expect(sample(body, 'plumbline_dataset_check_value{check="snapshot_missing"}')).toBe(1);
    expect(sample(body, 'plumbline_snapshot_rows')).toBe(0);

    m.showReport(sampleReport({ runDate: '2031-05-16' }));
    body = (await m.render()).body;
    // 1936483200 + 2 * 86400
    expect(sample(body, 'plumbline_snapshot_date_timestamp_seconds')).toBe(1936656000);
  });

  it('publishes a NaN value on check_value (alert rules join on it) but not on the dedicated gauges', async () => {
    const m = quiet();
    m.showReport(sampleReport({ findings: [finding({ feature: 'price_rel', check: 'psi', value: Number.NaN, status: 'ok' })] }));
    const body = (await m.render()).body;
    expect(samples(body)).toContain('plumbline_feature_check_value{feature="price_rel",check="psi"} Nan');
    expect(samples(body).filter((l) => l.startsWith('plumbline_feature_psi'))).toEqual([]);
  });

  it('never throws on a malformed report and skips values that are not numbers', async () => {
    const m = quiet();
    const odd = sampleReport({
      findings: [
        { ...finding({ feature: 'price_rel', check: 'psi', value: 0.2, status: 'warn' }), value: 'high' as unknown as number },
        { ...finding({ feature: 'price_rel', check: 'ks', value: 0.1, status: 'ok' }), alert: undefined as unknown as Report['findings'][0]['alert'] },
      ],
    });
    expect(() => m.showReport(odd)).not.toThrow();
    const body = (await m.render()).body;
    expect(samples(body).filter((l) => l.includes('check="psi"'))).toEqual([
      'plumbline_feature_check_status{feature="price_rel",check="psi"} 1',
      'plumbline_feature_check_alerting{feature="price_rel",check="psi"} 0',
    ]);
    expect(sample(body, 'plumbline_feature_check_alerting{feature="price_rel",check="ks"}')).toBe(0);
  });
});

describe('PlumblineMetrics health', () => {
  it('continues the counters from the store totals and never lowers them', async () => {
    const m = quiet();
    m.restoreHealth(HEALTH);
    let body = (await m.render()).body;
    expect(sample(body, 'plumbline_runs_total')).toBe(12);
    expect(sample(body, 'plumbline_run_failures_total')).toBe(2);
    expect(sample(body, 'plumbline_last_run_success')).toBe(1);
    expect(sample(body, 'plumbline_last_run_duration_seconds')).toBe(60);
    expect(sample(body, 'plumbline_leader')).toBe(1);

    m.recordRun({ ok: false, startedAt: '2031-05-15T06:30:00Z', finishedAt: '2031-05-15T06:30:05Z' });
    body = (await m.render()).body;
    expect(sample(body, 'plumbline_runs_total')).toBe(13);
    expect(sample(body, 'plumbline_run_failures_total')).toBe(3);
    expect(sample(body, 'plumbline_last_run_success')).toBe(0);
    expect(sample(body, 'plumbline_last_run_duration_seconds')).toBe(5);
    // The failure moved the last run, not the last success (2031-05-14T06:31:00Z).
    expect(sample(body, 'plumbline_last_success_timestamp_seconds')).toBe(1936506660);
    expect(sample(body, 'plumbline_last_run_timestamp_seconds')).toBe(1936593005);

    // Older totals (the store has not seen the last run yet) change nothing ...
    m.restoreHealth({ ...HEALTH, successes: 10, failures: 3 });
    body = (await m.render()).body;
    expect(sample(body, 'plumbline_runs_total')).toBe(13);
    expect(sample(body, 'plumbline_run_failures_total')).toBe(3);
    // ... newer ones raise the counters to them.
    m.restoreHealth({ ...HEALTH, successes: 12, failures: 4, sourceUp: false, leader: false });
    body = (await m.render()).body;
    expect(sample(body, 'plumbline_runs_total')).toBe(16);
    expect(sample(body, 'plumbline_run_failures_total')).toBe(4);
    expect(sample(body, 'plumbline_source_up')).toBe(0);
    expect(sample(body, 'plumbline_leader')).toBe(0);
  });

  it('exposes no last-run samples before any run, and no up samples before any probe', async () => {
    const body = (await quiet().render()).body;
    for (const name of ['plumbline_last_success_timestamp_seconds', 'plumbline_last_run_timestamp_seconds', 'plumbline_last_run_duration_seconds', 'plumbline_last_run_success', 'plumbline_source_up', 'plumbline_store_up']) {
      expect(body).toContain(`# TYPE ${name} gauge\n`);
      expect(samples(body).some((l) => l.startsWith(name))).toBe(false);
    }
  });

  it('restores a store that never saw a run without inventing timestamps', async () => {
    const m = quiet();
    m.restoreHealth({ lastSuccessAt: null, lastRunAt: null, lastDurationSeconds: null, lastOutcome: null, successes: 0, failures: 0, sourceUp: true, storeUp: true, leader: false });
    const body = (await m.render()).body;
    expect(samples(body).some((l) => l.startsWith('plumbline_last_'))).toBe(false);
    expect(sample(body, 'plumbline_runs_total')).toBe(0);
    expect(sample(body, 'plumbline_store_up')).toBe(1);
  });
});

describe('PlumblineMetrics registry', () => {
  it('scrapes without a report, with the default process metrics, in both formats', async () => {
    const m = new PlumblineMetrics({ version: '0.1.0' });
    const text = await m.render('prometheus');
    const om = await m.render('openmetrics');
    expect(text.body).toContain('plumbline_build_info{version="0.1.0"} 1');
    expect(text.body).toMatch(/^process_cpu_seconds_total \d/m);
    expect(text.body).not.toContain('nodejs_active_handles_total');
    expect(om.body).toMatch(/^# TYPE process_cpu_seconds counter$/m);
    expect(om.body).toMatch(/^process_cpu_seconds_total \d/m);
    expect(samples(text.body).some((l) => l.startsWith('plumbline_feature_'))).toBe(false);
  });

  it('uses its own registry, never the global one, so two instances coexist', async () => {
    const globalBefore = globalRegistry.getMetricsAsArray().length;
    const a = new PlumblineMetrics({ version: '1.0.0', defaultMetrics: false });
    const own = new Registry();
    const b = new PlumblineMetrics({ version: '2.0.0', registry: own, defaultMetrics: false });
    expect(b.registry).toBe(own);
    expect(globalRegistry.getMetricsAsArray().length).toBe(globalBefore);
    expect((await a.render()).body).toContain('plumbline_build_info{version="1.0.0"} 1');
    expect((await b.render()).body).toContain('plumbline_build_info{version="2.0.0"} 1');
  });

  it('refuses a registry switched to OpenMetrics', () => {
    const r = new Registry();
    r.setContentType('application/openmetrics-text; version=1.0.0; charset=utf-8' as never);
    expect(() => new PlumblineMetrics({ version: '0.1.0', registry: r })).toThrow(/Prometheus text format/);
  });

  it('documents every plumbline_ metric it exposes in deploy/METRICS.md, and only those', async () => {
    const doc = readFileSync(new URL('../../../deploy/METRICS.md', import.meta.url), 'utf8');
    const documented = new Set([...doc.matchAll(/^\| `(plumbline_[a-z_]+)` \|/gm)].map((x) => x[1]));
    const exposed = new Set(quiet().registry.getMetricsAsArray().map((x) => x.name).filter((n) => n.startsWith('plumbline_')));
    expect(exposed.size).toBeGreaterThan(30);
    expect([...documented].sort()).toEqual([...exposed].sort());
  });
});

describe('snapshotDateSeconds', () => {
  it('gives 00:00 UTC of the date and rejects other strings', () => {
    expect(snapshotDateSeconds('1970-01-02')).toBe(86400);
    expect(snapshotDateSeconds('2031-05-14')).toBe(1936483200);
    expect(snapshotDateSeconds('2031-5-14')).toBeNull();
    expect(snapshotDateSeconds('not a date')).toBeNull();
  });
});
