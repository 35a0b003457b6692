/**
 * Benchmark of the pushdown engine against a real PostgreSQL. Prints figures; asserts nothing.
 *
 * 1. stream vs pushdown on one server: a day of 1M rows x 50 double precision features
 *    (lists of 50 items), the baseline (2 days of 250k rows) already stored;
 * 2. pushdown on two shards: the same rows in a table partitioned by hash of the list id
 *    into postgres_fdw foreign tables on two extra PostgreSQL 15 servers on loopback;
 * 3. Plumbline's peak RSS in pushdown mode as the day grows to 10M rows (x 10 features):
 *    target under 200 MB and flat in the size of the day.
 *
 *   PLUMBLINE_BENCH_DATABASE_URL=postgres://postgres@127.0.0.1:5432/test npx tsx tests/bench/pushdown.bench.ts
 *
 * (falls back to PLUMBLINE_TEST_DATABASE_URL). PLUMBLINE_BENCH_BIG_ROWS changes the size of
 * the big day (default 10000000); PLUMBLINE_BENCH_PARTS=3 (or 1,2) runs only the parts named. Creates and drops its own schemas, database and servers.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { startShards, type Shards } from '../support/shards.ts';
import { featureExprs, featureNames } from './day-shapes.ts';

const LIST_SIZE = 50;
const BASELINE = [
  { date: '2026-02-02', rows: 250_000 },
  { date: '2026-02-03', rows: 250_000 },
];
const DAY = { date: '2026-02-04', rows: 1_000_000 };

async function createTable(client: pg.Client, table: string, features: number): Promise<void> {
  await client.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, ${featureNames(features).map((c) => `${c} double precision`).join(', ')})`);
}

async function addDay(client: pg.Client, table: string, features: number, date: string, rows: number, shift: number): Promise<void> {
  const exprs = featureExprs(features, LIST_SIZE, shift);
  await client.query(
    `INSERT INTO ${table} SELECT $1::date, 'q' || $1::text || '-' || (g.i / ${LIST_SIZE}), 'item' || g.i, (g.i % ${LIST_SIZE}) + 1, ${exprs.join(', ')}
       FROM generate_series(0, $2::int - 1) AS g(i)`,
    [date, rows],
  );
}

interface ChildResult {
  seconds: number;
  maxRssMiB: number;
}

function writeConfig(dir: string, name: string, table: string, features: number, engine: 'stream' | 'pushdown', store: string): string {
  const config = {
    source: { table, engine, maxRowsPerDay: 20_000_000 },
    features: featureNames(features).map((n, i) => ({ name: n, kind: 'numeric', ...(i % 4 === 3 ? { withinList: { rule: 'minmax' } } : {}) })),
    baseline: { window: { type: 'fixed', from: BASELINE[0]!.date, to: BASELINE[BASELINE.length - 1]!.date } },
    store: { schema: store },
  };
  const path = join(dir, `${name}.json`);
  writeFileSync(path, JSON.stringify(config));
  return path;
}

function child(configPath: string, date: string, sourceUrl: string, storeUrl: string): ChildResult {
  const env = { ...process.env, PLUMBLINE_SOURCE_URL: sourceUrl, PLUMBLINE_STORE_URL: storeUrl };
  const r = spawnSync(process.execPath, ['--import', 'tsx', 'tests/bench/run-child.ts', configPath, date], { env, encoding: 'utf8', maxBuffer: 1 << 20 });
  if (r.status !== 0) throw new Error(`run-child failed: ${r.stderr}`);
  return JSON.parse(r.stdout.trim().split('\n').pop()!) as ChildResult;
}

/** First run builds and stores the baseline (not reported), then the timed run. */
function timedRun(configPath: string, date: string, sourceUrl: string, storeUrl: string): ChildResult {
  child(configPath, date, sourceUrl, storeUrl);
  return child(configPath, date, sourceUrl, storeUrl);
}

const fmt = (r: ChildResult): string => `${r.seconds.toFixed(2).padStart(7)} s   ${r.maxRssMiB.toFixed(0).padStart(5)} MiB`;

