/**
 * `plumbline serve` with `alerting.alertmanagerUrl`: a day with an injected fault is run by
 * the service, which pushes its alerting findings to a real Alertmanager (Debian's
 * prometheus-alertmanager); the alert is read back through Alertmanager's API v2.
 * (tests/e2e/alertmanager.test.ts covers pushAlerts itself: resolution, resends.)
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays } from '../../demo-data/scenario.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { findAlertmanager, startAlertmanager, type ChildServer } from '../support/prometheus.ts';
import { startService, stopAllServices, withApplicationName } from '../support/service.ts';
import { until } from '../support/tools.ts';

const url = testDatabaseUrl();
const IN_CI = process.env.CI === 'true';
const ALERTMANAGER = findAlertmanager();

const skipWhy = url === undefined ? 'PLUMBLINE_TEST_DATABASE_URL is not set' : ALERTMANAGER === undefined && !IN_CI ? 'prometheus-alertmanager is not installed' : null;

describe.skipIf(skipWhy !== null)(`serve pushes alerting findings to a real Alertmanager${skipWhy === null ? '' : ` (skipped: ${skipWhy})`}`, () => {
  const src = uniqueSchema('am_src');
  const store = uniqueSchema('am_store');
  const table = `${src}.impressions`;
  const day = addDays(new Date().toISOString().slice(0, 10), -1);
  let admin: pg.Client;
  let am: ChildServer | undefined;
  let amUrl = '';

  beforeAll(async () => {
    if (ALERTMANAGER === undefined) throw new Error('prometheus-alertmanager is not installed; CI must install it');
    am = await startAlertmanager(ALERTMANAGER);
    amUrl = am.url;

    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    // A null spike on the evaluated day: a data-quality break, which alerts on its first run.
    await loadScenario(admin, {
      table,
      layout: 'wide',
      scenario: { startDate: addDays(day, -7), days: 8, listsPerDay: 80, meanListSize: 10, seed: 31, faults: [{ date: day, kind: 'null_spike', feature: 'review_count', amount: 0.3 }] },
    });
  }, 90_000);

  afterAll(async () => {
    await stopAllServices();
    await am?.stop();
    if (admin !== undefined) {
      await admin.query(`DROP SCHEMA IF EXISTS "${src}" CASCADE; DROP SCHEMA IF EXISTS "${store}" CASCADE`);
      await admin.end();
    }
  });

  it('shows the null spike as an active alert with the shipped labels', async () => {
    const config = scenarioConfig(table, {
      storeSchema: store,
      overrides: {
        baseline: { window: { type: 'trailing', days: 7 } },
        alerting: { alertmanagerUrl: amUrl },
        schedule: { cron: '0 0 1 1 *', timezone: 'UTC', lagDays: 1, catchUpMaxDays: 1, retryBaseSeconds: 1 },
        http: { host: '127.0.0.1', port: 0 },
      },
    });
    await startService({ config, sourceUrl: withApplicationName(url!, 'plumbline-e2e-am') });
    interface Gettable {
      labels: Record<string, string>;
      annotations: Record<string, string>;
      status: { state: string };
    }
    const alerts = await until(
      'the pushed alert in Alertmanager',
      60_000,
      async () => {
        const list = (await (await fetch(`${amUrl}/api/v2/alerts`)).json()) as Gettable[];
        return list.some((a) => a.labels['feature'] === 'review_count') ? list : undefined;
      },
      250,
    );
    const nulls = alerts.find((a) => a.labels['feature'] === 'review_count' && a.labels['check'] === 'null_ratio');
    expect(nulls?.status.state).toBe('active');
    expect(nulls?.labels).toMatchObject({ alertname: 'PlumblineFeatureDataBroken', severity: 'page' });
    expect(nulls?.annotations['runbook_url']).toMatch(/RUNBOOK\.md#/);
    // Aggregates only: no list or item ids travel to Alertmanager.
    expect(JSON.stringify(alerts)).not.toMatch(/list_id|item_id/);
  });
});
