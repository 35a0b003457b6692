/**
 * Benchmark of the store's size over 90 daily runs (50 double precision features, a trailing
 * 28-day window, so every day stores a new baseline, a day profile and a report), on two stores
 * side by side: one that keeps everything (`store.retention.enabled: false`) and one pruned by
 * the daily job. Prints pg_total_relation_size of each table, bytes per day and in total;
 * asserts nothing.
 *
 *   PLUMBLINE_BENCH_DATABASE_URL=postgres://postgres@127.0.0.1:5432/test npx tsx tests/bench/store.bench.ts
 *
 * (falls back to PLUMBLINE_TEST_DATABASE_URL). Creates and drops a database of its own (or, when
 * the role may not create one, its own schemas in the given database). Both stores
 * get a plain VACUUM after each day, as autovacuum would in production, so space freed by
 * deletes is reused; without it the figures would depend on when autovacuum happened to run.
 * PLUMBLINE_BENCH_STORE_DAYS and PLUMBLINE_BENCH_STORE_SAMPLE change the days and sampleSize.
 */
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { parseConfig, type Config } from '../../src/config/index.ts';
import { silentLogger } from '../../src/log.ts';
import { addDays, daySampleCap } from '../../src/run/index.ts';
import { openRuntime } from '../../src/runtime.ts';
import { dailyJob, retentionPolicy } from '../../src/scheduler/index.ts';
import { migrate, Store } from '../../src/store/index.ts';

const FEATURES = 50;
const LIST_SIZE = 50;
const WINDOW_DAYS = 28;
const TABLES = ['runs', 'findings', 'alert_state', 'baselines', 'baseline_samples', 'day_profiles'] as const;

function featureColumns(): string[] {
  return Array.from({ length: FEATURES }, (_, i) => `f${String(i).padStart(2, '0')}`);
}

/** Bytes of each store table, indexes and TOAST included. */
async function tableBytes(client: pg.Client, schema: string): Promise<Record<string, number>> {
  const out: Record<string, number> = {};
  for (const t of TABLES) {
    const r = await client.query<{ n: string }>(`SELECT pg_total_relation_size($1::regclass)::text AS n`, [`"${schema}".${t}`]);
    out[t] = Number(r.rows[0]!.n);
  }
  return out;
}

const total = (b: Record<string, number>): number => Object.values(b).reduce((s, x) => s + x, 0);
const mb = (bytes: number): string => (bytes / 1e6).toFixed(2);

export async function main(): Promise<void> {
  const url = process.env['PLUMBLINE_BENCH_DATABASE_URL'] ?? process.env['PLUMBLINE_TEST_DATABASE_URL'];
  if (url === undefined) {
    console.log('store.bench: set PLUMBLINE_BENCH_DATABASE_URL (or PLUMBLINE_TEST_DATABASE_URL) to a PostgreSQL server; skipped');
    return;
  }
  const suffix = Date.now().toString(36);
  // A database of its own where the role may create one: VACUUM's horizon for ordinary tables
  // is per database, so long transactions of other programs in other databases do not keep
  // the pruned rows alive.
  const name = `plumbline_store_bench_${suffix}`;
  const admin = new pg.Client({ connectionString: url });
  await admin.connect();
  let own = false;
  try {
    await admin.query(`CREATE DATABASE ${name}`);
    own = true;
  } catch (err) {
    console.log(`store.bench: cannot create a database of its own (${(err as Error).message}); running in the given one`);
  }
  try {
    const target = new URL(url);
    target.pathname = `/${name}`;
    await measure(own ? target.toString() : url, suffix);
  } finally {
    if (own) await admin.query(`DROP DATABASE IF EXISTS ${name}`);
    await admin.end();
  }
}

