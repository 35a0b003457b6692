/**
 * A store that runs for years, on a real PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL):
 * retention (Store.prune, called by the daily job after a stored day) and the run's single
 * transaction (a run that fails after profiling leaves no day profile or baseline behind).
 *
 * Source data: the invented marketplace scenario of demo-data/, small (30 lists a day).
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { scenarioDates, type ScenarioOptions } from '../../demo-data/scenario.ts';
import type { Config, ConfigInput } from '../../src/config/index.ts';
import { silentLogger } from '../../src/log.ts';
import type { Finding } from '../../src/report/index.ts';
import { addDays, recordMissingSnapshot, runDay } from '../../src/run/index.ts';
import { openRuntime, type Runtime } from '../../src/runtime.ts';
import { dailyJob, type JobDeps } from '../../src/scheduler/index.ts';
import { migrate, Store } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const url = testDatabaseUrl();
const SCENARIO: ScenarioOptions = { startDate: '2025-03-03', days: 16, listsPerDay: 30, meanListSize: 6, seed: 7 };
const DATES = scenarioDates(SCENARIO);

/** 06:30 UTC on the day after `date`: the default schedule's run for `date`. */
const runFor = (date: string): Date => new Date(`${addDays(date, 1)}T06:30:00Z`);

describe.skipIf(url === undefined)('store retention and run atomicity on a PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const sourceSchema = uniqueSchema('ret_src');
  const table = `${sourceSchema}.impressions`;
  const schemas: string[] = [];
  let admin: pg.Client;
  let rt: Runtime;

  function cfg(retention: NonNullable<NonNullable<ConfigInput['store']>['retention']>): Config {
    return scenarioConfig(table, {
      storeSchema: 'unused',
      overrides: {
        baseline: { window: { type: 'trailing', days: 3 }, sampleSize: 1000 },
        schedule: { catchUpMaxDays: 0 },
        store: { schema: 'unused', retention },
      },
    });
  }

  async function freshStore(): Promise<Store> {
    const schema = uniqueSchema('ret_store');
    schemas.push(schema);
    await migrate(rt.storePool, schema);
    return new Store(rt.storePool, schema);
  }

  function deps(config: Config, store: Store, now: Date): JobDeps {
    return { config, source: rt.source, store, log: silentLogger, now: () => now };
  }

  async function rows(store: Store, sql: string): Promise<string[]> {
    const r = await admin.query<{ v: string }>(sql.replaceAll('$S', `"${store.schema}"`));
    return r.rows.map((x) => x.v);
  }

  const strip = (f: Finding): unknown => ({ feature: f.feature, check: f.check, rule: f.rule, value: f.value, status: f.status, alert: f.alert });

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await loadScenario(admin, { table, layout: 'wide', scenario: SCENARIO });
    rt = openRuntime(cfg({}), silentLogger, { PLUMBLINE_SOURCE_URL: url });
  });

  afterAll(async () => {
    await rt?.close();
    for (const s of [sourceSchema, ...schemas]) await admin?.query(`DROP SCHEMA IF EXISTS "${s}" CASCADE`);
    await admin?.end();
  });

  it('prune deletes old runs, failures and findings, but never the two newest evaluated dates, nor the alert state', async () => {
    const store = await freshStore();
    const config = cfg({});
    const d = (date: string): JobDeps => deps(config, store, runFor(date));
    for (const date of ['2020-01-01', '2020-01-02', '2020-06-01', '2021-01-01']) await recordMissingSnapshot(d(date), date, 'test history');
    await store.recordFailure({ runDate: '2020-01-03', startedAt: '2020-01-04T06:30:00Z', finishedAt: '2020-01-04T06:31:00Z', error: 'test', configFingerprint: 'x' });
    const before = await store.alertStates();
    expect(before[0]!.consecutiveRuns).toBe(4);

    // 2024-01-01 minus 30 days: every date is older, but the two newest evaluated ones stay.
    const deleted = await store.prune({ reportDays: 30, dayProfileDays: 30, keepDayProfiles: null, baselinesKept: 1 }, '2024-01-01');
    expect(deleted).toEqual({ runs: 3, findings: 2, dayProfiles: 0, baselines: 0 });
    expect(await rows(store, `SELECT DISTINCT run_date::text AS v FROM $S.runs ORDER BY 1`)).toEqual(['2020-06-01', '2021-01-01']);
    expect(await rows(store, `SELECT DISTINCT run_date::text AS v FROM $S.findings ORDER BY 1`)).toEqual(['2020-06-01', '2021-01-01']);
    expect(await store.alertStates()).toEqual(before);
    // The next run starts its alert state from the newest kept date, and so does a re-run of that date.
    expect((await store.previousFindings('2024-01-01'))?.runDate).toBe('2021-01-01');
    expect((await store.previousFindings('2021-01-01'))?.runDate).toBe('2020-06-01');
    const next = await recordMissingSnapshot(d('2024-01-01'), '2024-01-01', 'test history');
    expect(next.findings[0]!.alert.consecutiveRuns).toBe(5);

    // A run stored for a date after today (a clock that was wrong) does not push the newest
    // dates up to today out of the two that are kept.
    const future = await freshStore();
    const f = (date: string): JobDeps => deps(config, future, runFor(date));
    for (const date of ['2020-01-01', '2020-06-01', '2021-01-01', '2030-01-01']) await recordMissingSnapshot(f(date), date, 'test history');
    await future.prune({ reportDays: 30, dayProfileDays: 30, keepDayProfiles: null, baselinesKept: 1 }, '2024-01-01');
    expect(await rows(future, `SELECT DISTINCT run_date::text AS v FROM $S.runs ORDER BY 1`)).toEqual(['2020-06-01', '2021-01-01', '2030-01-01']);

    // Inside the window nothing goes.
    expect(await store.prune({ reportDays: 10_000, dayProfileDays: 10_000, keepDayProfiles: null, baselinesKept: 1 }, '2024-01-02')).toEqual({ runs: 0, findings: 0, dayProfiles: 0, baselines: 0 });
    await expect(store.prune({ reportDays: 0, dayProfileDays: 1, keepDayProfiles: null, baselinesKept: 1 }, '2024-01-02')).rejects.toThrow(/reportDays must be an integer >= 1/);
  });

  it('the daily job prunes after each stored day: totals stop growing, and the findings equal those of a store that keeps everything', async () => {
    const kept = await freshStore();
    const pruned = await freshStore();
    const keepAll = cfg({ enabled: false });
    const bounded = cfg({ reportDays: 5, dayProfileMinDays: 1, baselinesKept: 1 });
    const evaluated = DATES.slice(3);
    for (const date of evaluated) {
      const a = await dailyJob(deps(keepAll, kept, runFor(date)), runFor(date), { deadlinePassed: true });
      const b = await dailyJob(deps(bounded, pruned, runFor(date)), runFor(date), { deadlinePassed: true });
      expect(a.map((o) => o.outcome)).toEqual(['stored']);
      expect(b.map((o) => o.outcome)).toEqual(['stored']);
      // Same findings and alert state, whatever was pruned before this day.
      expect(await pruned.findingsFor(date).then((f) => f.map(strip))).toEqual(await kept.findingsFor(date).then((f) => f.map(strip)));
    }
    const last = evaluated[evaluated.length - 1]!;
    const today = addDays(last, 1);
    expect(await pruned.alertStates()).toEqual(await kept.alertStates());

    // Keep-all: every evaluated day, and every day profile (3 first baseline days + the evaluated days).
    expect(await rows(kept, `SELECT count(DISTINCT run_date)::text AS v FROM $S.runs`)).toEqual([String(evaluated.length)]);
    expect(await rows(kept, `SELECT count(*)::text AS v FROM $S.day_profiles`)).toEqual([String(DATES.length)]);
    expect(await rows(kept, `SELECT count(*)::text AS v FROM $S.baselines`)).toEqual([String(evaluated.length)]);

    // Bounded: reports of dates from today - 5 on; day profiles from today - 4 (window 3 + lag 1); one baseline.
    expect(await rows(pruned, `SELECT DISTINCT run_date::text AS v FROM $S.runs ORDER BY 1`)).toEqual(evaluated.filter((x) => x >= addDays(today, -5)));
    expect(await rows(pruned, `SELECT DISTINCT run_date::text AS v FROM $S.findings ORDER BY 1`)).toEqual(evaluated.filter((x) => x >= addDays(today, -5)));
    expect(await rows(pruned, `SELECT snapshot_date::text AS v FROM $S.day_profiles ORDER BY 1`)).toEqual(DATES.filter((x) => x >= addDays(today, -4)));
    const base = await rows(pruned, `SELECT fingerprint AS v FROM $S.baselines`);
    expect(base).toEqual([(await pruned.reportFor(last))!.baseline.fingerprint]);
    expect(await rows(pruned, `SELECT count(DISTINCT baseline_id)::text AS v FROM $S.baseline_samples`)).toEqual(['1']);
  });

  it('a run that fails after profiling stores no day profile and no baseline, only its failure', async () => {
    const store = await freshStore();
    const config = cfg({});
    const date = DATES[5]!;
    // A real constraint refuses the run's findings: the failure comes inside saveRun, after the
    // day profiles and the baseline were written in the same transaction.
    await admin.query(`ALTER TABLE "${store.schema}".findings ADD CONSTRAINT refuse_for_test CHECK (false) NOT VALID`);
    await expect(runDay(deps(config, store, runFor(date)), date)).rejects.toThrow(/saving the run of .* failed: .*refuse_for_test/);
    expect(await rows(store, `SELECT count(*)::text AS v FROM $S.day_profiles`)).toEqual(['0']);
    expect(await rows(store, `SELECT count(*)::text AS v FROM $S.baselines`)).toEqual(['0']);
    expect(await rows(store, `SELECT count(*)::text AS v FROM $S.baseline_samples`)).toEqual(['0']);
    expect(await rows(store, `SELECT outcome AS v FROM $S.runs`)).toEqual(['failure']);

    await admin.query(`ALTER TABLE "${store.schema}".findings DROP CONSTRAINT refuse_for_test`);
    await runDay(deps(config, store, runFor(date)), date);
    // The three baseline days and the evaluated day, and the baseline, now that the run went through.
    expect(await rows(store, `SELECT snapshot_date::text AS v FROM $S.day_profiles ORDER BY 1`)).toEqual(DATES.slice(2, 6));
    expect(await rows(store, `SELECT count(*)::text AS v FROM $S.baselines`)).toEqual(['1']);
  });
});
