/**
 * `plumbline serve` when a statement takes long: SIGTERM must end the process within the
 * grace period (the statement is cancelled on the server) and record the run as
 * interrupted; a run past schedule.runTimeoutMinutes is aborted, recorded as failed and
 * retried; and when the store goes down in the middle of a run, so that neither the failure
 * nor the leader lock can be written or read, the retry still happens once it is back.
 *
 * The source is a view over the scenario table whose rows pass through a gate function:
 * while the gate table says so, every COPY of the view (the day reads of a run) sleeps in
 * pg_sleep, a statement made long on purpose; other statements (counts, catalogue reads)
 * pass at once.
 */
import { describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays } from '../../demo-data/scenario.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { startService, withApplicationName, type ServiceProcess } from '../support/service.ts';
import { serviceSuite, testSchedule, yesterdayUtc as yesterday } from '../support/service-suite.ts';
import { until } from '../support/tools.ts';

const url = testDatabaseUrl();
const BASELINE_DAYS = 5;
/** application_name of this run's services: unique, so a backend left sleeping by an earlier run never matches. */
const RUN_ID = `${process.pid}-${Date.now().toString(36)}`;
const appName = (what: string): string => `plumbline-e2e-${what}-${RUN_ID}`;

describe.skipIf(url === undefined)(`serve with a long statement in flight${url === undefined ? ' (skipped: PLUMBLINE_TEST_DATABASE_URL is not set)' : ''}`, () => {
  // Statements still sleeping in the gate (a cut connection is noticed only when they write) are terminated before the schemas are dropped.
  const suite = serviceSuite(url, { terminateLike: `%-${RUN_ID}` });

  /** The scenario behind a gated view; returns the view's name and a switch for the gate. */
  async function gatedSource(prefix: string, day: string): Promise<{ view: string; store: string; gate: (seconds: number) => Promise<void> }> {
        const src = suite.schema(`${prefix}_src`);
    const store = suite.schema(`${prefix}_store`);
    await loadScenario(suite.admin, { table: `${src}.impressions`, layout: 'wide', scenario: { startDate: addDays(day, -BASELINE_DAYS), days: BASELINE_DAYS + 1, listsPerDay: 60, meanListSize: 8, seed: 31, faults: [] } });
    await suite.admin.query(`CREATE TABLE "${src}".gate (sleep_seconds float8 NOT NULL)`);
    await suite.admin.query(`INSERT INTO "${src}".gate VALUES (0)`);
    await suite.admin.query(`
      CREATE FUNCTION "${src}".gate_pass() RETURNS boolean LANGUAGE plpgsql VOLATILE AS $$
      DECLARE s float8;
      BEGIN
        SELECT sleep_seconds INTO s FROM "${src}".gate;
        IF s > 0 AND current_query() ILIKE 'copy%' THEN PERFORM pg_sleep(s); END IF;
        RETURN true;
      END $$`);
    await suite.admin.query(`CREATE VIEW "${src}".impressions_gated AS SELECT * FROM "${src}".impressions WHERE "${src}".gate_pass()`);
    return { view: `${src}.impressions_gated`, store, gate: async (seconds) => void (await suite.admin.query(`UPDATE "${src}".gate SET sleep_seconds = $1`, [seconds])) };
  }

  /** A gated source for yesterday with the gate closed (every day read sleeps), and the application_name its service is to use. */
  async function closedGate(prefix: string): Promise<{ day: string; view: string; store: string; gate: (seconds: number) => Promise<void>; app: string }> {
    const day = yesterday();
    const source = await gatedSource(prefix, day);
    await source.gate(600);
    return { day, ...source, app: appName(prefix.replaceAll('_', '-')) };
  }

  function config(view: string, store: string, schedule: Parameters<typeof testSchedule>[0] = {}): unknown {
    return scenarioConfig(view, {
      storeSchema: store,
      overrides: {
        baseline: { window: { type: 'trailing', days: BASELINE_DAYS } },
        schedule: testSchedule(schedule),
        http: { host: '127.0.0.1', port: 0 },
      },
    });
  }

  /** Waits until a COPY of this service's source sleeps in the gate. */
  async function sleepingCopy(appName: string): Promise<void> {
    await until('a COPY sleeping in the gate', 30_000, async () => {
      const r = await suite.admin.query(`SELECT 1 FROM pg_stat_activity WHERE application_name = $1 AND state = 'active' AND query ILIKE 'copy%' AND wait_event = 'PgSleep'`, [appName]);
      return (r.rowCount ?? 0) > 0 ? true : undefined;
    }, 100);
  }

  async function runsOf(store: string): Promise<{ outcome: string; error: string | null }[]> {
    return (await suite.admin.query<{ outcome: string; error: string | null }>(`SELECT outcome, error FROM "${store}".runs ORDER BY id`)).rows;
  }

  it('SIGTERM during a long statement: the statement is cancelled, the process exits within the grace, the run is recorded interrupted', async () => {
    const { day, view, store, gate, app } = await closedGate('stop_term');
    const svc = await startService({ config: config(view, store, { shutdownGraceSeconds: 2 }), sourceUrl: withApplicationName(url!, app), storeUrl: url! });
    await sleepingCopy(app);
    const sent = Date.now();
    const exit = await svc.stop(30_000);
    const stoppedAfterMs = Date.now() - sent;
    expect(exit).toEqual({ code: 0, signal: null });
    // Within the 2 s grace (plus process start-up of nothing: the timer starts at SIGTERM).
    expect(svc.logs.some((l) => l.msg === 'aborting the run in progress')).toBe(true);
    expect(svc.logs.some((l) => l.msg === 'run interrupted' && l['runDate'] === day)).toBe(true);
    expect(svc.logs.some((l) => l.msg === 'run failed')).toBe(false);
    expect(await runsOf(store)).toEqual([{ outcome: 'interrupted', error: 'the service is shutting down' }]);
    // The sleeping statement is gone from the server (cancelled, not left to statement_timeout).
    const left = await suite.admin.query(`SELECT 1 FROM pg_stat_activity WHERE application_name = $1 AND state = 'active'`, [app]);
    expect(left.rowCount).toBe(0);
    console.log(`[serve-stops] SIGTERM with a COPY sleeping in pg_sleep(600): exited after ${stoppedAfterMs} ms (grace 2 s)`);

    // A restart exports the interruption as such, not as a failure that pages.
    await gate(0);
    const again = await startService({ config: config(view, store), sourceUrl: withApplicationName(url!, app), storeUrl: url! });
    await again.waitForLog('the catch-up run', (l) => l.msg === 'run completed' && l['runDate'] === day, 60_000);
    await until('the health metrics after the restart', 10_000, async () => ((await again.metric('plumbline_last_run_success')) === 1 ? true : undefined));
    expect(await again.metric('plumbline_run_interruptions_total')).toBe(1);
    expect(await again.metric('plumbline_run_failures_total')).toBe(0);
    expect(await again.metric('plumbline_runs_total')).toBe(1);
    expect(await again.stop()).toEqual({ code: 0, signal: null });
  }, 120_000);

  it('a run past schedule.runTimeoutMinutes is aborted, recorded as failed and retried', async () => {
    const { day, view, store, gate, app } = await closedGate('stop_deadline');
    // 0.05 minutes: 3 s.
    const svc = await startService({ config: config(view, store, { runTimeoutMinutes: 0.05 }), sourceUrl: withApplicationName(url!, app), storeUrl: url! });
    const failed = await svc.waitForLog('the deadline', (l) => l.msg === 'run failed' && l['runDate'] === day, 30_000);
    expect(String(failed['error'])).toBe(`the run of ${day} exceeded schedule.runTimeoutMinutes (0.05 min)`);
    await svc.waitForLog('the retry to be scheduled', (l) => l.msg === 'next attempt scheduled' && l['why'] === `run of ${day} failed`, 10_000);
    expect((await runsOf(store))[0]).toEqual({ outcome: 'failure', error: `the run of ${day} exceeded schedule.runTimeoutMinutes (0.05 min)` });
    await until('plumbline_run_failures_total 1', 10_000, async () => ((await svc.metric('plumbline_run_failures_total')) ?? 0) >= 1 ? true : undefined);
    // The source heals: a retry stores the day without anyone asking.
    await gate(0);
    await svc.waitForLog('a retry to complete', (l) => l.msg === 'run completed' && l['runDate'] === day, 60_000);
    expect(svc.logs.some((l) => l.msg === 'running due days' && l['reason'] === 'retry')).toBe(true);
    const runs = await runsOf(store);
    expect(runs.at(-1)!.outcome).toBe('success');
    expect(runs.slice(0, -1).every((r) => r.outcome === 'failure')).toBe(true);
    console.log(`[serve-stops] run deadline 3 s: ${runs.length - 1} attempt(s) aborted and recorded as failed, then the retry succeeded`);
    expect(await svc.stop()).toEqual({ code: 0, signal: null });
  }, 120_000);

  it('a half-open source connection: the run deadline gives up on the hung run, records it failed, and a retry succeeds once the path is back', async () => {
    const { day, view, store, gate, app } = await closedGate('stop_halfopen');
    const proxy = await suite.proxy();
    // The source goes through the proxy; the store does not (so the failure can be recorded).
    const svc = await startService({ config: config(view, store, { runTimeoutMinutes: 0.05 }), sourceUrl: proxy.rewrite(withApplicationName(url!, app)), storeUrl: url! });
    await sleepingCopy(app);
    const from = svc.logs.length;
    // The network path dies silently: no data, no FIN, no RST; new connections hang too.
    proxy.freeze();
    await svc.waitForLog('the hung run to be given up on', (l) => l.msg === 'the aborted run did not stop; giving up on it' && l['date'] === day, 30_000, from);
    await svc.waitForLog('the retry', (l) => l.msg === 'next attempt scheduled' && l['why'] === `run of ${day} failed`, 10_000, from);
    const failed = (await runsOf(store)).filter((r) => r.outcome === 'failure');
    expect(failed.length).toBeGreaterThanOrEqual(1);
    expect(failed[0]!.error).toBe(`the run of ${day} exceeded schedule.runTimeoutMinutes (0.05 min)`);
    // The service still answers while the run hangs.
    expect((await svc.get('/healthz')).status).toBe(200);
    // The path comes back (the dead connections are cut, as a router reboot would).
    await gate(0);
    proxy.killAll();
    proxy.thaw();
    await suite.admin.query(`SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE application_name = $1 AND state = 'active'`, [app]);
    await svc.waitForLog('a retry to store the day', (l) => l.msg === 'run completed' && l['runDate'] === day, 90_000, from);
    expect((await runsOf(store)).at(-1)!.outcome).toBe('success');
    expect(await svc.stop()).toEqual({ code: 0, signal: null });
  }, 150_000);

  it('the store goes down mid-run (the failure cannot be recorded, the leader lock cannot be asked): the retry still runs once it is back', async () => {
    const { day, view, store, gate, app } = await closedGate('stop_storedown');
    const proxy = await suite.proxy();
    const dbUrl = proxy.rewrite(withApplicationName(url!, app));
    const svc: ServiceProcess = await startService({ config: config(view, store), sourceUrl: dbUrl, storeUrl: dbUrl, echo: process.env['PLUMBLINE_TEST_ECHO'] === '1' });
    await sleepingCopy(app);
    const from = svc.logs.length;
    // PostgreSQL "goes away": every connection through the proxy is cut and new ones are refused.
    await proxy.pause();
    await svc.waitForLog('the run to fail', (l) => l.msg === 'run failed' && l['runDate'] === day, 20_000, from);
    await svc.waitForLog('the failure not to be recordable', (l) => l.msg === 'could not record the failed run', 20_000, from);
    await svc.waitForLog('the retry to wait for the store', (l) => l.msg === 'next attempt scheduled' && l['why'] === 'the store cannot be asked for the leader lock', 20_000, from);
    await gate(0);
    await proxy.resume();
    await svc.waitForLog('the day to be stored after the store came back', (l) => l.msg === 'run completed' && l['runDate'] === day, 60_000, from);
    const ran = svc.logs.slice(from).filter((l) => l.msg === 'running due days').map((l) => String(l['reason']));
    expect(ran.length).toBeGreaterThanOrEqual(1);
    expect(ran).toContain('retry');
    expect((await runsOf(store)).map((r) => r.outcome)).toEqual(['success']);
    console.log(`[serve-stops] store down mid-run: runs after it came back were started by ${JSON.stringify(ran)}`);
    expect(await svc.stop()).toEqual({ code: 0, signal: null });
  }, 120_000);
});