async function measure(url: string, suffix: string): Promise<void> {
  const days = Number(process.env['PLUMBLINE_BENCH_STORE_DAYS'] ?? 90);
  const sampleSize = Number(process.env['PLUMBLINE_BENCH_STORE_SAMPLE'] ?? 10_000);
  const src = `bench_ssrc_${suffix}`;
  const table = `${src}.day_rows`;
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  const first = '2026-01-01';
  const evaluated = Array.from({ length: days }, (_, i) => addDays(first, WINDOW_DAYS + i));
  const config = (schema: string, enabled: boolean): Config =>
    parseConfig(
      {
        source: { table },
        features: featureColumns().map((name) => ({ name, kind: 'numeric' })),
        baseline: { window: { type: 'trailing', days: WINDOW_DAYS }, sampleSize },
        // reportDays 30 (default 400) so that the plateau shows within the benchmark's days.
        store: { schema, retention: { enabled, reportDays: 30 } },
      },
      'store.bench config',
    );
  const arms = [
    { name: 'keep everything', schema: `bench_sall_${suffix}`, enabled: false },
    { name: 'retention', schema: `bench_sret_${suffix}`, enabled: true },
  ];
  const rowsPerDay = Math.max(2000, daySampleCap(config('x', true)));
  try {
    await client.query(`CREATE SCHEMA ${src}`);
    await client.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, ${featureColumns().map((c) => `${c} double precision`).join(', ')})`);
    const exprs = featureColumns().map((_, i) => (i % 2 === 0 ? `(sqrt(-2 * ln(1 - random())) * cos(2 * pi() * random()))` : `floor(-ln(1 - random()) * 3) * (random() < 0.6)::int`));
    const t0 = Date.now();
    await client.query(
      `INSERT INTO ${table}
       SELECT $1::date + d, 'q' || (g.i / ${LIST_SIZE}), 'item' || g.i, (g.i % ${LIST_SIZE}) + 1, ${exprs.join(', ')}
         FROM generate_series(0, $2::int - 1) AS d, generate_series(0, $3::int - 1) AS g(i)`,
      [first, WINDOW_DAYS + days, rowsPerDay],
    );
    await client.query(`CREATE INDEX ON ${table} (snapshot_date)`);
    await client.query(`ANALYZE ${table}`);
    const c = config('x', true);
    const policy = retentionPolicy(config('x', true))!;
    console.log(
      `store.bench: ${days} daily runs, ${FEATURES} numeric features, ${rowsPerDay.toLocaleString('en-US')} rows a day (generated in ${((Date.now() - t0) / 1000).toFixed(1)} s), ` +
        `trailing ${WINDOW_DAYS}-day window, sampleSize ${sampleSize.toLocaleString('en-US')} (default 200,000), day sample cap ${daySampleCap(c).toLocaleString('en-US')}`,
    );
    console.log(`store.bench: retention policy of the pruned store: ${JSON.stringify(policy)}`);

    const rt = openRuntime(config(arms[0]!.schema, false), silentLogger, { PLUMBLINE_SOURCE_URL: url });
    const history: { day: number; bytes: Record<string, number>[] }[] = [];
    const heldBack: number[] = [];
    try {
      const stores = await Promise.all(
        arms.map(async (a) => {
          await migrate(rt.storePool, a.schema);
          return { ...a, store: new Store(rt.storePool, a.schema), config: config(a.schema, a.enabled) };
        }),
      );
      console.log('');
      console.log(`day   ${stores.map((s) => `${s.name} (MB)`.padStart(22)).join('')}   seconds/day`);
      for (const [i, date] of evaluated.entries()) {
        const now = new Date(`${addDays(date, 1)}T06:30:00Z`);
        const t = Date.now();
        const dayStart = new Date();
        const sizes: Record<string, number>[] = [];
        for (const s of stores) {
          const out = await dailyJob({ config: s.config, source: rt.source, store: s.store, log: silentLogger, now: () => now }, now, { deadlinePassed: true });
          if (out[0]?.outcome !== 'stored') throw new Error(`store.bench: ${date} was not stored: ${JSON.stringify(out)}`);
          for (const tbl of TABLES) await client.query(`VACUUM "${s.schema}".${tbl}`);
          sizes.push(await tableBytes(client, s.schema));
        }
        // VACUUM cannot free rows that a transaction older than the deletes may still see.
        const holders = await client.query<{ n: string }>(
          `SELECT count(*)::text AS n FROM pg_stat_activity WHERE datname = current_database() AND backend_xmin IS NOT NULL AND xact_start < $1 AND pid <> pg_backend_pid()`,
          [dayStart],
        );
        if (Number(holders.rows[0]!.n) > 0) heldBack.push(i + 1);
        history.push({ day: i + 1, bytes: sizes });
        if ((i + 1) % 10 === 0 || i === 0) {
          console.log(`${String(i + 1).padStart(3)}   ${sizes.map((b) => mb(total(b)).padStart(22)).join('')}   ${((Date.now() - t) / 1000).toFixed(1).padStart(11)}`);
        }
      }
    } finally {
      await rt.close();
    }

    const last = history[history.length - 1]!;
    const mid = history[Math.floor(history.length / 2) - 1]!;
    const firstDay = history[0]!;
    console.log('');
    console.log(`bytes per table after ${days} days, and growth per day (day 1 to day ${days}; over the last ${last.day - mid.day} days)`);
    console.log(`table              ${arms.map((a) => `${a.name}: total  /day  /day(late)`.padStart(44)).join('')}`);
    for (const tbl of TABLES) {
      const cells = arms.map((_, k) => {
        const end = last.bytes[k]![tbl]!;
        const perDay = (end - firstDay.bytes[k]![tbl]!) / (last.day - 1);
        const late = (end - mid.bytes[k]![tbl]!) / (last.day - mid.day);
        return `${mb(end).padStart(14)} MB ${mb(perDay).padStart(9)} MB ${mb(late).padStart(9)} MB`;
      });
      console.log(`${tbl.padEnd(18)} ${cells.join('   ')}`);
    }
    const cells = arms.map((_, k) => {
      const end = total(last.bytes[k]!);
      return `${mb(end).padStart(14)} MB ${mb((end - total(firstDay.bytes[k]!)) / (last.day - 1)).padStart(9)} MB ${mb((end - total(mid.bytes[k]!)) / (last.day - mid.day)).padStart(9)} MB`;
    });
    console.log(`${'total'.padEnd(18)} ${cells.join('   ')}`);
    // Another program's long transaction on the same database makes both stores look alike.
    if (heldBack.length > 0) {
      console.log(`store.bench: WARNING: on ${heldBack.length} day(s) (first: day ${heldBack[0]}) a transaction older than that day's prune held back VACUUM; the sizes include dead rows, run it again on a quiet server`);
    }
    console.log('');
    console.log(
      `scaling: a baseline's samples are ${FEATURES} features x sampleSize x 8 bytes raw (${mb(FEATURES * sampleSize * 8)} MB here, ` +
        `${mb(FEATURES * 200_000 * 8)} MB at the default 200,000); a day profile's samples ${FEATURES} x the day sample cap x 8 bytes ` +
        `(base64 in jsonb, then compressed by TOAST); reports and findings grow with features x checks, not with sampleSize`,
    );
  } finally {
    await client.query(`DROP SCHEMA IF EXISTS ${src} CASCADE`);
    for (const a of arms) await client.query(`DROP SCHEMA IF EXISTS "${a.schema}" CASCADE`);
    await client.end();
  }
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await main();
}
