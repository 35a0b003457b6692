/**
 * Benchmark of the ranking checks (within-list association, outcome from labels). Prints
 * figures; asserts nothing.
 *
 * 1. Stream engine, in memory (no database): profiling a day of N rows x 50 features (lists
 *    of 50, a label, the first feature the model score) on one thread, without and with the
 *    ranking aggregates (served order, per-list Spearman with position and score, outcome),
 *    and the ratio. N = PLUMBLINE_BENCH_RANKING_ROWS (default 1000000).
 * 2. Pushdown engine, when PLUMBLINE_BENCH_DATABASE_URL or PLUMBLINE_TEST_DATABASE_URL is set:
 *    the existing two aggregate statements against the ranking statement on a day of
 *    M rows x 50 features, M = PLUMBLINE_BENCH_RANKING_SQL_ROWS (default 200000).
 *
 *   npx tsx tests/bench/ranking.bench.ts
 */
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { parseConfig, type Config } from '../../src/config/index.ts';
import { groupByList, outcomeCounts, servedOrder } from '../../src/profile/index.ts';
import { numericProfile } from '../../src/profile/day.ts';
import { buildPushdownQueries, buildRankingQuery, planSource, preparePushdownSession } from '../../src/source/index.ts';
import type { DayColumns } from '../../src/source/index.ts';

const FEATURES = 50;
const LIST_SIZE = 50;

function names(): string[] {
  return Array.from({ length: FEATURES }, (_, i) => (i === 0 ? 'score' : `f${String(i).padStart(2, '0')}`));
}

function benchConfig(table: string): Config {
  return parseConfig({ source: { table, columns: { label: 'clicked', score: 'score' } }, features: names().map((name) => ({ name })) });
}

/** A seeded uniform generator (mulberry32), so runs are comparable. */
function rng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/**
 * Rows list by list, as a snapshot table written per query usually is, but in no particular
 * order inside a list (the served order is recovered by sorting on position); each feature a
 * noisy function of the position, the score exactly decreasing with it.
 */
function columns(rows: number): DayColumns {
  const r = rng(42);
  const lists = Math.ceil(rows / LIST_SIZE);
  const order = Int32Array.from({ length: rows }, (_, i) => i);
  for (let start = 0; start < rows; start += LIST_SIZE) {
    const end = Math.min(rows, start + LIST_SIZE);
    for (let i = end - 1; i > start; i--) {
      const j = start + Math.floor(r() * (i - start + 1));
      [order[i], order[j]] = [order[j]!, order[i]!];
    }
  }
  const listOf = new Int32Array(rows);
  const position = new Int32Array(rows);
  const itemHash = new Float64Array(rows);
  const label = new Float64Array(rows);
  const numeric = Array.from({ length: FEATURES }, () => new Float64Array(new SharedArrayBuffer(8 * rows)));
  for (let k = 0; k < rows; k++) {
    const i = order[k]!;
    const p = (k % LIST_SIZE) + 1;
    listOf[i] = Math.floor(k / LIST_SIZE);
    position[i] = p;
    itemHash[i] = k;
    label[i] = r() < 0.3 / p ** 0.7 ? 1 : 0;
    numeric[0]![i] = 1 - p / LIST_SIZE;
    for (let f = 1; f < FEATURES; f++) numeric[f]![i] = f % 3 === 0 ? Math.round(r() * 5) : -0.02 * p + r();
  }
  return { date: '2026-02-04', rows, totalRows: rows, sampled: false, listOf, lists, itemHash, position, label, numeric, missing: numeric.map(() => null), categorical: numeric.map(() => null) };
}

function seconds(t0: number): number {
  return (performance.now() - t0) / 1000;
}

