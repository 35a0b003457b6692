/**
 * A day end to end against a real PostgreSQL server: the invented scenario of demo-data/
 * with one injected fault per day, each of which must be caught; clean days with weekly
 * seasonality and noise must stay quiet; failed runs must leave the store as it was.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, scenarioDates } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import { openRuntime, type Runtime } from '../../src/runtime.ts';
import { silentLogger } from '../../src/log.ts';
import type { Finding, Report } from '../../src/report/index.ts';
import { recordMissingSnapshot, runDay } from '../../src/run/index.ts';
import { migrate } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { BASELINE_DAYS, FAULTS, SCENARIO, START, faultDay } from '../support/fault-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const url = testDatabaseUrl();

// SCENARIO: 14 clean days from START (a Monday), then FAULTS, one fault a day, each with the
// finding that must catch it (tests/support/fault-days.ts, shared with pushdown.test.ts).

const LEVEL = { ok: 0, warn: 1, critical: 2 } as const;

function find(report: Report, feature: string | null, check: string, rule?: string): Finding | undefined {
  return report.findings.find((f) => f.feature === feature && f.check === check && (rule === undefined || f.rule === rule));
}

describe.skipIf(url === undefined)('run a day on a PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const sourceSchema = uniqueSchema('rd_src');
  const storeSchema = uniqueSchema('rd_store');
  const table = `${sourceSchema}.impressions`;
  const config = scenarioConfig(table, { storeSchema, overrides: { baseline: { window: { type: 'trailing', days: BASELINE_DAYS } } } });
  let rt: Runtime;
  let admin: pg.Client;
  const reports = new Map<string, Report>();

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await loadScenario(admin, { table, layout: 'wide', scenario: SCENARIO });
    rt = openRuntime(config, silentLogger, { PLUMBLINE_SOURCE_URL: url });
    await migrate(rt.storePool, storeSchema);
    for (const { plan } of FAULTS) {
      const { report } = await runDay({ config, source: rt.source, store: rt.store, log: silentLogger }, plan.date);
      reports.set(plan.date, report);
    }
  });

  afterAll(async () => {
    await rt?.close();
    await admin?.query(`DROP SCHEMA IF EXISTS "${sourceSchema}" CASCADE; DROP SCHEMA IF EXISTS "${storeSchema}" CASCADE`);
    await admin?.end();
  });

  it.each(FAULTS.map((f) => [f.plan.kind, f] as const))('catches %s', (_kind, { plan, expect: want }) => {
    const report = reports.get(plan.date)!;
    const finding = find(report, want.feature, want.check, want.rule);
    expect(finding, `${want.feature ?? 'dataset'} ${want.check} on ${plan.date}`).toBeDefined();
    expect(LEVEL[finding!.status]).toBeGreaterThanOrEqual(LEVEL[want.atLeast]);
    expect(report.status).not.toBe('ok');
  });

  it('pages on the first day of every break that reaches critical, and says by which rule', () => {
    for (const { plan, expect: want } of FAULTS) {
      const f = find(reports.get(plan.date)!, want.feature, want.check, want.rule)!;
      if (f.status !== 'critical') continue;
      expect(f.alert, `${plan.kind}: ${f.summary}`).toMatchObject({ alerting: true, level: 'critical', consecutiveRuns: 1 });
      expect(f.evidence['alertRule']).toBe(f.alert.rule);
    }
    // Drift waits for two runs unless far beyond critical: the unit change (PSI) and the new category (30 % of rows) are.
    const psi = find(reports.get(faultDay(1))!, 'price', 'psi')!;
    expect(psi.alert.rule).toBe('immediate');
    const cat = find(reports.get(faultDay(7))!, 'plant_family', 'new_category_ratio')!;
    expect(cat.alert.rule).toBe('immediate');
    const overflow = find(reports.get(faultDay(10))!, 'review_count', 'extreme_value_ratio')!;
    expect(overflow.evidence['mostExtreme']).toBe(1e308);
  });

  it('does not page on the first day of a borderline drift warning', () => {
    // A 0.5 sd shift: KS D near 2 Phi(0.25) - 1 = 0.197, at warn (0.1) and under critical (0.2).
    const ks = find(reports.get(faultDay(0))!, 'semantic_similarity', 'ks')!;
    expect(ks.status, ks.summary).toBe('warn');
    expect(ks.alert).toMatchObject({ alerting: false, consecutiveRuns: 1 });
    // Every drift finding at warn on the fault days waited for a second run.
    for (const r of reports.values()) {
      for (const f of r.findings.filter((x) => (x.check === 'psi' || x.check === 'ks') && x.status === 'warn')) {
        expect(f.alert.alerting && f.alert.consecutiveRuns < 2, `${r.runDate} ${f.feature} ${f.check}`).toBe(false);
      }
    }
  });

  it('keeps clean days with weekly seasonality quiet: no critical finding, few warnings', async () => {
    // The second week of the scenario, each day against the clean days before it (window 7).
    const shortConfig = scenarioConfig(table, { storeSchema, overrides: { baseline: { window: { type: 'trailing', days: 7 } } } });
    const clean = scenarioDates(SCENARIO).slice(7, BASELINE_DAYS);
    let warnings = 0;
    let checks = 0;
    for (const date of clean) {
      const { report } = await runDay({ config: shortConfig, source: rt.source, store: rt.store, log: silentLogger }, date);
      const critical = report.findings.filter((f) => f.status === 'critical');
      expect(critical.map((f) => `${date} ${f.feature} ${f.check}: ${f.summary}`)).toEqual([]);
      warnings += report.findings.filter((f) => f.status === 'warn').length;
      checks += report.findings.length;
    }
    // A warning is a "look when convenient"; on clean data they must stay rare (< 2 % of checks).
    expect(warnings / checks).toBeLessThan(0.02);
  });

  it('with adaptive thresholds (learned from the stored baseline days): clean days stay quiet, drift faults are still caught', async () => {
    const adaptive = (days: number): typeof config =>
      scenarioConfig(table, { storeSchema, overrides: { baseline: { window: { type: 'trailing', days } }, thresholds: { adaptive: { enabled: true } } } });
    const clean = scenarioDates(SCENARIO).slice(7, BASELINE_DAYS);
    let warnings = 0;
    let drift = 0;
    let learned = 0;
    for (const date of clean) {
      const { report } = await runDay({ config: adaptive(7), source: rt.source, store: rt.store, log: silentLogger }, date);
      for (const f of report.findings.filter((x) => x.check === 'psi' || x.check === 'ks')) {
        drift++;
        if (f.status !== 'ok') warnings++;
        if (f.thresholds.type === 'above' && f.thresholds.learned === true) {
          learned++;
          expect(f.evidence['learnedThreshold']).toMatchObject({ method: 'leave_one_out', days: 7 });
        }
      }
    }
    expect(learned).toBe(drift);
    expect(warnings / drift).toBeLessThanOrEqual(0.01);
    // The baseline (and its day-to-day variation) came back from the store for the fault days.
    for (const i of [0, 1, 7]) {
      const { plan, expect: want } = FAULTS[i]!;
      const { report } = await runDay({ config: adaptive(BASELINE_DAYS), source: rt.source, store: rt.store, log: silentLogger }, plan.date);
      const f = find(report, want.feature, want.check, want.rule)!;
      expect(LEVEL[f.status], `${plan.kind}: ${f.summary}`).toBeGreaterThanOrEqual(LEVEL[want.atLeast]);
    }
  });

  it('counts null list ids, lists of one item and duplicated items instead of failing', async () => {
    const date = addDays(START, 60);
    const cols = 'snapshot_date, list_id, item_id, position, clicked, model_score, text_match, text_match_norm, semantic_similarity, price, price_z, popularity_rank, click_share, review_count, seller_rating, listing_age_days, photo_quality, query_length, ships_free, plant_family';
    // The day before is a clean copy too: a baseline day to rise over (without any, the ratios say "no baseline yet").
    for (const d of [addDays(date, -1), date]) {
      await admin.query(
        `INSERT INTO ${table} (${cols}) SELECT $1::date, list_id, item_id, position, clicked, model_score, text_match, text_match_norm, semantic_similarity, price, price_z, popularity_rank, click_share, review_count, seller_rating, listing_age_days, photo_quality, query_length, ships_free, plant_family FROM ${table} WHERE snapshot_date = $2::date`,
        [d, faultDay(0)],
      );
    }
    await admin.query(`UPDATE ${table} SET list_id = NULL WHERE snapshot_date = $1::date AND position = 3`, [date]);
    await admin.query(`INSERT INTO ${table} (${cols}) VALUES ($1::date, 'solo-list', 'solo-item', 1, 0, 0.5, 1, 0, 0, 10, 0, 1, 1, 3, 4.5, 10, 0.5, 3, 1, 'fern')`, [date]);
    const { report } = await runDay({ config, source: rt.source, store: rt.store, log: silentLogger }, date);
    const truth = await admin.query<{ n: string }>(`SELECT count(*)::text AS n FROM ${table} WHERE snapshot_date = $1::date AND list_id IS NULL`, [date]);
    expect(Number(truth.rows[0]!.n)).toBeGreaterThan(100);
    const nullIds = find(report, null, 'null_list_id_ratio')!;
    expect(nullIds.status).toBe('critical');
    expect(nullIds.evidence['rows']).toBe(Number(truth.rows[0]!.n));
    const singles = find(report, null, 'singleton_list_ratio')!;
    expect(singles.evidence['lists']).toBeGreaterThanOrEqual(1);
  });

  it('stores a critical snapshot_missing finding for a day without rows', async () => {
    const date = addDays(START, 90);
    const { report } = await runDay({ config, source: rt.source, store: rt.store, log: silentLogger }, date);
    expect(report.status).toBe('critical');
    expect(report.findings.map((f) => f.check)).toEqual(['snapshot_missing']);
    const late = await recordMissingSnapshot({ config, source: rt.source, store: rt.store, log: silentLogger }, addDays(date, 1), 'not ready by its deadline');
    expect(late.findings[0]!.summary).toContain('not ready by its deadline');
  });

  it('leaves every stored result unchanged when a run fails midway (connection killed during the read)', async () => {
    const date = FAULTS[2]!.plan.date;
    const before = await rt.store.reportFor(date);
    expect(before).not.toBeNull();
    const statsBefore = await rt.store.runStats();
    const kept = async (): Promise<string[]> =>
      (await admin.query<{ n: string }>(`SELECT (SELECT count(*) FROM "${storeSchema}".day_profiles)::text || ' ' || (SELECT count(*) FROM "${storeSchema}".baselines)::text AS n`)).rows.map((r) => r.n);
    const keptBefore = await kept();
    // A view that pauses before its rows, so the read is surely in flight when it is killed.
    const slow = `${sourceSchema}.slow_impressions`;
    await admin.query(`CREATE VIEW ${slow} AS SELECT i.* FROM ${table} i CROSS JOIN (SELECT pg_sleep(2)) AS pause`);
    const slowConfig = { ...config, source: { ...config.source, table: slow } };
    let killed = 0;
    const killer = setInterval(() => {
      void admin
        // Only this test's read (its view is in a schema of its own): other test files share the server.
        .query<{ ok: boolean }>(`SELECT pg_terminate_backend(pid) AS ok FROM pg_stat_activity WHERE application_name = 'plumbline-source' AND query LIKE 'COPY%' AND query LIKE $1`, [`%${sourceSchema}%`])
        .then((r) => (killed += r.rows.filter((x) => x.ok).length));
    }, 50);
    try {
      await expect(runDay({ config: slowConfig, source: rt.source, store: rt.store, log: silentLogger }, date)).rejects.toThrow();
    } finally {
      clearInterval(killer);
    }
    expect(killed).toBeGreaterThanOrEqual(1);
    expect(await rt.store.reportFor(date)).toEqual(before);
    const statsAfter = await rt.store.runStats();
    expect(statsAfter.failures).toBe(statsBefore.failures + 1);
    expect(statsAfter.successes).toBe(statsBefore.successes);
    // No day profile or baseline of the failed run (they are saved with its report, in one transaction).
    expect(await kept()).toEqual(keptBefore);
  });

  it('names the missing column and its config path', async () => {
    const broken = scenarioConfig(table, { storeSchema, overrides: {} });
    broken.features[3] = { ...broken.features[3]!, column: 'price_in_cents' };
    await expect(runDay({ config: broken, source: rt.source, store: rt.store, log: silentLogger }, faultDay(0))).rejects.toMatchObject({
      name: 'ConfigError',
      problems: [expect.stringMatching(/^features\[3\]\.column: column "price_in_cents" does not exist/)],
    });
  });
});