export async function main(): Promise<void> {
  const url = process.env['PLUMBLINE_BENCH_DATABASE_URL'] ?? process.env['PLUMBLINE_TEST_DATABASE_URL'];
  if (url === undefined) {
    console.log('pushdown.bench: set PLUMBLINE_BENCH_DATABASE_URL (or PLUMBLINE_TEST_DATABASE_URL) to a PostgreSQL server; skipped');
    return;
  }
  const bigRows = Number(process.env['PLUMBLINE_BENCH_BIG_ROWS'] ?? 10_000_000);
  const suffix = Date.now().toString(36);
  const src = `pdbench_src_${suffix}`;
  const stores = ['stream', 'push', 'shard', 'big'].map((s) => `pdbench_${s}_${suffix}`);
  const coordDb = `pdbench_coord_${suffix}`;
  const dir = mkdtempSync(join(tmpdir(), 'plumbline-pdbench-'));
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  let shards: Shards | undefined;
  try {
    const parts = (process.env['PLUMBLINE_BENCH_PARTS'] ?? '1,2,3').split(',').map((p) => p.trim());
    await client.query(`CREATE SCHEMA ${src}`);
    let t0 = Date.now();
    // ---- 1. one server, 1M rows x 50 features (part 2 copies these rows to the shards)
    if (parts.includes('1') || parts.includes('2')) {
      const wide = `${src}.day_rows`;
      await createTable(client, wide, 50);
      t0 = Date.now();
      for (const d of [...BASELINE, DAY]) await addDay(client, wide, 50, d.date, d.rows, d === DAY ? 0.05 : 0);
      await client.query(`CREATE INDEX ON ${wide} (snapshot_date)`);
      await client.query(`ANALYZE ${wide}`);
      console.log(`pushdown.bench: generated ${(BASELINE.reduce((s, d) => s + d.rows, 0) + DAY.rows).toLocaleString('en-US')} rows x 50 features in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
      const stream = timedRun(writeConfig(dir, 'stream', wide, 50, 'stream', stores[0]!), DAY.date, url, url);
      const push = timedRun(writeConfig(dir, 'push', wide, 50, 'pushdown', stores[1]!), DAY.date, url, url);
      console.log('');
      console.log('1M rows x 50 features, one server      run        peak RSS');
      console.log(`  stream (rows come to Plumbline)   ${fmt(stream)}`);
      console.log(`  pushdown (aggregates come back)   ${fmt(push)}`);

      // ---- 2. the same rows on two shards (postgres_fdw, partitioned by hash of the list id)
      if (parts.includes('2')) {
        try {
          shards = await startShards(2);
        } catch (err) {
          console.log(`pushdown.bench: cannot start two PostgreSQL 15 servers (${(err as Error).message.split('\n')[0]}); sharded figures skipped`);
        }
        if (shards !== undefined) {
          await client.query(`CREATE DATABASE ${coordDb}`);
          const u = new URL(url);
          u.pathname = `/${coordDb}`;
          const coordUrl = u.toString();
          const coord = new pg.Client({ connectionString: coordUrl });
          await coord.connect();
          try {
            await coord.query(`CREATE EXTENSION postgres_fdw; CREATE SCHEMA src`);
            await createTable(coord, 'src.day_rows_local', 50);
            await coord.query(`CREATE TABLE src.day_rows (LIKE src.day_rows_local) PARTITION BY HASH (list_id)`);
            for (const [i, s] of shards.shards.entries()) {
              const sc = new pg.Client({ connectionString: s.url });
              await sc.connect();
              await createTable(sc, 'public.day_rows', 50);
              await sc.end();
              await coord.query(`CREATE SERVER shard${i} FOREIGN DATA WRAPPER postgres_fdw OPTIONS (host '127.0.0.1', port '${s.port}', dbname 'postgres', async_capable 'true', batch_size '5000', fetch_size '50000')`);
              await coord.query(`CREATE USER MAPPING FOR CURRENT_USER SERVER shard${i} OPTIONS (user 'postgres')`);
              await coord.query(`CREATE FOREIGN TABLE src.day_rows_p${i} PARTITION OF src.day_rows FOR VALUES WITH (MODULUS 2, REMAINDER ${i}) SERVER shard${i} OPTIONS (schema_name 'public', table_name 'day_rows')`);
            }
            t0 = Date.now();
            // Rows generated on the coordinator, routed to the shards by the partitioned table.
            for (const d of [...BASELINE, DAY]) await addDay(coord, 'src.day_rows', 50, d.date, d.rows, d === DAY ? 0.05 : 0);
            for (const s of shards.shards) {
              const sc = new pg.Client({ connectionString: s.url });
              await sc.connect();
              await sc.query('CREATE INDEX ON public.day_rows (snapshot_date); ANALYZE public.day_rows');
              await sc.end();
            }
            console.log(`pushdown.bench: loaded the two shards in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
            const sharded = timedRun(writeConfig(dir, 'shard', 'src.day_rows', 50, 'pushdown', stores[2]!), DAY.date, coordUrl, url);
            console.log('');
            console.log('1M rows x 50 features, two shards      run        peak RSS');
            console.log(`  pushdown via the coordinator      ${fmt(sharded)}`);
            console.log('  (the shards and the coordinator share this machine\'s cores, so this is no speed-up figure)');
          } finally {
            await coord.end();
            await client.query(`DROP DATABASE IF EXISTS ${coordDb} WITH (FORCE)`);
            await shards.stop();
          }
        }
      }
    }

    // ---- 3. peak RSS as the day grows (pushdown, 10 features)
    if (!parts.includes('3')) return;
    const narrow = `${src}.big_rows`;
    await createTable(client, narrow, 10);
    const sizes = [1_000_000, bigRows].filter((n, i, a) => a.indexOf(n) === i);
    t0 = Date.now();
    for (const d of BASELINE) await addDay(client, narrow, 10, d.date, d.rows, 0);
    const bigDates = sizes.map((_, i) => `2026-02-${String(10 + i).padStart(2, '0')}`);
    for (const [i, n] of sizes.entries()) await addDay(client, narrow, 10, bigDates[i]!, n, 0.05);
    await client.query(`CREATE INDEX ON ${narrow} (snapshot_date)`);
    await client.query(`ANALYZE ${narrow}`);
    console.log('');
    console.log(`pushdown.bench: generated days of ${sizes.map((n) => n.toLocaleString('en-US')).join(' and ')} rows x 10 features in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
    const bigConfig = writeConfig(dir, 'big', narrow, 10, 'pushdown', stores[3]!);
    child(bigConfig, bigDates[0]!, url, url);
    console.log('rows/day x 10 features (pushdown)      run        peak RSS');
    for (const [i, n] of sizes.entries()) console.log(`  ${n.toLocaleString('en-US').padStart(10)}                      ${fmt(child(bigConfig, bigDates[i]!, url, url))}`);
    console.log('');
    console.log('targets: peak RSS in pushdown mode under 200 MB and flat as the day grows');
  } finally {
    await client.query([src, ...stores].map((s) => `DROP SCHEMA IF EXISTS ${s} CASCADE`).join('; '));
    await client.end();
    rmSync(dir, { recursive: true, force: true });
  }
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await main();
}
