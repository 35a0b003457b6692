/**
 * The daily job against a real PostgreSQL server, with an injected clock: which dates are
 * due (catch-up bounded by catchUpMaxDays, oldest first, nothing stored twice), when a
 * snapshot counts as ready (share of the baseline's mean daily rows, or a marker table),
 * and what happens to a day that is not ready: the target day waits until its deadline and
 * is then stored as a critical snapshot_missing report; an older missing day is recorded at once.
 *
 * Source data: the invented scenario of demo-data/, days 2025-06-02 .. 2025-06-12, with
 * 2025-06-09 left out (a day that never arrived) and 2025-06-12 cut to a few lists (a day
 * still being written).
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { scenarioDates, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import { openRuntime, type Runtime } from '../../src/runtime.ts';
import type { Config, ConfigInput } from '../../src/config/index.ts';
import { silentLogger } from '../../src/log.ts';
import { recordMissingSnapshot, runDay } from '../../src/run/index.ts';
import { checkReadiness, dailyJob, datesDue, type JobDeps } from '../../src/scheduler/index.ts';
import { migrate, Store } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const url = testDatabaseUrl();

const SCENARIO: ScenarioOptions = { startDate: '2025-06-02', days: 11, listsPerDay: 40, meanListSize: 8, seed: 11 };
const NEVER_ARRIVED = '2025-06-09';
const PARTIAL = '2025-06-12';
/** Lists kept of the partial day (of about 40). */
const PARTIAL_LISTS = 5;

/** An instant on a given UTC date at 06:30, the default schedule. */
const at = (date: string, time = '06:30:00'): Date => new Date(`${date}T${time}Z`);

