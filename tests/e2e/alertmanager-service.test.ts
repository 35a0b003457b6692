/**
 * `plumbline serve` with `alerting.alertmanagerUrl`: a day with an injected fault is run by
 * the service, which pushes its alerting findings to a real Alertmanager (Debian's
 * prometheus-alertmanager); the alert is read back through Alertmanager's API v2.
 * (tests/e2e/alertmanager.test.ts covers pushAlerts itself: resolution, resends.)
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { accessSync, constants, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays } from '../../demo-data/scenario.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { startService, stopAllServices, until, withApplicationName } from '../support/service.ts';

const url = testDatabaseUrl();
const IN_CI = process.env.CI === 'true';
const ALERTMANAGER = ['/usr/bin/prometheus-alertmanager', '/usr/local/bin/alertmanager', '/usr/bin/alertmanager'].find((p) => {
  try {
    accessSync(p, constants.X_OK);
    return true;
  } catch {
    return false;
  }
});

async function freePort(): Promise<number> {
  const s = createServer();
  await new Promise<void>((resolve) => s.listen(0, '127.0.0.1', resolve));
  const port = (s.address() as { port: number }).port;
  await new Promise<void>((resolve) => s.close(() => resolve()));
  return port;
}

const skipWhy = url === undefined ? 'PLUMBLINE_TEST_DATABASE_URL is not set' : ALERTMANAGER === undefined && !IN_CI ? 'prometheus-alertmanager is not installed' : null;

describe.skipIf(skipWhy !== null)(`serve pushes alerting findings to a real Alertmanager${skipWhy === null ? '' : ` (skipped: ${skipWhy})`}`, () => {
  const src = uniqueSchema('am_src');
  const store = uniqueSchema('am_store');
  const table = `${src}.impressions`;
  const day = addDays(new Date().toISOString().slice(0, 10), -1);
  let admin: pg.Client;
  let am: ChildProcess | undefined;
  let amUrl = '';
  let dir = '';

  beforeAll(async () => {
    if (ALERTMANAGER === undefined) throw new Error('prometheus-alertmanager is not installed; CI must install it');
    dir = mkdtempSync(join(tmpdir(), 'plumbline-am-svc-'));
    writeFileSync(join(dir, 'alertmanager.yml'), 'route:\n  receiver: nowhere\nreceivers:\n  - name: nowhere\n');
    const port = await freePort();
    amUrl = `http://127.0.0.1:${port}`;
    am = spawn(ALERTMANAGER, [`--config.file=${join(dir, 'alertmanager.yml')}`, `--storage.path=${join(dir, 'data')}`, `--web.listen-address=127.0.0.1:${port}`, '--cluster.listen-address=', '--log.level=warn'], {
      stdio: 'ignore',
    });
    await until('Alertmanager to be ready', 30_000, async () => ((await fetch(`${amUrl}/-/ready`).catch(() => null))?.ok ? true : undefined), 200);

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
    if (am !== undefined && am.exitCode === null) {
      const exited = new Promise((resolve) => am!.once('exit', resolve));
      am.kill('SIGTERM');
      await Promise.race([exited, new Promise((resolve) => setTimeout(resolve, 10_000))]);
      if (am.exitCode === null) am.kill('SIGKILL');
    }
    if (dir !== '') rmSync(dir, { recursive: true, force: true });
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
