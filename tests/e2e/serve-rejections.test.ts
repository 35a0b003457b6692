/**
 * A promise rejection nothing handles, in a real `plumbline serve` process on a PostgreSQL
 * server (PLUMBLINE_TEST_DATABASE_URL). The service's policy (src/cli.ts) is to log it, count it
 * in plumbline_unhandled_rejections_total and keep serving: one lost background task must not
 * take the monitor down. The rejection is injected by a module loaded with `node --import`
 * (tests/support/lose-a-promise.ts, on SIGUSR2); the service's code is the shipped code.
 */
import { describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays } from '../../demo-data/scenario.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { REPO_ROOT, startService, type ServiceProcess } from '../support/service.ts';
import { serviceSuite, testSchedule, yesterdayUtc } from '../support/service-suite.ts';
import { until } from '../support/tools.ts';

const url = testDatabaseUrl();

const rejectionsLogged = (s: ServiceProcess): number => s.logs.filter((l) => l.msg === 'unhandled promise rejection').length;

const counter = (s: ServiceProcess): Promise<number | undefined> => s.metric('plumbline_unhandled_rejections_total');

describe.skipIf(url === undefined)('plumbline serve and a promise rejection nothing handles (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const suite = serviceSuite(url);

  it('logs it, counts it in plumbline_unhandled_rejections_total and keeps serving', async () => {
    const day = yesterdayUtc();
    const src = suite.schema('rej_src');
    const store = suite.schema('rej_store');
    const table = `${src}.impressions`;
    await loadScenario(suite.admin, { table, layout: 'wide', scenario: { startDate: addDays(day, -3), days: 4, listsPerDay: 20, meanListSize: 5, seed: 5, faults: [] } });
    const config = scenarioConfig(table, {
      storeSchema: store,
      overrides: { baseline: { window: { type: 'trailing', days: 3 } }, schedule: testSchedule({ catchUpMaxDays: 0 }), http: { host: '127.0.0.1', port: 0 } },
    });
    const svc = await startService({ config, sourceUrl: url!, imports: [`${REPO_ROOT}tests/support/lose-a-promise.ts`] });
    expect(await counter(svc)).toBe(0);

    svc.signal('SIGUSR2');
    await until('the rejection is logged', 10_000, () => (rejectionsLogged(svc) === 1 ? true : undefined));
    const line = svc.logs.find((l) => l.msg === 'unhandled promise rejection')!;
    expect(JSON.stringify(line)).toContain('a background task nobody awaited failed');
    expect(await counter(svc)).toBe(1);

    svc.signal('SIGUSR2');
    await until('the second rejection is logged', 10_000, () => (rejectionsLogged(svc) === 2 ? true : undefined));
    expect(await counter(svc)).toBe(2);
    // Still serving: alive, answering, and not on its way out.
    expect((await svc.get('/healthz')).status).toBe(200);
    expect(svc.exit).toBeNull();
    const exit = await svc.stop();
    expect(exit.code).toBe(0);
  }, 60_000);
});
