/**
 * Ranking checks end to end: faults that keep every marginal (a polarity flip inside lists,
 * a shuffle inside lists, the served order scrambled in part of the lists) loaded into a
 * real database, run by both engines. Each engine must catch each fault with a ranking
 * check and no psi/ks finding; the two engines must agree on every ranking finding; and
 * labels that mature after a day was profiled must reach the outcome checks when they lag
 * (outcome.labelLagDays).
 *
 * On PGlite both engines run too (the ranking pass is plain SQL); the server half runs when
 * PLUMBLINE_TEST_DATABASE_URL is set.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, type FaultPlan, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import type { Config } from '../../src/config/index.ts';
import { startEmbeddedPostgres, type EmbeddedPostgres } from '../../src/demo/embedded.ts';
import type { Finding, Report } from '../../src/report/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { runDays } from '../support/run-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const START = '2025-10-06'; // a Monday
const WINDOW = 14;
const day = (i: number): string => addDays(START, WINDOW + i);
const FAULTS: { plan: FaultPlan; expect: { feature: string | null; check: string } }[] = [
  { plan: { date: day(0), kind: 'polarity_flip', feature: 'semantic_similarity' }, expect: { feature: 'semantic_similarity', check: 'position_rank_correlation' } },
  { plan: { date: day(1), kind: 'shuffle_within_lists', feature: 'text_match' }, expect: { feature: 'text_match', check: 'score_rank_correlation' } },
  { plan: { date: day(2), kind: 'order_scrambled', amount: 0.3 }, expect: { feature: 'model_score', check: 'position_rank_correlation' } },
];
// Two clean days after the faults, so that a run two days later judges the scrambled day's labels.
const SCENARIO: ScenarioOptions = { startDate: START, days: WINDOW + FAULTS.length + 2, listsPerDay: 250, meanListSize: 12, seed: 5, faults: FAULTS.map((f) => f.plan) };
const RUN_DATES = FAULTS.map((f) => f.plan.date);
const RANKING = new Set(['position_rank_correlation', 'score_rank_correlation', 'mean_reciprocal_rank', 'ndcg', 'positive_position_psi']);
const key = (f: Finding): string => `${f.feature ?? 'dataset'} ${f.check}`;

type Engine = 'stream' | 'pushdown' | 'pushdown-sql';

function configFor(table: string, store: string, engine: Engine, lag = 0): Config {
  const c = scenarioConfig(table, { storeSchema: store, overrides: { baseline: { window: { type: 'trailing', days: WINDOW } } } });
  const source = { ...c.source, engine: engine === 'stream' ? ('stream' as const) : ('pushdown' as const), pushdownAssociation: engine === 'pushdown-sql' ? ('sql' as const) : ('sample' as const) };
  return { ...c, source, outcome: { ...c.outcome, labelLagDays: lag } };
}

async function withSource<T>(url: string, fn: (table: string, admin: pg.Client, stores: string[]) => Promise<T>): Promise<T> {
  const src = uniqueSchema('rk_src');
  const stores: string[] = [];
  const admin = new pg.Client({ connectionString: url });
  await admin.connect();
  try {
    await loadScenario(admin, { table: `${src}.impressions`, layout: 'wide', scenario: SCENARIO });
    return await fn(`${src}.impressions`, admin, stores);
  } finally {
    await admin.query(`DROP SCHEMA IF EXISTS "${src}" CASCADE`);
    for (const s of stores) await admin.query(`DROP SCHEMA IF EXISTS "${s}" CASCADE`);
    await admin.end();
  }
}

/**
 * The stream engine, the pushdown engine with the association in SQL, and the pushdown
 * engine with the association from its whole-list sample (which covers these small days
 * whole: daySampleCap is 28,572 rows here).
 */
async function bothEngines(url: string): Promise<Record<Engine, Map<string, Report>>> {
  return withSource(url, async (table, _admin, stores) => {
    const out = {} as Record<Engine, Map<string, Report>>;
    for (const engine of ['stream', 'pushdown', 'pushdown-sql'] as const) {
      const store = uniqueSchema(`rk_${engine.replace('-', '_')}`);
      stores.push(store);
      out[engine] = await runDays(configFor(table, store, engine), url, RUN_DATES);
    }
    return out;
  });
}

function expectCaught(reports: Map<string, Report>, engine: string): void {
  for (const f of FAULTS) {
    const r = reports.get(f.plan.date)!;
    const hit = r.findings.find((x) => x.feature === f.expect.feature && x.check === f.expect.check);
    expect(hit, `${engine} ${f.plan.kind}`).toBeDefined();
    expect(hit!.status, `${engine} ${f.plan.kind}: ${hit!.summary}`).not.toBe('ok');
    const marginal = r.findings.filter((x) => (x.check === 'psi' || x.check === 'ks') && x.status !== 'ok');
    expect(marginal.map(key), `${engine} ${f.plan.kind}`).toEqual([]);
  }
}

