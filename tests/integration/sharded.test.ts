/**
 * The pushdown engine on a sharded PostgreSQL, for real: two extra PostgreSQL 15 servers on
 * loopback hold the rows, and the snapshot table on the test server is partitioned by hash
 * of the list id into postgres_fdw foreign tables on them (asynchronous foreign scans on).
 * The report must equal the report for the same rows in one plain table, and EXPLAIN
 * (VERBOSE) must show the per-list aggregation and the value counts running on the shards.
 *
 * Needs PLUMBLINE_TEST_DATABASE_URL (the coordinator; postgres_fdw must be installable) and
 * the PostgreSQL 15 binaries. Skips with the reason when it cannot start the shards, except
 * under CI=true, where that is a failure.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { createTableSql, loadScenario } from '../../demo-data/load.ts';
import type { Config } from '../../src/config/index.ts';
import { createPool } from '../../src/db/index.ts';
import { checkSource } from '../../src/run/index.ts';
import type { Report } from '../../src/report/index.ts';
import { buildPushdownQueries, countDays, firstSnapshotDate, listSampleCondition, planSource, preparePushdownSession } from '../../src/source/index.ts';
import { startShards, type Shards } from '../support/shards.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { runDays } from '../support/run-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const url = testDatabaseUrl();
const CI = process.env['CI'] === 'true';
const START = '2025-10-06';
const SCENARIO: ScenarioOptions = {
  startDate: START,
  days: 10,
  listsPerDay: 120,
  meanListSize: 15,
  seed: 11,
  faults: [
    { date: addDays(START, 7), kind: 'mean_shift', feature: 'semantic_similarity', amount: 0.6 },
    { date: addDays(START, 8), kind: 'minmax_raw', feature: 'text_match_norm' },
    { date: addDays(START, 9), kind: 'duplicate_items', amount: 0.2 },
    { date: addDays(START, 9), kind: 'null_spike', feature: 'review_count', amount: 0.2 },
  ],
};
const RUN_DATES = [addDays(START, 7), addDays(START, 8), addDays(START, 9)];

/**
 * A report without what differs between two runs (times, fingerprints: the table names
 * differ) and without the feature means of the PSI and KS evidence, which `means` returns
 * apart: a mean is a float8 sum, and its last bits depend on the order in which rows are
 * added (one table scanned in order, or two partitions summed apart and then added).
 * Every count, ratio, PSI and KS value is compared exactly.
 */
function comparable(r: Report): unknown {
  return {
    ...r,
    startedAt: undefined,
    finishedAt: undefined,
    configFingerprint: undefined,
    baseline: { ...r.baseline, fingerprint: undefined },
  };
}

/**
 * Deep equality in which two numbers may differ by 1e-12 relative: the shards return rows in
 * another order than one table, and summation order moves a float8 sum (a PSI/KS mean, a sum
 * of per-list rank correlations) by a few units in the last place of its largest terms.
 * Everything else (counts, statuses, strings, structure) must be identical.
 */