describe.skipIf(url === undefined)('the daily job on a PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const sourceSchema = uniqueSchema('job_src');
  const storeSchemas: string[] = [];
  const table = `${sourceSchema}.impressions`;
  const markerTable = `${sourceSchema}.snapshot_done`;
  let admin: pg.Client;
  let rt: Runtime;

  function cfg(overrides: Partial<ConfigInput> = {}): Config {
    return scenarioConfig(table, { storeSchema: 'unused', overrides: { baseline: { window: { type: 'trailing', days: 7 } }, ...overrides } });
  }

  /** A store of its own (a fresh schema), so each part starts from a known history. */
  async function freshStore(): Promise<Store> {
    const schema = uniqueSchema('job_store');
    storeSchemas.push(schema);
    await migrate(rt.storePool, schema);
    return new Store(rt.storePool, schema);
  }

  function deps(config: Config, store: Store, now: Date): JobDeps {
    return { config, source: rt.source, store, log: silentLogger, now: () => now };
  }

  async function rowsOn(date: string): Promise<number> {
    const r = await admin.query<{ n: string }>(`SELECT count(*)::text AS n FROM ${table} WHERE snapshot_date = $1::date`, [date]);
    return Number(r.rows[0]!.n);
  }

  /** Mean rows per day over the days of [from, to] that have rows (what readiness compares with). */
  async function meanRows(from: string, to: string): Promise<number> {
    const r = await admin.query<{ mean: string }>(
      `SELECT avg(n)::text AS mean FROM (SELECT count(*) AS n FROM ${table} WHERE snapshot_date BETWEEN $1::date AND $2::date GROUP BY snapshot_date) d`,
      [from, to],
    );
    return Number(r.rows[0]!.mean);
  }

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await loadScenario(admin, { table, layout: 'wide', scenario: SCENARIO, dates: scenarioDates(SCENARIO).filter((d) => d !== NEVER_ARRIVED) });
    // The partial day: only its first few lists have arrived.
    await admin.query(
      `DELETE FROM ${table} WHERE snapshot_date = $1::date
         AND list_id NOT IN (SELECT DISTINCT list_id FROM ${table} WHERE snapshot_date = $1::date ORDER BY list_id LIMIT ${PARTIAL_LISTS})`,
      [PARTIAL],
    );
    await admin.query(`CREATE TABLE ${markerTable} (snapshot_date date NOT NULL)`);
    rt = openRuntime(cfg(), silentLogger, { PLUMBLINE_SOURCE_URL: url });
  });

  afterAll(async () => {
    await rt?.close();
    for (const s of [sourceSchema, ...storeSchemas]) await admin?.query(`DROP SCHEMA IF EXISTS "${s}" CASCADE`);
    await admin?.end();
  });

  describe('datesDue', () => {
    it('with nothing stored, only the target day (the run date minus lagDays) is due', async () => {
      const store = await freshStore();
      expect(await datesDue(deps(cfg(), store, at('2025-06-12')), at('2025-06-12'))).toEqual(['2025-06-11']);
      // lagDays 0: the run date itself.
      expect(await datesDue(deps(cfg({ schedule: { lagDays: 0 } }), store, at('2025-06-12')), at('2025-06-12'))).toEqual(['2025-06-12']);
    });

    it('takes "today" in the configured time zone', async () => {
      const store = await freshStore();
      const now = new Date('2025-06-11T12:00:00Z'); // already 2025-06-12 02:00 at UTC+14
      expect(await datesDue(deps(cfg(), store, now), now)).toEqual(['2025-06-10']);
      expect(await datesDue(deps(cfg({ schedule: { timezone: 'Pacific/Kiritimati' } }), store, now), now)).toEqual(['2025-06-11']);
    });

    it('catches up the missed days after the newest stored one, oldest first, at most catchUpMaxDays of them', async () => {
      const store = await freshStore();
      const config = cfg({ schedule: { catchUpMaxDays: 3 } });
      await recordMissingSnapshot(deps(config, store, at('2025-06-03')), '2025-06-02', 'test history');
      const now = at('2025-06-12');
      // Newest stored 06-02, target 06-11: of the eight missed days, the three before the target, and the target.
      expect(await datesDue(deps(config, store, now), now)).toEqual(['2025-06-08', '2025-06-09', '2025-06-10', '2025-06-11']);
      // With a wider bound every missed day is due.
      expect(await datesDue(deps(cfg({ schedule: { catchUpMaxDays: 30 } }), store, now), now)).toEqual(scenarioDates(SCENARIO).slice(1, 10));
      // catchUpMaxDays 0: no catch-up at all.
      expect(await datesDue(deps(cfg({ schedule: { catchUpMaxDays: 0 } }), store, now), now)).toEqual(['2025-06-11']);
      // Once 06-09 is stored, the days up to it are no longer due.
      await recordMissingSnapshot(deps(config, store, now), '2025-06-09', 'test history');
      expect(await datesDue(deps(config, store, now), now)).toEqual(['2025-06-10', '2025-06-11']);
    });

    it('never runs a stored day again', async () => {
      const store = await freshStore();
      const now = at('2025-06-12');
      await recordMissingSnapshot(deps(cfg(), store, now), '2025-06-11', 'test history');
      expect(await datesDue(deps(cfg(), store, now), now)).toEqual([]);
      // A newer day stored by a back-fill does not hide a target that is not stored yet.
      const other = await freshStore();
      await recordMissingSnapshot(deps(cfg(), other, now), '2025-06-20', 'test history');
      expect(await datesDue(deps(cfg(), other, now), now)).toEqual(['2025-06-11']);
    });
  });

  describe('checkReadiness', () => {
    it('a complete day is ready: it has at least minRowFraction of the baseline mean', async () => {
      const store = await freshStore();
      const rows = await rowsOn('2025-06-11');
      const needed = Math.ceil((await meanRows('2025-06-04', '2025-06-10')) * 0.5);
      expect(rows).toBeGreaterThanOrEqual(needed);
      expect(await checkReadiness(deps(cfg(), store, at('2025-06-12')), '2025-06-11')).toEqual({ ready: true, rows, reason: `${rows} rows (at least ${needed})` });
    });

    it('a day still being written waits until it has minRowFraction of the baseline mean', async () => {
      const store = await freshStore();
      const rows = await rowsOn(PARTIAL);
      const mean = await meanRows('2025-06-05', '2025-06-11');
      expect(rows).toBeGreaterThan(0);
      expect(rows).toBeLessThan(mean * 0.5); // the premise of this test
      const r = await checkReadiness(deps(cfg(), store, at('2025-06-13')), PARTIAL);
      expect(r).toEqual({ ready: false, rows, reason: `${rows} rows so far, waiting for ${Math.ceil(mean * 0.5)} (0.5 x the baseline mean)` });
      // A lower fraction accepts the same rows.
      const low = rows / mean;
      const lenient = cfg({ schedule: { readiness: { minRowFraction: Math.floor(low * 100) / 100 } } });
      expect((await checkReadiness(deps(lenient, store, at('2025-06-13')), PARTIAL)).ready).toBe(true);
    });

    it('a day without rows is never ready, even with minRowFraction 0', async () => {
      const store = await freshStore();
      const r = await checkReadiness(deps(cfg({ schedule: { readiness: { minRowFraction: 0 } } }), store, at('2025-06-10')), NEVER_ARRIVED);
      expect(r.ready).toBe(false);
      expect(r.rows).toBe(0);
    });

    it('the first day, without any baseline yet, is ready once it has rows', async () => {
      const store = await freshStore();
      const rows = await rowsOn('2025-06-02');
      expect(await checkReadiness(deps(cfg(), store, at('2025-06-03')), '2025-06-02')).toEqual({ ready: true, rows, reason: `${rows} rows (no baseline yet)` });
      expect(await checkReadiness(deps(cfg(), store, at('2025-06-02')), '2025-06-01')).toEqual({ ready: false, rows: 0, reason: 'no rows yet' });
    });

    it('with a marker table, the marker row decides, whatever the row count', async () => {
      const store = await freshStore();
      const config = cfg({ schedule: { readiness: { markerTable, markerDateColumn: 'snapshot_date' } } });
      const complete = await checkReadiness(deps(config, store, at('2025-06-12')), '2025-06-11');
      expect(complete).toEqual({ ready: false, rows: await rowsOn('2025-06-11'), reason: `no row for 2025-06-11 in ${markerTable} yet` });
      await admin.query(`INSERT INTO ${markerTable} (snapshot_date) VALUES ('2025-06-11'), ($1::date)`, [PARTIAL]);
      expect(await checkReadiness(deps(config, store, at('2025-06-12')), '2025-06-11')).toMatchObject({ ready: true, reason: 'marker row present' });
      // The upstream job says the partial day is done: it is evaluated as it is.
      expect(await checkReadiness(deps(config, store, at('2025-06-13')), PARTIAL)).toMatchObject({ ready: true, rows: await rowsOn(PARTIAL) });
    });

    // Regression: a misspelt marker table or column failed as a raw SQL error (42P01 / 42703).
    it('names a marker table or date column that does not exist by its config path', async () => {
      const store = await freshStore();
      const noTable = cfg({ schedule: { readiness: { markerTable: `${sourceSchema}.snapshot_finished` } } });
      await expect(checkReadiness(deps(noTable, store, at('2025-06-12')), '2025-06-11')).rejects.toMatchObject({
        name: 'ConfigError',
        problems: [`schedule.readiness.markerTable: table or view "${sourceSchema}.snapshot_finished" does not exist (or this role cannot see it)`],
      });
      const noColumn = cfg({ schedule: { readiness: { markerTable, markerDateColumn: 'day' } } });
      await expect(checkReadiness(deps(noColumn, store, at('2025-06-12')), '2025-06-11')).rejects.toMatchObject({
        name: 'ConfigError',
        problems: [`schedule.readiness.markerDateColumn: column "day" does not exist in ${markerTable}`],
      });
    });
  });

  describe('dailyJob', () => {
    it('records an older missing day at once, runs the ready days, then lets the target wait until its deadline', async () => {
      const store = await freshStore();
      const config = cfg();
      await runDay(deps(config, store, at('2025-06-09')), '2025-06-08');

      // 06-12 06:30: target 06-11; 06-09 never arrived, 06-10 and 06-11 are complete.
      const first = await dailyJob(deps(config, store, at('2025-06-12')), at('2025-06-12'), { deadlinePassed: false });
      expect(first.map((o) => [o.date, o.outcome])).toEqual([
        ['2025-06-09', 'missing'],
        ['2025-06-10', 'stored'],
        ['2025-06-11', 'stored'],
      ]);
      const missing = await store.reportFor(NEVER_ARRIVED);
      expect(missing).not.toBeNull();
      expect(missing!.status).toBe('critical');
      expect(missing!.findings.map((f) => [f.check, f.status, f.alert.alerting])).toEqual([['snapshot_missing', 'critical', true]]);
      expect(missing!.findings[0]!.summary).toMatch(/^no snapshot rows for 2025-06-09: not ready by its deadline: 0 rows so far/);
      for (const d of ['2025-06-10', '2025-06-11']) {
        const report = await store.reportFor(d);
        expect(report!.current.rows).toBe(await rowsOn(d));
        expect(report!.findings.length).toBeGreaterThan(10);
      }

      // 06-13 06:30: the target 06-12 has a few lists only. Before its deadline it waits, and nothing is stored.
      const now = at('2025-06-13');
      const waiting = await dailyJob(deps(config, store, now), now, { deadlinePassed: false });
      expect(waiting).toEqual([{ date: PARTIAL, outcome: 'waiting', reason: expect.stringMatching(/ rows so far, waiting for \d+/) }]);
      expect(await store.reportFor(PARTIAL)).toBeNull();
      expect(await store.storedDates('2025-06-01', '2025-06-30')).toEqual(['2025-06-08', '2025-06-09', '2025-06-10', '2025-06-11']);

      // After the deadline it becomes a stored critical snapshot_missing report, alerting at once.
      const late = at('2025-06-13', '12:30:00');
      const afterDeadline = await dailyJob(deps(config, store, late), late, { deadlinePassed: true });
      expect(afterDeadline.map((o) => [o.date, o.outcome])).toEqual([[PARTIAL, 'missing']]);
      const report = await store.reportFor(PARTIAL);
      expect(report).toMatchObject({ runDate: PARTIAL, status: 'critical', finishedAt: late.toISOString() });
      expect(report!.findings).toHaveLength(1);
      expect(report!.findings[0]).toMatchObject({ feature: null, check: 'snapshot_missing', status: 'critical', alert: { alerting: true, level: 'critical', since: PARTIAL } });

      // Nothing is due any more that day.
      expect(await dailyJob(deps(config, store, late), late, { deadlinePassed: true })).toEqual([]);
    });

    it('stops at the first failure, so no day is stored behind a broken one', async () => {
      const store = await freshStore();
      const good = cfg();
      await recordMissingSnapshot(deps(good, store, at('2025-06-10')), NEVER_ARRIVED, 'test history');
      const broken: Config = { ...good, features: [{ ...good.features[0]!, column: 'no_such_column' }, ...good.features.slice(1)] };
      const out = await dailyJob(deps(broken, store, at('2025-06-12')), at('2025-06-12'), { deadlinePassed: false });
      expect(out.map((o) => [o.date, o.outcome])).toEqual([['2025-06-10', 'failed']]);
      const failed = out[0]!;
      expect(failed.outcome === 'failed' && (failed.error as Error).name).toBe('ConfigError');
      expect(await store.storedDates('2025-06-01', '2025-06-30')).toEqual([NEVER_ARRIVED]);
    });

    it('stops between days once its signal is aborted', async () => {
      const store = await freshStore();
      await recordMissingSnapshot(deps(cfg(), store, at('2025-06-10')), NEVER_ARRIVED, 'test history');
      const controller = new AbortController();
      controller.abort();
      const out = await dailyJob({ ...deps(cfg(), store, at('2025-06-12')), signal: controller.signal }, at('2025-06-12'), { deadlinePassed: false });
      expect(out).toEqual([]);
      expect(await store.storedDates('2025-06-10', '2025-06-11')).toEqual([]);
    });
  });
});