function expectEnginesAgree(stream: Map<string, Report>, pushdown: Map<string, Report>): number {
  let compared = 0;
  for (const d of RUN_DATES) {
    const s = stream.get(d)!.findings.filter((f) => RANKING.has(f.check));
    const p = new Map(pushdown.get(d)!.findings.filter((f) => RANKING.has(f.check)).map((f) => [key(f), f]));
    expect([...p.keys()].sort()).toEqual(s.map(key).sort());
    for (const sf of s) {
      const pf = p.get(key(sf))!;
      // Identical per-list values; per-day sums in another order (relative error ~1e-15).
      expect(pf.value, key(sf)).toBeCloseTo(sf.value, 12);
      expect(pf.status, key(sf)).toBe(sf.status);
      for (const e of ['baseline', 'noise', 'oppositeSignShare', 'noiseFloor']) {
        if (sf.evidence[e] !== undefined) expect(pf.evidence[e] as number, `${key(sf)} ${e}`).toBeCloseTo(sf.evidence[e] as number, 12);
      }
      expect(pf.evidence['lists'] ?? pf.evidence['m'], key(sf)).toBe(sf.evidence['lists'] ?? sf.evidence['m']);
      compared++;
    }
  }
  return compared;
}

describe('ranking checks on PGlite (both engines)', () => {
  let lite: EmbeddedPostgres;
  let reports: Record<Engine, Map<string, Report>>;
  beforeAll(async () => {
    lite = await startEmbeddedPostgres();
    reports = await bothEngines(lite.url);
  }, 300_000);
  afterAll(async () => {
    await lite?.stop();
  });

  it('the stream engine catches each fault with a ranking check and no marginal one', () => expectCaught(reports.stream, 'stream'));
  it('the pushdown engine catches each fault too, with the association in SQL or from its sample', () => {
    expectCaught(reports.pushdown, 'pushdown');
    expectCaught(reports['pushdown-sql'], 'pushdown-sql');
  });
  it('the engines agree on every ranking finding', () => {
    // 12 item-level numeric or binary features x (position, score), the score itself (position), 3 outcomes; per day.
    expect(expectEnginesAgree(reports.stream, reports['pushdown-sql'])).toBe(3 * (12 * 2 + 1 + 3));
    expect(expectEnginesAgree(reports.stream, reports.pushdown)).toBe(3 * (12 * 2 + 1 + 3));
  });
});

const server = testDatabaseUrl();
describe.skipIf(server === undefined)('ranking checks on the PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL)', () => {
  let reports: Record<Engine, Map<string, Report>>;
  beforeAll(async () => {
    reports = await bothEngines(server!);
  }, 300_000);

  it('both engines catch each fault with a ranking check and no marginal one', () => {
    expectCaught(reports.stream, 'stream');
    expectCaught(reports.pushdown, 'pushdown');
    expectCaught(reports['pushdown-sql'], 'pushdown-sql');
  });
  it('the engines agree on every ranking finding', () => {
    expect(expectEnginesAgree(reports.stream, reports['pushdown-sql'])).toBe(3 * (12 * 2 + 1 + 3));
    expect(expectEnginesAgree(reports.stream, reports.pushdown)).toBe(3 * (12 * 2 + 1 + 3));
  });

  it('with labels lagging two days, judges the older day with the labels it has now', async () => {
    const scrambled = day(2);
    await withSource(server!, async (table, admin, stores) => {
      const now = uniqueSchema('rk_lag0');
      const later = uniqueSchema('rk_lag2');
      stores.push(now, later);
      const mrr = (r: Report): Finding => r.findings.find((f) => f.check === 'mean_reciprocal_rank')!;
      const before = mrr((await runDays(configFor(table, now, 'stream'), server!, [scrambled])).get(scrambled)!);
      // Late clicks arrive for the scrambled day: every list's top item is clicked after all.
      await admin.query(`UPDATE ${table} SET clicked = 1 WHERE snapshot_date = $1::date AND position = 1`, [scrambled]);
      const matured = mrr((await runDays(configFor(table, now, 'stream'), server!, [scrambled])).get(scrambled)!);
      const lagged = (await runDays(configFor(table, later, 'stream', 2), server!, [addDays(scrambled, 2)])).get(addDays(scrambled, 2))!;
      const judged = mrr(lagged);
      expect(matured.value).toBeGreaterThan(before.value);
      expect(judged.evidence['outcomeDate']).toBe(scrambled);
      expect(judged.value).toBeCloseTo(matured.value, 12);
      expect(judged.evidence['baseline'] as number).toBeCloseTo(matured.evidence['baseline'] as number, 12);
      // The features are still judged on the run's own day.
      expect(lagged.findings.find((f) => f.feature === 'model_score' && f.check === 'position_rank_correlation')!.status).toBe('ok');
    });
  }, 300_000);
});