function expectClose(a: unknown, b: unknown, path = 'report'): void {
  if (typeof a === 'number' && typeof b === 'number') {
    if (Number.isNaN(a) || Number.isNaN(b) || !Number.isFinite(a) || !Number.isFinite(b)) expect(a, path).toBe(b);
    else expect(Math.abs(a - b), `${path}: ${a} vs ${b}`).toBeLessThanOrEqual(1e-12 * Math.max(1, Math.abs(a), Math.abs(b)));
    return;
  }
  if (a === null || b === null || typeof a !== 'object' || typeof b !== 'object') {
    expect(a, path).toEqual(b);
    return;
  }
  expect(Array.isArray(a), path).toBe(Array.isArray(b));
  const keys = new Set([...Object.keys(a), ...Object.keys(b)]);
  for (const k of keys) expectClose((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`);
}

describe.skipIf(url === undefined)('pushdown engine on a table sharded over two PostgreSQL servers (postgres_fdw)', () => {
  const database = uniqueSchema('pd_coord');
  let shards: Shards | undefined;
  let skipReason: string | undefined;
  let admin: pg.Client;
  let coord: pg.Client | undefined;
  let coordUrl: string;
  const single = new Map<string, Report>();
  const sharded = new Map<string, Report>();
  let shardedConfig: Config;

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    try {
      shards = await startShards(2);
    } catch (err) {
      if (CI) throw err;
      skipReason = `cannot start two PostgreSQL 15 servers here: ${(err as Error).message.split('\n')[0]}`;
      return;
    }
    // The coordinator gets a database of its own, so its extension and foreign servers go with it.
    await admin.query(`CREATE DATABASE "${database}"`);
    const u = new URL(url!);
    u.pathname = `/${database}`;
    coordUrl = u.toString();
    coord = new pg.Client({ connectionString: coordUrl });
    await coord.connect();
    await coord.query('CREATE EXTENSION postgres_fdw');
    await coord.query('CREATE SCHEMA src');

    // One plain table with the scenario, and the same rows in the sharded table.
    await loadScenario(coord, { table: 'src.single', layout: 'wide', scenario: SCENARIO });
    await coord.query(`CREATE TABLE src.sharded (LIKE src.single) PARTITION BY HASH (list_id)`);
    for (const [i, s] of shards.shards.entries()) {
      const shard = new pg.Client({ connectionString: s.url });
      await shard.connect();
      await shard.query(createTableSql('public.impressions', 'wide'));
      await shard.end();
      // The first shard's remote sessions run without JIT, as README recommends; the second keeps the shard's default (check-config notes it).
      const jit = i === 0 ? `, options '-c jit=off'` : '';
      await coord.query(`CREATE SERVER shard${i} FOREIGN DATA WRAPPER postgres_fdw OPTIONS (host '127.0.0.1', port '${s.port}', dbname 'postgres', async_capable 'true', batch_size '1000', fetch_size '10000'${jit})`);
      await coord.query(`CREATE USER MAPPING FOR CURRENT_USER SERVER shard${i} OPTIONS (user 'postgres')`);
      await coord.query(`CREATE FOREIGN TABLE src.sharded_p${i} PARTITION OF src.sharded FOR VALUES WITH (MODULUS 2, REMAINDER ${i}) SERVER shard${i} OPTIONS (schema_name 'public', table_name 'impressions')`);
    }
    await coord.query('INSERT INTO src.sharded SELECT * FROM src.single');
    for (const s of shards.shards) {
      const shard = new pg.Client({ connectionString: s.url });
      await shard.connect();
      await shard.query('ANALYZE public.impressions');
      await shard.end();
    }

    for (const [table, out] of [['src.single', single], ['src.sharded', sharded]] as const) {
      const store = uniqueSchema('pd_shard_store');
      const base = scenarioConfig(table, { storeSchema: store, overrides: { baseline: { window: { type: 'trailing', days: 7 } } } });
      const config: Config = { ...base, source: { ...base.source, engine: 'pushdown' } };
      if (table === 'src.sharded') shardedConfig = config;
      for (const [d, report] of await runDays(config, coordUrl, RUN_DATES)) out.set(d, report);
    }
  }, 240_000);

  afterAll(async () => {
    try {
      await coord?.end();
      if (coordUrl !== undefined) await admin.query(`DROP DATABASE IF EXISTS "${database}" WITH (FORCE)`);
      await admin?.end();
    } finally {
      await shards?.stop();
    }
  }, 60_000);

  it('has rows on both shards', async (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    const res = await coord!.query<{ p: string; n: string }>(`SELECT tableoid::regclass::text AS p, count(*)::text AS n FROM src.sharded GROUP BY 1 ORDER BY 1`);
    expect(res.rows.map((r) => r.p)).toEqual(['src.sharded_p0', 'src.sharded_p1']);
    for (const r of res.rows) expect(Number(r.n)).toBeGreaterThan(1000);
  });

  it('counts the rows per date and finds the first date per shard, as on one table', async (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    await onCoordinator(async (client) => {
      const plan = await planSource(client, shardedConfig);
      const singlePlan = await planSource(client, { ...shardedConfig, source: { ...shardedConfig.source, table: 'src.single' } });
      const dates = [...RUN_DATES, '1999-01-01'];
      const counts = await countDays(client, plan, dates);
      expect(counts).toEqual(await countDays(client, singlePlan, dates));
      expect([...counts.values()].every((n) => n > 0)).toBe(true);
      expect(counts.has('1999-01-01')).toBe(false);
      expect(await firstSnapshotDate(client, plan)).toBe(await firstSnapshotDate(client, singlePlan));
    });
  });

  it('gives the same report as one table with the same rows', (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    for (const d of RUN_DATES) {
      expect(sharded.get(d)!.engine).toBe('pushdown');
      expectClose(comparable(sharded.get(d)!), comparable(single.get(d)!));
    }
    // And the faults are there to be seen.
    const level = (d: string, feature: string | null, check: string): string | undefined => sharded.get(d)!.findings.find((f) => f.feature === feature && f.check === check)?.status;
    expect(level(RUN_DATES[0]!, 'semantic_similarity', 'ks')).not.toBe('ok');
    expect(level(RUN_DATES[1]!, 'text_match_norm', 'rule_violation_ratio')).toBe('critical');
    expect(level(RUN_DATES[2]!, null, 'duplicate_item_ratio')).toBe('critical');
    expect(level(RUN_DATES[2]!, 'review_count', 'null_ratio')).toBe('critical');
  });

  /** A read-only REPEATABLE READ transaction on the coordinator, for EXPLAIN (rolled back). */
  async function onCoordinator(fn: (client: pg.PoolClient) => Promise<void>): Promise<void> {
    const pool = new pg.Pool({ connectionString: coordUrl, max: 1 });
    // pool.end() resolves before its connection has closed; the coordinator database is dropped
    // WITH (FORCE) after the file, and a connection still closing then gets 57P01 on the pool.
    pool.on('error', () => undefined);
    const client = await pool.connect();
    try {
      await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
      await fn(client);
      await client.query('ROLLBACK');
    } finally {
      client.release();
      await pool.end();
    }
  }

  it('runs the per-list aggregation on the shards (EXPLAIN VERBOSE), asynchronously', async (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    await onCoordinator(async (client) => {
      const plan = await planSource(client, shardedConfig);
      const q = buildPushdownQueries(shardedConfig, plan, RUN_DATES[0]!, { bins: null, fineBins: null });
      await preparePushdownSession(client);
      const res = await client.query<{ 'QUERY PLAN': string }>(`EXPLAIN (VERBOSE, COSTS OFF) ${q.listPass.text}`, q.listPass.values);
      const text = res.rows.map((r) => r['QUERY PLAN']).join('\n');
      const remote = text.split('\n').filter((l) => l.includes('Remote SQL:'));
      // One remote statement per shard, each grouping its rows by list id with the aggregates in it.
      expect(remote, text).toHaveLength(2);
      for (const line of remote) {
        expect(line, text).toMatch(/GROUP BY/);
        expect(line, text).toMatch(/count\(DISTINCT/);
        expect(line, text).toMatch(/sum\(/);
      }
      expect(text).toMatch(/Async Foreign Scan/);
      expect(text).toMatch(/Relations: Aggregate on/);
    });
  });

  it('counts the values on the shards too: each feature aggregated per foreign partition remotely (EXPLAIN VERBOSE), asynchronously', async (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    await onCoordinator(async (client) => {
      const plan = await planSource(client, shardedConfig);
      expect(plan.foreignPartitions).toEqual(['src.sharded_p0', 'src.sharded_p1']);
      const q = buildPushdownQueries(shardedConfig, plan, RUN_DATES[0]!, { bins: null, fineBins: null });
      await preparePushdownSession(client);
      const res = await client.query<{ 'QUERY PLAN': string }>(`EXPLAIN (VERBOSE, COSTS OFF) ${q.valuePass.text}`, q.valuePass.values);
      const text = res.rows.map((r) => r['QUERY PLAN']).join('\n');
      const remote = text.split('\n').filter((l) => l.includes('Remote SQL:'));
      // One remote grouped statement per feature and shard; no row-level fetch of the feature columns.
      expect(remote, text).toHaveLength(2 * shardedConfig.features.length);
      for (const line of remote) {
        expect(line, text).toMatch(/count\(\*\)/);
        expect(line, text).toMatch(/GROUP BY/);
      }
      expect(text.match(/Relations: Aggregate on/g), text).toHaveLength(2 * shardedConfig.features.length);
      expect(text).toMatch(/Async Foreign Scan/);
    });
  });

  it('notes, at check-config --connect, the shard servers whose remote sessions keep JIT on', async (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    const pool = createPool({ url: coordUrl, applicationName: 'plumbline-test', statementTimeoutMs: 10_000, connectionTimeoutMs: 5000, max: 1, onError: () => {} });
    try {
      const { problems, notes } = await checkSource(pool, shardedConfig);
      expect(problems).toEqual([]);
      expect(notes).toHaveLength(1);
      expect(notes[0]).toMatch(/^foreign server shard1: .*ALTER SERVER shard1 OPTIONS \(ADD options '-c jit=off'\)/);
      // The stream engine runs no statement on the shards: nothing to note.
      expect((await checkSource(pool, { ...shardedConfig, source: { ...shardedConfig.source, engine: 'stream' } })).notes).toEqual([]);
    } finally {
      await pool.end();
    }
  });

  it('filters the whole-list sample on the shards (EXPLAIN VERBOSE): the md5 condition is in the remote statements', async (ctx) => {
    if (skipReason !== undefined) ctx.skip(skipReason);
    await onCoordinator(async (client) => {
      const plan = await planSource(client, shardedConfig);
      const condition = listSampleCondition(plan.listIdExpression, 0.25);
      const sql = `SELECT ${plan.selectList.join(', ')} FROM ${plan.relation} WHERE ${plan.dateColumn} = DATE '${RUN_DATES[0]!}' AND ${condition}`;
      const text = (await client.query<{ 'QUERY PLAN': string }>(`EXPLAIN (VERBOSE, COSTS OFF) ${sql}`)).rows.map((r) => r['QUERY PLAN']).join('\n');
      const remote = text.split('\n').filter((l) => l.includes('Remote SQL:'));
      expect(remote, text).toHaveLength(2);
      for (const line of remote) expect(line, text).toMatch(/md5\(/);
      // Nothing left to filter on the coordinator.
      expect(text, text).not.toMatch(/^\s*Filter:/m);
      // The same lists as on one plain table: a quarter of them, give or take.
      const counts = await client.query<{ all: string; kept: string }>(
        `SELECT count(DISTINCT ${plan.listIdExpression})::text AS all, count(DISTINCT ${plan.listIdExpression}) FILTER (WHERE ${condition})::text AS kept FROM ${plan.relation} WHERE ${plan.dateColumn} = DATE '${RUN_DATES[0]!}'`,
      );
      const share = Number(counts.rows[0]!.kept) / Number(counts.rows[0]!.all);
      expect(share).toBeGreaterThan(0.15);
      expect(share).toBeLessThan(0.35);
    });
  });
});
