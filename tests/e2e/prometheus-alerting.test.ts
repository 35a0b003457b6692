/**
 * Alerting end to end: a day with an injected fault in PostgreSQL -> `plumbline serve` runs it
 * -> a real Prometheus (Debian's `prometheus` package, 2.42) scrapes /metrics and evaluates the
 * shipped rules -> the alert fires on the fault's first day (the immediate rule: far beyond its
 * critical threshold), and only the alerts the report calls for. Every query of the shipped
 * Grafana dashboard then runs against that Prometheus and must return data.
 *
 * tests/e2e/promtool.test.ts already runs Prometheus against the HTTP server fed with a fixture
 * report (pending alerts, exposition formats); this file drives the whole service on real data
 * and waits for alerts to fire.
 *
 * Missing `prometheus` fails the test in CI (CI=true) and skips it elsewhere.
 */
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { parse } from 'yaml';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays } from '../../demo-data/scenario.ts';
import { alertNameFor, HEALTH_ALERTS, severityFor } from '../../src/exporter/index.ts';
import type { Report } from '../../src/report/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { loadDashboard, panelQueries, substitute, variableQuery } from '../support/dashboard.ts';
import { findPrometheus, startPrometheus, type ChildServer } from '../support/prometheus.ts';
import { REPO_ROOT, startService, stopAllServices, withApplicationName, type ServiceProcess } from '../support/service.ts';
import { until } from '../support/tools.ts';

const url = testDatabaseUrl();
const IN_CI = process.env.CI === 'true';
const PROMETHEUS = findPrometheus();
const RULES = join(REPO_ROOT, 'deploy/prometheus/plumbline.rules.yml');
const BASELINE_DAYS = 7;

interface PromAlert {
  labels: Record<string, string>;
  annotations: Record<string, string>;
  state: 'pending' | 'firing';
  value: string;
}

/** The shipped rules with every `for:` set to 0s, so alerts fire on the first evaluation. */
function rulesForTest(): string {
  const text = readFileSync(RULES, 'utf8');
  const rewritten = text.replace(/^(\s*)for: \S+$/gm, '$1for: 0s');
  return `# Copy of deploy/prometheus/plumbline.rules.yml for an end-to-end test: every \`for:\` is 0s
# so that alerts fire on the first evaluation. The shipped durations are for production.
${rewritten}`;
}

const describeIf = url === undefined || (PROMETHEUS === undefined && !IN_CI) ? describe.skip : describe;
const why = url === undefined ? ' (skipped: PLUMBLINE_TEST_DATABASE_URL is not set)' : PROMETHEUS === undefined && !IN_CI ? ' (skipped: prometheus is not installed; apt-get install prometheus)' : '';

