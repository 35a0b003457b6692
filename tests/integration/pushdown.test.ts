/**
 * The two engines on the same rows of a real PostgreSQL server: `stream` (rows come to
 * Plumbline) and `pushdown` (PostgreSQL aggregates). On the invented fault scenario they must
 * give identical PSI over the same bins, identical quality, within-list and dataset ratios,
 * a pushdown KS D whose reported error bound covers the stream engine's exact D, and both
 * must catch every injected fault.
 *
 * The reference for every pushdown value is the stream engine on the same rows (its own
 * statistics are checked against published values in tests/unit/stats).
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import type { Config } from '../../src/config/index.ts';
import { fineBinsFromSorted } from '../../src/profile/index.ts';
import type { Finding, Report } from '../../src/report/index.ts';
import { planSource, readDayAggregates, refinementMap, valueCoding, widthBucketThresholds } from '../../src/source/index.ts';
import { assignBin, binEdgesFromSorted, meanOfSplitSum, type BinSpec } from '../../src/stats/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { BASELINE_DAYS, FAULTS, SCENARIO } from '../support/fault-days.ts';
import { runDays } from '../support/run-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const url = testDatabaseUrl();

// SCENARIO and FAULTS: the fault days of tests/integration/run-day.test.ts (tests/support/fault-days.ts),
// a clean 14-day baseline and then one fault a day.

/** The jsonb layout, where text in a numeric key is a type error and NaN arrives as text. */
const JSONB_START = '2025-09-01';
const JSONB_SCENARIO: ScenarioOptions = {
  startDate: JSONB_START,
  days: 9,
  listsPerDay: 60,
  meanListSize: 12,
  seed: 99,
  faults: [
    { date: addDays(JSONB_START, 7), kind: 'unit_change', feature: 'price', amount: 100 },
    { date: addDays(JSONB_START, 8), kind: 'type_error', feature: 'review_count', amount: 0.05 },
    { date: addDays(JSONB_START, 8), kind: 'null_spike', feature: 'seller_rating', amount: 0.2 },
  ],
};

const LEVEL = { ok: 0, warn: 1, critical: 2 } as const;
const QUALITY = ['null_ratio', 'nonfinite_ratio', 'type_error_ratio', 'out_of_range_ratio'];
const WITHIN_LIST = ['flat_list_ratio', 'rule_violation_ratio'];
const DATASET = ['row_count_ratio', 'list_count_ratio', 'list_size_psi', 'duplicate_item_ratio', 'position_gap_ratio', 'null_list_id_ratio', 'null_item_id_ratio', 'singleton_list_ratio', 'label_positive_ratio', 'no_positive_list_ratio', 'null_label_ratio'];

const RANKING = ['position_rank_correlation', 'score_rank_correlation', 'mean_reciprocal_rank', 'ndcg', 'positive_position_psi'];

const key = (f: Finding): string => `${f.feature ?? 'dataset'} ${f.check}${f.rule === null ? '' : ` ${f.rule}`}`;

function withEngine(config: Config, engine: 'stream' | 'pushdown', storeSchema: string): Config {
  return { ...config, source: { ...config.source, engine }, store: { ...config.store, schema: storeSchema } };
}

/** Store schemas created so far: dropped at the end even when a run failed midway. */
const createdStores: string[] = [];

/** Runs `dates` with both engines (separate stores) on one source table. */
async function bothEngines(config: Config, dates: readonly string[]): Promise<{ stream: Map<string, Report>; pushdown: Map<string, Report> }> {
  const out = { stream: new Map<string, Report>(), pushdown: new Map<string, Report>() };
  for (const engine of ['stream', 'pushdown'] as const) {
    const store = uniqueSchema(`pd_${engine}`);
    createdStores.push(store);
    out[engine] = await runDays(withEngine(config, engine, store), url!, dates);
  }
  return out;
}