function streamBench(rows: number): void {
  const config = benchConfig('bench.day');
  const cols = columns(rows);
  const profileAll = (g: ReturnType<typeof groupByList>): void => {
    config.features.forEach((f, fi) => numericProfile(cols.numeric[fi]!, null, cols.lists, g, f, undefined));
  };
  // Warm-up on a slice of the work, then alternate the two variants.
  const times = { without: [] as number[], with: [] as number[] };
  for (let round = 0; round < 2; round++) {
    let t0 = performance.now();
    profileAll(groupByList(cols.listOf, cols.lists));
    times.without.push(seconds(t0));
    t0 = performance.now();
    const g = groupByList(cols.listOf, cols.lists);
    const served = servedOrder(cols.position, g, cols.lists, cols.numeric[0]!);
    g.ranking = { served, scoreFeature: 'score' };
    outcomeCounts(cols.label!, served, 10);
    profileAll(g);
    times.with.push(seconds(t0));
  }
  const best = (x: number[]): number => Math.min(...x);
  console.log(`stream, one thread, ${rows.toLocaleString('en-US')} rows x ${FEATURES} features (lists of ${LIST_SIZE}):`);
  console.log(`  profile without ranking aggregates: ${best(times.without).toFixed(2)} s (runs ${times.without.map((t) => t.toFixed(2)).join(', ')})`);
  console.log(`  profile with ranking aggregates:    ${best(times.with).toFixed(2)} s (runs ${times.with.map((t) => t.toFixed(2)).join(', ')})`);
  console.log(`  ratio with / without: ${(best(times.with) / best(times.without)).toFixed(2)}`);
}

async function sqlBench(url: string, rows: number): Promise<void> {
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  const schema = `rank_bench_${process.pid}`;
  try {
    await client.query(`CREATE SCHEMA ${schema}`);
    const table = `${schema}.day`;
    const cols = names();
    await client.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, clicked int, ${cols.map((c) => `${c} double precision`).join(', ')})`);
    const exprs = cols.map((_, i) => (i === 0 ? `1 - ((g.i % ${LIST_SIZE}) + 1)::float8 / ${LIST_SIZE}` : i % 3 === 0 ? 'round(random() * 5)' : `-0.02 * ((g.i % ${LIST_SIZE}) + 1) + random()`));
    await client.query(
      `INSERT INTO ${table} SELECT '2026-02-04'::date, 'q' || (g.i / ${LIST_SIZE}), 'item' || g.i, (g.i % ${LIST_SIZE}) + 1, (random() < 0.3 / power((g.i % ${LIST_SIZE}) + 1, 0.7))::int, ${exprs.join(', ')} FROM generate_series(0, $1::int - 1) AS g(i)`,
      [rows],
    );
    await client.query(`ANALYZE ${table}`);
    const config = benchConfig(table);
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
    try {
      const plan = await planSource(client as unknown as Parameters<typeof planSource>[0], config);
      await preparePushdownSession(client as unknown as Parameters<typeof preparePushdownSession>[0]);
      const q = buildPushdownQueries(config, plan, '2026-02-04', { bins: null, fineBins: null });
      let t0 = performance.now();
      await client.query(q.listPass.text, q.listPass.values);
      await client.query(q.valuePass.text, q.valuePass.values);
      if (q.sumPass !== null) await client.query(q.sumPass.text, q.sumPass.values);
      const existing = seconds(t0);
      const r = buildRankingQuery(config, plan, ['2026-02-04'], { association: true, outcome: true });
      t0 = performance.now();
      await client.query(r.outcome!.text, r.outcome!.values);
      const outcomeOnly = seconds(t0);
      t0 = performance.now();
      await client.query(r.association!.text, r.association!.values);
      const ranking = seconds(t0) + outcomeOnly;
      console.log(`pushdown on PostgreSQL, ${rows.toLocaleString('en-US')} rows x ${FEATURES} features (lists of ${LIST_SIZE}):`);
      console.log(`  list and value passes: ${existing.toFixed(2)} s`);
      console.log(`  ranking pass (association of ${FEATURES} features + outcome): ${ranking.toFixed(2)} s (ratio to the two passes ${(ranking / existing).toFixed(2)})`);
      console.log(`  of which the outcome statement (also what a lagged label re-read costs per day): ${outcomeOnly.toFixed(2)} s`);
    } finally {
      await client.query('ROLLBACK');
    }
  } finally {
    await client.query(`DROP SCHEMA IF EXISTS ${schema} CASCADE`);
    await client.end();
  }
}

export async function main(): Promise<void> {
  streamBench(Number(process.env['PLUMBLINE_BENCH_RANKING_ROWS'] ?? 1_000_000));
  const url = process.env['PLUMBLINE_BENCH_DATABASE_URL'] ?? process.env['PLUMBLINE_TEST_DATABASE_URL'];
  if (url === undefined) console.log('pushdown ranking pass: skipped (set PLUMBLINE_BENCH_DATABASE_URL or PLUMBLINE_TEST_DATABASE_URL)');
  else await sqlBench(url, Number(process.env['PLUMBLINE_BENCH_RANKING_SQL_ROWS'] ?? 200_000));
}

if (import.meta.url === pathToFileURL(process.argv[1] ?? '').href) await main();
