/**
 * `plumbline serve` as a child process against a real PostgreSQL server, through the faults
 * the service promises to survive: the database down at start, a connection killed in the
 * middle of a run, SIGTERM during a run, a broken config file and broken values in the data.
 *
 * Each block loads the invented scenario of demo-data/ into schemas of its own, with its last
 * day "yesterday" (UTC) so that the catch-up on start (schedule.lagDays 1) evaluates it.
 * The service is reached only as an operator would: HTTP, /metrics, its JSON log lines, its
 * exit code, and the store's tables.
 */
import pg from 'pg';
import { describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays, type FaultPlan, type ScenarioOptions } from '../../demo-data/scenario.ts';
import type { ConfigInput } from '../../src/config/index.ts';
import type { Report } from '../../src/report/index.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { runServeExpectingExit, startService, withApplicationName, type LogLine, type ServiceProcess } from '../support/service.ts';
import { serviceSuite, testSchedule, yesterdayUtc as yesterday } from '../support/service-suite.ts';
import { until } from '../support/tools.ts';

const url = testDatabaseUrl();
/** What the services connect with: a name of their own in pg_stat_activity (see withApplicationName). */
const svcUrl = url === undefined ? '' : withApplicationName(url, 'plumbline-e2e-service');
const BASELINE_DAYS = 7;
/** The bearer token of manual runs (http.manualRuns.enabled), as an operator would give it. */
const RUN_TOKEN = 'service-faults-run-token-0123';

/** A scenario of BASELINE_DAYS clean days and then `last`, with the given faults. */
function scenario(last: string, listsPerDay: number, meanListSize: number, faults: FaultPlan[] = []): ScenarioOptions {
  return { startDate: addDays(last, -BASELINE_DAYS), days: BASELINE_DAYS + 1, listsPerDay, meanListSize, seed: 4711, faults };
}

/** The service config: scenario features, a short baseline, a cron that does not fire during a test, fast retries. */
function serviceConfig(table: string, storeSchema: string, layout: 'wide' | 'jsonb' = 'wide', extra: Partial<ConfigInput> = {}): unknown {
  return scenarioConfig(table, {
    layout,
    storeSchema,
    overrides: {
      baseline: { window: { type: 'trailing', days: BASELINE_DAYS } },
      // 1 January at 00:00: the tests drive runs through the catch-up on start and POST /api/v1/runs.
      schedule: testSchedule({ catchUpMaxDays: 2 }),
      http: { host: '127.0.0.1', port: 0, manualRuns: { enabled: true } },
      ...extra,
    },
  });
}

function logIndex(s: ServiceProcess, pred: (l: LogLine) => boolean, from = 0): number {
  const i = s.logs.slice(from).findIndex(pred);
  return i < 0 ? -1 : i + from;
}

async function reportOf(s: ServiceProcess, date: string): Promise<Report | undefined> {
  const r = await s.get(`/api/v1/reports/${date}`);
  return r.status === 200 ? (r.json as Report) : undefined;
}