/** Checks one day's two reports against each other; returns how many findings were compared. */
function expectAgreement(stream: Report, pushdown: Report): number {
  expect(pushdown.engine).toBe('pushdown');
  expect(stream.engine).toBe('stream');
  expect(pushdown.current).toEqual(stream.current);
  const s = new Map(stream.findings.map((f) => [key(f), f]));
  const p = new Map(pushdown.findings.map((f) => [key(f), f]));
  expect([...p.keys()].sort()).toEqual([...s.keys()].sort());
  for (const [k, sf] of s) {
    const pf = p.get(k)!;
    if (sf.check === 'psi') {
      // Same bins, same counts: the same PSI to the last bit, and the same per-bin evidence.
      expect(pf.value, k).toBe(sf.value);
      expect(pf.status, k).toBe(sf.status);
      expect(pf.evidence['bins'], k).toEqual(sf.evidence['bins']);
      expect(pf.evidence['noiseFloor'], k).toBe(sf.evidence['noiseFloor']);
    } else if (sf.check === 'ks') {
      // Binned D is a lower bound of the exact D; the reported bound covers the rest.
      const bound = pf.evidence['dErrorBound'] as number;
      expect(pf.evidence['ksMethod'], k).toBe('binned');
      // About FINE_BINS bins for a continuous feature; one per value for a low-cardinality one (then the bound is 0).
      expect(pf.evidence['fineBins'], k).toBeGreaterThan(k.startsWith('semantic_similarity') ? 500 : 1);
      expect(pf.value, k).toBeLessThanOrEqual(sf.value + 1e-12);
      expect(sf.value, k).toBeLessThanOrEqual(pf.value + bound + 1e-12);
      expect(pf.evidence['m'], k).toBe(sf.evidence['m']);
      expect(pf.summary, k).toContain('fine bins');
    } else if (QUALITY.includes(sf.check) || WITHIN_LIST.includes(sf.check) || DATASET.includes(sf.check) || sf.check === 'constant' || sf.check === 'new_category_ratio' || sf.check === 'distinct_ratio_drop' || sf.check === 'extreme_value_ratio' || sf.check === 'category_cardinality') {
      expect(pf.value, k).toBe(sf.value);
      expect(pf.status, k).toBe(sf.status);
      expect(pf.evidence, k).toEqual(sf.evidence);
    } else if (RANKING.includes(sf.check)) {
      // Same per-list values; per-day sums in another order (and log2 as ln / ln 2 in SQL).
      expect(pf.value, k).toBeCloseTo(sf.value, 12);
      expect(pf.status, k).toBe(sf.status);
      expect(pf.evidence['lists'] ?? pf.evidence['m'], k).toBe(sf.evidence['lists'] ?? sf.evidence['m']);
    } else {
      throw new Error(`a check this test does not compare: ${k}`);
    }
  }
  return s.size;
}