describeIf(`a fault in the data fires the shipped alert in a real Prometheus${why}`, () => {
  const src = uniqueSchema('pa_src');
  const store = uniqueSchema('pa_store');
  const table = `${src}.impressions`;
  // The day the catch-up on start evaluates (schedule.lagDays 1, UTC).
  const day = addDays(new Date().toISOString().slice(0, 10), -1);
  let admin: pg.Client;
  let svc: ServiceProcess;
  let report: Report;
  let dir: string;
  let prom: ChildServer | undefined;
  let promUrl = '';

  beforeAll(async () => {
    if (PROMETHEUS === undefined) throw new Error('prometheus is not installed; CI must install Debian\'s prometheus package (apt-get install prometheus)');
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    // Prices reported in cents on the evaluated day (x100): a drift of `price` against the 7 clean days before it.
    await loadScenario(admin, {
      table,
      layout: 'wide',
      scenario: { startDate: addDays(day, -BASELINE_DAYS), days: BASELINE_DAYS + 1, listsPerDay: 150, meanListSize: 10, seed: 2718, faults: [{ date: day, kind: 'unit_change', feature: 'price', amount: 100 }] },
    });
    const config = scenarioConfig(table, {
      storeSchema: store,
      overrides: {
        baseline: { window: { type: 'trailing', days: BASELINE_DAYS } },
        // Default alerting: drift waits for 2 consecutive runs, but a PSI far beyond its critical
        // threshold (alerting.immediateMultiple, 3) alerts on its first run.
        schedule: { cron: '0 0 1 1 *', timezone: 'UTC', lagDays: 1, catchUpMaxDays: 2, retryBaseSeconds: 1 },
        http: { host: '127.0.0.1', port: 0 },
      },
    });
    // A name of its own in pg_stat_activity (see withApplicationName).
    svc = await startService({ config, sourceUrl: withApplicationName(url!, 'plumbline-e2e-alerting') });
    report = await until(`the catch-up report for ${day}`, 60_000, async () => {
      const r = await svc.get(`/api/v1/reports/${day}`);
      return r.status === 200 ? (r.json as Report) : undefined;
    }, 250);
    await until('the health metrics of the run', 10_000, async () => ((await svc.metric('plumbline_last_run_success')) === 1 ? true : undefined));

    dir = mkdtempSync(join(tmpdir(), 'plumbline-alerting-'));
    writeFileSync(join(dir, 'plumbline.rules.yml'), rulesForTest());
    const promConfig = {
      global: { scrape_interval: '1s', evaluation_interval: '1s' },
      rule_files: [join(dir, 'plumbline.rules.yml')],
      scrape_configs: [{ job_name: 'plumbline', static_configs: [{ targets: [new URL(svc.url).host] }] }],
    };
    prom = await startPrometheus(PROMETHEUS, promConfig);
    promUrl = prom.url;
  }, 110_000);

  afterAll(async () => {
    await prom?.stop();
    await stopAllServices();
    if (dir !== undefined) rmSync(dir, { recursive: true, force: true });
    if (admin !== undefined) {
      await admin.query(`DROP SCHEMA IF EXISTS "${src}" CASCADE; DROP SCHEMA IF EXISTS "${store}" CASCADE`);
      await admin.end();
    }
  });

  /** A finding 3 x beyond its critical threshold (the immediate rule's default). */
  function isFarBeyond(f: Report['findings'][number]): boolean {
    return f.thresholds.type === 'above' && f.status === 'critical' && f.score >= 3 * f.thresholds.critical;
  }

  async function promQuery(q: string): Promise<{ metric: Record<string, string>; value: [number, string] }[]> {
    const json = (await (await fetch(`${promUrl}/api/v1/query?query=${encodeURIComponent(q)}`)).json()) as { status: string; data: { result: { metric: Record<string, string>; value: [number, string] }[] } };
    if (json.status !== 'success') throw new Error(`query failed: ${JSON.stringify(json)}`);
    return json.data.result;
  }

  async function alerts(): Promise<PromAlert[]> {
    const json = (await (await fetch(`${promUrl}/api/v1/alerts`)).json()) as { data: { alerts: PromAlert[] } };
    return json.data.alerts;
  }

  const key = (a: { alertname: string; severity: string; feature?: string | undefined; check?: string | undefined; rule?: string | undefined }): string =>
    `${a.alertname} ${a.severity} ${a.feature ?? '-'} ${a.check ?? '-'} ${a.rule ?? '-'}`;

  it('the run found the fault: price drifted (critical) and alerts on its first day, by the immediate rule', () => {
    const psi = report.findings.find((f) => f.feature === 'price' && f.check === 'psi');
    expect(psi?.status).toBe('critical');
    expect(psi!.value).toBeGreaterThanOrEqual(3 * 0.25);
    expect(psi?.alert).toMatchObject({ alerting: true, level: 'critical', consecutiveRuns: 1, rule: 'immediate' });
    expect(psi?.evidence['alertRule']).toBe('immediate');
    // A borderline drift finding of the same day (if any) waits for its second run.
    for (const f of report.findings.filter((x) => (x.check === 'psi' || x.check === 'ks') && x.status !== 'ok' && x.feature !== 'price')) {
      if (isFarBeyond(f)) continue;
      expect(f.alert.alerting, `${f.feature} ${f.check}`).toBe(false);
    }
  });

  it('loads the rule copy with every rule healthy and every for: at 0s', async () => {
    const shipped = parse(readFileSync(RULES, 'utf8')) as { groups: { rules: unknown[] }[] };
    const count = shipped.groups.reduce((n, g) => n + g.rules.length, 0);
    interface Rules {
      data: { groups: { name: string; rules: { name: string; health: string; lastError?: string; duration?: number; lastEvaluation: string }[] }[] };
    }
    const rules = await until('every rule to be evaluated', 30_000, async () => {
      const json = (await (await fetch(`${promUrl}/api/v1/rules`)).json()) as Rules;
      const all = json.data.groups.flatMap((g) => g.rules);
      return all.length > 0 && all.every((r) => !r.lastEvaluation.startsWith('0001')) ? all : undefined;
    });
    expect(rules).toHaveLength(count);
    expect(rules.filter((r) => r.health !== 'ok').map((r) => `${r.name}: ${r.lastError}`)).toEqual([]);
    expect(rules.every((r) => r.duration === 0)).toBe(true);
  });

  it('fires PlumblineFeatureDrifted for price, and exactly the alerts the report calls for', async () => {
    // What the report says should page or open a ticket (the alert catalogue the rules follow).
    const expected = report.findings
      .filter((f) => f.alert.alerting && f.alert.level !== null)
      .map((f) => key({ alertname: alertNameFor(f.check), severity: severityFor(f.alert.level!), feature: f.feature ?? undefined, check: f.check, rule: f.rule ?? undefined }))
      .sort();
    expect(expected).toContain(key({ alertname: 'PlumblineFeatureDrifted', severity: 'page', feature: 'price', check: 'psi' }));

    let seen: string[] = [];
    const t0 = Date.now();
    // Before the first scrape PlumblineMonitorAbsent fires (for: 0s); it must clear once Plumbline is scraped.
    const firing = await until('the firing alerts to match the report', 45_000, async () => {
      const all = (await alerts()).filter((a) => a.state === 'firing');
      seen = all.map((a) => key(a.labels as Parameters<typeof key>[0])).sort();
      return JSON.stringify(seen) === JSON.stringify(expected) ? all : undefined;
    }, 250).catch((err: Error) => {
      throw new Error(`${err.message}; expected ${JSON.stringify(expected)}, last seen ${JSON.stringify(seen)}`);
    });
    console.log(`[prometheus-alerting] firing ${Date.now() - t0} ms after Prometheus was ready: ${seen.join('; ')}`);
    const drift = firing.find((a) => a.labels['alertname'] === 'PlumblineFeatureDrifted' && a.labels['feature'] === 'price' && a.labels['check'] === 'psi')!;
    expect(drift.labels['job']).toBe('plumbline');
    // $value is the PSI joined from plumbline_feature_check_value, as stored in the report.
    const psi = report.findings.find((f) => f.feature === 'price' && f.check === 'psi')!.value;
    expect(Number(drift.value)).toBeCloseTo(psi, 9);
    expect(drift.annotations['summary']).toBe('Ranking feature price drifted (psi)');
    expect(drift.annotations['description']).toContain('Feature price: psi is');
  });

  it('runs every query of the shipped Grafana dashboard, and each returns data', async () => {
    const dashboard = loadDashboard();
    const queries = [
      ...panelQueries(dashboard).map((q) => ({ what: `panel "${q.panel}" ${q.refId}`, expr: q.expr })),
      ...dashboard.templating.list.filter((v) => v.type === 'query').map((v) => ({ what: `variable ${v.name}`, expr: substitute(variableQuery(typeof v.query === 'string' ? v.query : v.query.query).promql, dashboard) })),
    ];
    expect(queries.length).toBeGreaterThan(15);
    const empty: string[] = [];
    for (const q of queries) {
      // Range functions over counters need two scrapes: wait for data rather than sample once.
      const result = await until(`data for ${q.what}`, 20_000, async () => {
        const r = await promQuery(q.expr);
        return r.length > 0 ? r : undefined;
      }, 250).catch(() => []);
      if (result.length === 0) empty.push(`${q.what}: ${q.expr}`);
    }
    expect(empty).toEqual([]);
    // The variables list what the panels filter on: the scenario's features and the checks of the report.
    const features = (await promQuery(variableQuery('label_values(plumbline_feature_check_value, feature)').promql)).map((r) => r.metric['feature']);
    expect(features).toContain('price');
  });

  it('keeps the health alerts quiet while their series say all is well', async () => {
    // The series exist and are healthy, so a quiet rule is quiet for the right reason.
    expect((await promQuery('plumbline_source_up'))[0]?.value[1]).toBe('1');
    expect((await promQuery('plumbline_store_up'))[0]?.value[1]).toBe('1');
    expect((await promQuery('plumbline_last_run_success'))[0]?.value[1]).toBe('1');
    const active = await alerts();
    for (const name of HEALTH_ALERTS) expect(active.filter((a) => a.labels['alertname'] === name), name).toEqual([]);
    expect(active.filter((a) => a.labels['alertname'] === 'PlumblineSnapshotMissing')).toEqual([]);
  });

  it('stops Prometheus cleanly', async () => {
    // SIGTERM; a Prometheus still running after 20 s is killed, and the exit is then not 0.
    const exit = await prom!.stop(20_000);
    expect(exit.code, prom!.output()).toBe(0);
    expect(await svc.stop()).toEqual({ code: 0, signal: null });
  });
});