describe.skipIf(url === undefined)(`plumbline serve through faults, on a PostgreSQL server${url === undefined ? ' (skipped: PLUMBLINE_TEST_DATABASE_URL is not set)' : ''}`, () => {
  const suite = serviceSuite(url);
  const schema = (prefix: string): string => suite.schema(prefix);

  it('starts while PostgreSQL is down, reports it, and becomes ready and catches up by itself once it is back', async () => {
    const day = yesterday();
    const src = schema('sf_down_src');
    const store = schema('sf_down_store');
    const table = `${src}.impressions`;
    await loadScenario(suite.admin, { table, layout: 'wide', scenario: scenario(day, 100, 10) });

    const proxy = await suite.proxy();
    await proxy.pause();
    const dbUrl = proxy.rewrite(svcUrl);
    const svc = await startService({ runToken: RUN_TOKEN, config: serviceConfig(table, store), sourceUrl: dbUrl, storeUrl: dbUrl });

    // Alive, not ready, and saying why.
    expect((await svc.get('/healthz')).status).toBe(200);
    const notReady = await svc.get('/readyz');
    expect(notReady.status).toBe(503);
    const body = notReady.json as { ready: boolean; reasons: string[] };
    expect(body.ready).toBe(false);
    // Only the words: the store's host, port and driver text stay in the log.
    expect(body.reasons).toEqual(['store unreachable']);
    expect(notReady.body).not.toMatch(/127\.0\.0\.1|ECONNREFUSED|connect/);
    await svc.waitForLog('the readiness detail in the log', (l) => l.msg === 'readiness: store unreachable' && typeof l['error'] === 'string', 5000);
    await until('plumbline_store_up 0 and plumbline_source_up 0', 10_000, async () => ((await svc.metric('plumbline_store_up')) === 0 && (await svc.metric('plumbline_source_up')) === 0 ? true : undefined));
    // No run can start without the store (503: not ready, try later).
    const refused = await svc.post(`/api/v1/runs?date=${day}`);
    expect(refused.status).toBe(503);
    expect(refused.json).toEqual({ accepted: false, message: 'the store is not ready yet' });
    // It keeps trying (two attempts: at start and after the first backoff), and stays up.
    await svc.waitForLog('two store retries', () => svc.logs.filter((l) => l.msg === 'store not available yet; retrying').length >= 2, 15_000);
    expect(svc.exit).toBeNull();

    const resumed = Date.now();
    await proxy.resume();
    await until('/readyz 200 after the database came back', 45_000, async () => ((await svc.get('/readyz')).status === 200 ? true : undefined), 200);
    const readyAfterMs = Date.now() - resumed;
    await until('plumbline_store_up 1 and plumbline_source_up 1', 10_000, async () => ((await svc.metric('plumbline_store_up')) === 1 && (await svc.metric('plumbline_source_up')) === 1 ? true : undefined));

    // The catch-up on start evaluates yesterday without anyone asking.
    const report = await until(`the catch-up report for ${day}`, 45_000, () => reportOf(svc, day), 250);
    const caughtUpAfterMs = Date.now() - resumed;
    expect(report.runDate).toBe(day);
    expect(report.current.rows).toBeGreaterThan(0);
    expect(report.baseline.days).toHaveLength(BASELINE_DAYS);
    expect(svc.logs.some((l) => l.msg === 'running due days' && l['reason'] === 'start' && l['target'] === day)).toBe(true);
    await until('the health metrics of the catch-up run', 10_000, async () => ((await svc.metric('plumbline_last_run_success')) === 1 ? true : undefined));
    expect(await svc.metric('plumbline_snapshot_date_timestamp_seconds')).toBe(Date.parse(`${day}T00:00:00Z`) / 1000);
    expect(await svc.metric('plumbline_run_failures_total')).toBe(0);
    console.log(`[service-faults] database back -> ready after ${readyAfterMs} ms, catch-up report after ${caughtUpAfterMs} ms (${svc.logs.filter((l) => l.msg === 'store not available yet; retrying').length} store retries while down)`);

    const exit = await svc.stop();
    expect(exit).toEqual({ code: 0, signal: null });
  }, 80_000);

  it('keeps the previous report when a connection is killed during the COPY of a re-run, then retries and succeeds by itself', async () => {
    const day = yesterday();
    const src = schema('sf_kill_src');
    const store = schema('sf_kill_store');
    const table = `${src}.impressions`;
    await loadScenario(suite.admin, { table, layout: 'wide', scenario: scenario(day, 1000, 15) });

    // The source goes through the proxy, so its server sessions are known by their client port.
    const proxy = await suite.proxy();
    const svc = await startService({ runToken: RUN_TOKEN, config: serviceConfig(table, store), sourceUrl: proxy.rewrite(svcUrl), storeUrl: svcUrl });
    const before = await until(`the catch-up report for ${day}`, 60_000, () => reportOf(svc, day), 250);
    await until('the metrics of the first run', 10_000, async () => ((await svc.metric('plumbline_runs_total')) === 1 ? true : undefined));
    const failuresBefore = await svc.metric('plumbline_run_failures_total');
    expect(failuresBefore).toBe(0);

    // Terminate this service's source session as soon as it is running a COPY.
    const killer = new pg.Client({ connectionString: url, application_name: 'plumbline-e2e-killer' });
    await killer.connect();
    let busy = false;
    let killed = 0;
    const timer = setInterval(() => {
      if (busy) return;
      busy = true;
      void killer
        .query<{ ok: boolean }>(
          `SELECT pg_terminate_backend(pid) AS ok FROM pg_stat_activity WHERE state = 'active' AND query LIKE 'COPY%' AND client_addr = '127.0.0.1' AND client_port = ANY($1::int[])`,
          [proxy.upstreamPorts()],
        )
        .then((r) => (killed += r.rows.filter((x) => x.ok).length))
        .catch(() => undefined)
        .finally(() => (busy = false));
    }, 5);

    const from = svc.logs.length;
    let failedAt: number;
    try {
      const res = await svc.postRun(`/api/v1/runs?date=${day}`);
      expect(res.status).toBe(202);
      await svc.waitForLog('the killed run to fail', (l) => l.msg === 'run failed' && l['runDate'] === day, 30_000, from);
      failedAt = Date.now();
    } finally {
      clearInterval(timer);
      await until('the killer to finish its query', 5000, () => (busy ? undefined : true), 5);
      await killer.end();
    }
    expect(killed).toBeGreaterThanOrEqual(1);
    const failure = svc.logs.slice(from).find((l) => l.msg === 'run failed')!;
    // 57P01: terminating connection due to administrator command (as the driver's code, or inside a wrapping SourceError's message).
    expect(failure['code'] === '57P01' || String(failure['error']).includes('SQLSTATE 57P01'), JSON.stringify(failure)).toBe(true);

    // The previous report is untouched, the failure is counted, and a retry is on its way.
    expect(await reportOf(svc, day)).toEqual(before);
    await until('plumbline_run_failures_total to count the failure', 10_000, async () => ((await svc.metric('plumbline_run_failures_total')) === failuresBefore! + 1 ? true : undefined));
    expect(await svc.metric('plumbline_last_run_success')).toBe(0);
    const retry = await svc.waitForLog('the retry to be scheduled', (l) => l.msg === 'next attempt scheduled' && l['why'] === `run of ${day} failed`, 10_000, from);
    expect(retry['inSeconds']).toBe(1);

    // Nobody asks again: the retry runs the date and stores a new report.
    const done = await svc.waitForLog('the retry to complete', (l) => l.msg === 'run completed' && l['runDate'] === day, 30_000, from);
    const recoveredAfterMs = Date.now() - failedAt;
    expect(svc.logs.slice(from).some((l) => l.msg === 'running a date' && l['reason'] === 'retry' && l['date'] === day)).toBe(true);
    const after = (await reportOf(svc, day))!;
    expect(after.startedAt > before.startedAt).toBe(true);
    expect(after.findings.length).toBe(before.findings.length);
    expect(after.findings.map((f) => [f.feature, f.check, f.status])).toEqual(before.findings.map((f) => [f.feature, f.check, f.status]));
    expect(done['findings']).toBe(after.findings.length);
    await until('the metrics of the successful retry', 10_000, async () => ((await svc.metric('plumbline_last_run_success')) === 1 ? true : undefined));
    expect(await svc.metric('plumbline_run_failures_total')).toBe(failuresBefore! + 1);
    expect(await svc.metric('plumbline_runs_total')).toBe(3);
    console.log(`[service-faults] killed ${killed} COPY session(s); the retry stored a new report ${recoveredAfterMs} ms after the failure`);

    expect(await svc.stop()).toEqual({ code: 0, signal: null });
  }, 80_000);

  it('exits 0 on SIGTERM during a run and leaves either the complete new run or the previous one, never a part', async () => {
    const day = yesterday();
    const src = schema('sf_term_src');
    const store = schema('sf_term_store');
    const table = `${src}.impressions`;
    await loadScenario(suite.admin, { table, layout: 'wide', scenario: scenario(day, 200, 10) });
    // Make the evaluated day big (100 copies of its lists, about 200k rows) in SQL, which is much faster than generating it.
    const cols = (await suite.admin.query<{ c: string }>(`SELECT column_name AS c FROM information_schema.columns WHERE table_schema = $1 AND table_name = 'impressions' ORDER BY ordinal_position`, [src])).rows.map((r) => r.c);
    const select = cols.map((c) => (c === 'list_id' ? `list_id || '~' || k` : `"${c}"`)).join(', ');
    await suite.admin.query(`INSERT INTO ${table} (${cols.map((c) => `"${c}"`).join(', ')}) SELECT ${select} FROM ${table}, generate_series(1, 99) AS k WHERE snapshot_date = $1::date`, [day]);
    await suite.admin.query(`ANALYZE ${table}`);
    const rows = Number((await suite.admin.query<{ n: string }>(`SELECT count(*)::text AS n FROM ${table} WHERE snapshot_date = $1::date`, [day])).rows[0]!.n);
    expect(rows).toBeGreaterThan(150_000);

    const config = serviceConfig(table, store);
    const svc = await startService({ runToken: RUN_TOKEN, config, sourceUrl: svcUrl });
    const before = await until(`the catch-up report for ${day}`, 60_000, () => reportOf(svc, day), 250);
    expect(before.current.rows).toBe(rows);

    const from = svc.logs.length;
    expect((await svc.postRun(`/api/v1/runs?date=${day}`)).status).toBe(202);
    await svc.waitForLog('the re-run to start', (l) => l.msg === 'running a date' && l['date'] === day, 10_000, from);
    const sent = Date.now();
    svc.signal('SIGTERM');
    // schedule.shutdownGraceSeconds (default 20 s) bounds the whole stop, the abort of the run included.
    const exit = await until('the service to exit after SIGTERM', 30_000, () => svc.exit ?? undefined, 50);
    const exitedAfterMs = Date.now() - sent;
    expect(exit).toEqual({ code: 0, signal: null });

    // SIGTERM arrived while the re-run was in progress (else this test proves nothing).
    const stopping = logIndex(svc, (l) => l.msg === 'stopping', from);
    const completed = logIndex(svc, (l) => l.msg === 'run completed' && l['runDate'] === day, from);
    const failed = logIndex(svc, (l) => (l.msg === 'run failed' || l.msg === 'run interrupted') && l['runDate'] === day, from);
    expect(stopping, svc.tail()).toBeGreaterThan(0);
    expect(completed < 0 || completed > stopping, 'the re-run completed before SIGTERM arrived: make the day bigger').toBe(true);
    expect(failed < 0 || failed > stopping).toBe(true);
    expect(svc.logs.at(-1)?.msg).toBe('stopped');

    // The store: the date's findings all come from its newest successful run, as many as its report lists.
    const q = (sql: string) => suite.admin.query(sql.replaceAll('S.', `"${store}".`), [day]);
    const runs = (await q(`SELECT id, outcome, jsonb_array_length(report->'findings') AS n FROM S.runs WHERE run_date = $1::date ORDER BY id`)).rows as { id: string; outcome: string; n: number | null }[];
    const successes = runs.filter((r) => r.outcome === 'success');
    expect(successes.length === 1 || successes.length === 2, JSON.stringify(runs)).toBe(true);
    const newest = successes.at(-1)!;
    const findings = (await q(`SELECT run_id::text AS run_id, count(*)::int AS n FROM S.findings WHERE run_date = $1::date GROUP BY run_id`)).rows as { run_id: string; n: number }[];
    expect(findings).toEqual([{ run_id: String(newest.id), n: newest.n }]);
    const outcome = successes.length === 2 ? 'the complete new run' : `the previous run (the re-run failed and stored nothing: ${String(svc.logs[failed]?.['error'])})`;
    // A run stopped by the shutdown is recorded as interrupted, not as a failure that pages.
    if (successes.length === 1) expect(runs.filter((r) => r.outcome !== 'success').map((r) => r.outcome)).toEqual(['interrupted']);

    // After a restart the service serves the same, whole report.
    const again = await startService({ runToken: RUN_TOKEN, config, sourceUrl: svcUrl });
    const served = await until(`the report for ${day} after the restart`, 30_000, () => reportOf(again, day), 250);
    expect(served.findings).toHaveLength(newest.n!);
    if (successes.length === 1) expect(served).toEqual(before);
    else expect(served.startedAt > before.startedAt).toBe(true);
    console.log(`[service-faults] SIGTERM during a ${rows}-row re-run: exit code ${exit.code} after ${exitedAfterMs} ms; the store holds ${outcome}`);
    expect(await again.stop()).toEqual({ code: 0, signal: null });
  }, 85_000);

  it('refuses a bad config with exit code 2 and one line per problem, each with its config path', async () => {
    const good = serviceConfig('nowhere.impressions', 'plumbline_unused') as Record<string, Record<string, unknown>>;
    const bad = {
      ...good,
      source: { ...good.source, tabel: 'typo' },
      schedule: { ...good.schedule, cron: 'every morning', timezone: 'Mars/Olympus' },
      http: { ...good.http, port: 70000 },
      features: [{ name: 'stock_level', kind: 'fuzzy' }, ...(good.features as unknown as unknown[]).slice(1)],
    };
    const r = await runServeExpectingExit({ config: bad, sourceUrl: svcUrl });
    expect(r.exit).toEqual({ code: 2, signal: null });
    expect(r.logs.some((l) => l.msg === 'listening')).toBe(false);
    const problems = r.stderr.filter((l) => l.startsWith('  - ')).map((l) => l.slice(4));
    expect(r.stderr[0]).toMatch(/^plumbline: .*plumbline\.json has 5 problems$/);
    for (const path of ['source.tabel', 'schedule.cron', 'schedule.timezone', 'http.port', 'features[0].kind']) {
      expect(problems.filter((p) => p.startsWith(`${path}: `)), `${path} in ${JSON.stringify(r.stderr)}`).toHaveLength(1);
    }
    expect(problems).toHaveLength(5);
  }, 30_000);

  it('keeps serving through NaN, infinities and text in a jsonb number, and reports them', async () => {
    const day = yesterday();
    const wideSrc = schema('sf_nan_src');
    const jsonSrc = schema('sf_text_src');
    const wideStore = schema('sf_nan_store');
    const jsonStore = schema('sf_text_store');
    // NaN, +Infinity and -Infinity in a float8 column; "12,34" (a decimal comma) in a jsonb key that should hold numbers.
    await Promise.all([
      loadScenario(suite.admin, { table: `${wideSrc}.impressions`, layout: 'wide', scenario: scenario(day, 150, 10, [{ date: day, kind: 'nonfinite', feature: 'text_match', amount: 0.05 }]) }),
      (async () => {
        const c = new pg.Client({ connectionString: url });
        await c.connect();
        try {
          await loadScenario(c, { table: `${jsonSrc}.impressions`, layout: 'jsonb', scenario: scenario(day, 150, 10, [{ date: day, kind: 'type_error', feature: 'price', amount: 0.05 }]) });
        } finally {
          await c.end();
        }
      })(),
    ]);
    const counts = (await suite.admin.query<{ nonfinite: number; text: number }>(
      `SELECT (SELECT count(*)::int FROM "${wideSrc}".impressions WHERE snapshot_date = $1::date AND text_match IN ('NaN', 'Infinity', '-Infinity')) AS nonfinite,
              (SELECT count(*)::int FROM "${jsonSrc}".impressions WHERE snapshot_date = $1::date AND jsonb_typeof(features->'price') = 'string') AS text`,
      [day],
    )).rows[0]!;
    expect(counts.nonfinite).toBeGreaterThan(0);
    expect(counts.text).toBeGreaterThan(0);

    const [wide, json] = await Promise.all([
      startService({ runToken: RUN_TOKEN, config: serviceConfig(`${wideSrc}.impressions`, wideStore), sourceUrl: svcUrl }),
      startService({ runToken: RUN_TOKEN, config: serviceConfig(`${jsonSrc}.impressions`, jsonStore, 'jsonb'), sourceUrl: svcUrl }),
    ]);
    const cases = [
      { svc: wide, feature: 'text_match', check: 'nonfinite_ratio', bad: counts.nonfinite },
      { svc: json, feature: 'price', check: 'type_error_ratio', bad: counts.text },
    ];
    for (const { svc, feature, check, bad } of cases) {
      await until(`the catch-up report for ${day}`, 60_000, () => reportOf(svc, day), 250);
      // And once more by request: a faulty day run on demand must not stop the service either.
      const from = svc.logs.length;
      // The scheduled job may still be finishing (pruning the store after the stored day): postRun waits out 409 busy.
      expect((await svc.postRun(`/api/v1/runs?date=${day}`)).status).toBe(202);
      await svc.waitForLog('the requested run to complete', (l) => (l.msg === 'run completed' || l.msg === 'run failed') && l['runDate'] === day, 30_000, from);
      expect(svc.logs.slice(from).some((l) => l.msg === 'run failed')).toBe(false);
      expect(svc.exit).toBeNull();
      expect((await svc.get('/healthz')).status).toBe(200);
      expect((await svc.get('/readyz')).status).toBe(200);

      const report = (await reportOf(svc, day))!;
      const finding = report.findings.find((f) => f.feature === feature && f.check === check);
      expect(finding, `${feature} ${check}`).toBeDefined();
      expect(finding!.status).toBe('critical');
      // The ratio is over the evaluated rows; the count of bad rows comes from SQL above.
      expect(finding!.value).toBeCloseTo(bad / report.current.evaluatedRows, 12);
      // Every value of the report is a finite number (JSON has no NaN), and so is the metric.
      expect(report.findings.every((f) => Number.isFinite(f.value))).toBe(true);
      const samples = await svc.metrics();
      expect(samples.find((s) => s.name === 'plumbline_feature_check_value' && s.labels['feature'] === feature && s.labels['check'] === check)?.value).toBeCloseTo(finding!.value, 12);
      expect(samples.find((s) => s.name === 'plumbline_feature_check_status' && s.labels['feature'] === feature && s.labels['check'] === check)?.value).toBe(2);
      expect(samples.find((s) => s.name === 'plumbline_run_failures_total')?.value).toBe(0);
    }
    expect(await wide.stop()).toEqual({ code: 0, signal: null });
    expect(await json.stop()).toEqual({ code: 0, signal: null });
  }, 80_000);
});