describe.skipIf(url === undefined)('pushdown engine against the stream engine (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const src = uniqueSchema('pd_src');
  const table = `${src}.impressions`;
  const jsonTable = `${src}.impressions_jsonb`;
  let admin: pg.Client;
  let wide: Awaited<ReturnType<typeof bothEngines>>;
  let jsonb: Awaited<ReturnType<typeof bothEngines>>;

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await loadScenario(admin, { table, layout: 'wide', scenario: SCENARIO });
    await loadScenario(admin, { table: jsonTable, layout: 'jsonb', scenario: JSONB_SCENARIO });
    const config = scenarioConfig(table, { storeSchema: 'unused', overrides: { baseline: { window: { type: 'trailing', days: BASELINE_DAYS } } } });
    wide = await bothEngines(config, FAULTS.map((f) => f.plan.date));
    const jsonConfig = scenarioConfig(jsonTable, { layout: 'jsonb', storeSchema: 'unused', overrides: { baseline: { window: { type: 'trailing', days: 7 } } } });
    jsonb = await bothEngines(jsonConfig, [addDays(JSONB_START, 7), addDays(JSONB_START, 8)]);
  }, 240_000);

  afterAll(async () => {
    await admin?.query([src, ...createdStores].map((s) => `DROP SCHEMA IF EXISTS "${s}" CASCADE`).join('; '));
    await admin?.end();
  });

  it.each(FAULTS.map((f) => [f.plan.kind, f] as const))('agrees with the stream engine on the day of %s', (_kind, { plan }) => {
    expect(expectAgreement(wide.stream.get(plan.date)!, wide.pushdown.get(plan.date)!)).toBeGreaterThan(50);
  });

  it.each(FAULTS.map((f) => [f.plan.kind, f] as const))('both engines catch %s', (_kind, { plan, expect: want }) => {
    for (const engine of ['stream', 'pushdown'] as const) {
      const report = wide[engine].get(plan.date)!;
      const finding = report.findings.find((f) => f.feature === want.feature && f.check === want.check && (want.rule === undefined || f.rule === want.rule));
      expect(finding, `${engine}: ${want.feature ?? 'dataset'} ${want.check}`).toBeDefined();
      expect(LEVEL[finding!.status], `${engine}: ${finding!.summary}`).toBeGreaterThanOrEqual(LEVEL[want.atLeast]);
    }
  });

  it('agrees in the jsonb layout, type errors included', () => {
    for (const d of [addDays(JSONB_START, 7), addDays(JSONB_START, 8)]) expectAgreement(jsonb.stream.get(d)!, jsonb.pushdown.get(d)!);
    const typeErrors = jsonb.pushdown.get(addDays(JSONB_START, 8))!.findings.find((f) => f.feature === 'review_count' && f.check === 'type_error_ratio');
    expect(typeErrors?.status).toBe('critical');
    expect(typeErrors?.evidence['typeErrors']).toBeGreaterThan(0);
  });

  it('counts values beyond the extreme bounds in SQL, with the exact extremes, and sums 1e308 values without overflow', async () => {
    const overflow = FAULTS.find((f) => f.plan.kind === 'overflow')!.plan.date;
    const config = scenarioConfig(table, { storeSchema: 'unused' });
    const pool = new pg.Pool({ connectionString: url, max: 1 });
    const client = await pool.connect();
    try {
      await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
      const plan = await planSource(client, config);
      const bounds = { review_count: { lower: -1, upper: 1000 } };
      const agg = await readDayAggregates(client, config, plan, overflow, { bins: null, fineBins: null, extremeBounds: bounds });
      await client.query('COMMIT');
      const truth = await admin.query<{ above: string; below: string; lo: number; hi: number }>(
        `SELECT count(*) FILTER (WHERE review_count > 1000)::text AS above, count(*) FILTER (WHERE review_count < -1)::text AS below, min(review_count) AS lo, max(review_count) AS hi FROM ${table} WHERE snapshot_date = $1::date AND review_count < 'Infinity'::float8`,
        [overflow],
      );
      const t = truth.rows[0]!;
      expect(Number(t.above)).toBeGreaterThan(100);
      const a = agg.numeric['review_count']!;
      expect(a.extreme).toEqual({ lower: -1, upper: 1000, below: Number(t.below), above: Number(t.above) });
      expect([a.min, a.max]).toEqual([t.lo, t.hi]);
      expect(a.max).toBe(1e308);
      // The float8 sum of the day would overflow (SQLSTATE 22003); the split sum keeps it, and the
      // mean, finite: the mean equals PostgreSQL's exact numeric avg over the finite values.
      const exact = await admin.query<{ mean: string }>(
        `SELECT avg(review_count::numeric)::text AS mean FROM ${table} WHERE snapshot_date = $1::date AND review_count > '-Infinity'::float8 AND review_count < 'Infinity'::float8`,
        [overflow],
      );
      const mean = meanOfSplitSum(a.sum, a.quality.finite);
      expect(Number.isFinite(mean)).toBe(true);
      expect(mean / Number(exact.rows[0]!.mean)).toBeCloseTo(1, 12);
      // A feature without bounds counts nothing beyond.
      expect(agg.numeric['price']!.extreme).toBeUndefined();
    } finally {
      client.release();
      await pool.end();
    }
  });

  it('places values in bins on the server exactly as assignBin does (right-closed intervals, point masses, -0, neighbours of edges)', async () => {
    // A baseline with a point mass at 0 (40 % zeros), ties and a spread of other values.
    const sample = Float64Array.from([...Array.from({ length: 40 }, () => 0), ...Array.from({ length: 60 }, (_, i) => (i % 20) * 0.25 - 1)]).sort();
    const coarse = binEdgesFromSorted(sample, 5);
    const fine = fineBinsFromSorted(sample, coarse);
    const probes: number[] = [-0, Number.MIN_VALUE, -Number.MIN_VALUE, -1e300, 1e300, Number.MAX_VALUE, -Number.MAX_VALUE];
    for (const e of fine.edges) probes.push(e, e + Math.abs(e) * 1e-15 + 1e-300, e - Math.abs(e) * 1e-15 - 1e-300, e + 0.1, e - 0.1);
    for (const spec of [coarse, fine] as BinSpec[]) {
      const res = await admin.query<{ b: number }>(`SELECT width_bucket(v, $2::float8[]) AS b FROM unnest($1::float8[]) WITH ORDINALITY AS t(v, i) ORDER BY i`, [probes, widthBucketThresholds(spec)]);
      expect(res.rows.map((r) => r.b)).toEqual(probes.map((x) => assignBin(spec, x)));
    }
    // Every fine bin lies in one PSI bin, and the map says which.
    const map = refinementMap(coarse, fine);
    for (const x of probes) expect(map[assignBin(fine, x)]).toBe(assignBin(coarse, x));

    // One width_bucket call also tells NaN, the infinities and out-of-range values apart.
    const range = { min: -0.5, max: 3 };
    const coding = valueCoding(fine, range);
    const all = [...probes, Number.NaN, Number.POSITIVE_INFINITY, Number.NEGATIVE_INFINITY, -0.5, 3, 3.0000000000000004, -0.5000000000000001];
    const res = await admin.query<{ b: number }>(`SELECT width_bucket(v, $2::float8[]) AS b FROM unnest($1::float8[]) WITH ORDINALITY AS t(v, i) ORDER BY i`, [all, coding.thresholds]);
    const expected = all.map((x) =>
      Number.isNaN(x) ? { kind: 'nan' } : x === Infinity ? { kind: 'posInf' } : x === -Infinity ? { kind: 'negInf' } : { kind: 'finite', bin: assignBin(fine, x), outOfRange: x < range.min || x > range.max },
    );
    expect(res.rows.map((r) => coding.decode(r.b))).toEqual(expected);

    // Extreme-value bounds cut the same way: strictly below `lower`, strictly above `upper`.
    const extreme = { lower: -2.5, upper: 7 };
    const withBounds = valueCoding(fine, range, extreme);
    const probes2 = [...all, -2.5, -2.5000000000000004, 7, 7.000000000000001, 1e308, -1e308];
    const res2 = await admin.query<{ b: number }>(`SELECT width_bucket(v, $2::float8[]) AS b FROM unnest($1::float8[]) WITH ORDINALITY AS t(v, i) ORDER BY i`, [probes2, withBounds.thresholds]);
    const expected2 = probes2.map((x) =>
      Number.isNaN(x)
        ? { kind: 'nan' }
        : x === Infinity
          ? { kind: 'posInf' }
          : x === -Infinity
            ? { kind: 'negInf' }
            : { kind: 'finite', bin: assignBin(fine, x), outOfRange: x < range.min || x > range.max, beyond: x < extreme.lower ? -1 : x > extreme.upper ? 1 : 0 },
    );
    expect(res2.rows.map((r) => withBounds.decode(r.b))).toEqual(expected2);
  });
});
