/**
 * Benchmark of slices: a day of N rows x 50 double precision features (lists of 50, a
 * list-level `market` column of five values) run with no slices, then with one top-k slice
 * (`topK: [10]`) and one segment column (`market`, every value a slice), each with its
 * baseline already stored. Prints both times and their ratio (target: at most 1.5 at 1M
 * rows); asserts nothing.
 *
 *   PLUMBLINE_BENCH_DATABASE_URL=postgres://postgres@127.0.0.1:5432/test npx tsx tests/bench/slices.bench.ts
 *
 * PLUMBLINE_BENCH_SLICES_ROWS sets N (default 1,000,000); PLUMBLINE_BENCH_ENGINE=pushdown runs
 * the pushdown engine instead of stream. Falls back to PLUMBLINE_TEST_DATABASE_URL; creates
 * and drops its own schemas.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { featureExprs, featureNames } from './day-shapes.ts';

const FEATURES = 50;
const LIST_SIZE = 50;
const BASELINE = ['2026-02-02', '2026-02-03'];
const DAY = '2026-02-04';
/** Markets by list index modulo 50: 40 %, 30 %, 20 %, 6 %, 4 % of the lists. */
const MARKET = `(CASE WHEN (g.i / ${LIST_SIZE}) % 50 < 20 THEN 'north' WHEN (g.i / ${LIST_SIZE}) % 50 < 35 THEN 'south' WHEN (g.i / ${LIST_SIZE}) % 50 < 45 THEN 'east' WHEN (g.i / ${LIST_SIZE}) % 50 < 48 THEN 'isle' ELSE 'reef' END)`;

const featureColumns = (): string[] => featureNames(FEATURES);

async function createDay(client: pg.Client, table: string, date: string, rows: number): Promise<void> {
  const exprs = featureExprs(FEATURES, LIST_SIZE);
  await client.query(
    `INSERT INTO ${table} SELECT $1::date, 'q' || (g.i / ${LIST_SIZE}), 'item' || g.i, (g.i % ${LIST_SIZE}) + 1, ${MARKET}, ${exprs.join(', ')}
       FROM generate_series(0, $2::int - 1) AS g(i)`,
    [date, Math.floor(rows / LIST_SIZE) * LIST_SIZE],
  );
}

export async function main(): Promise<void> {
  const url = process.env['PLUMBLINE_BENCH_DATABASE_URL'] ?? process.env['PLUMBLINE_TEST_DATABASE_URL'];
  if (url === undefined) {
    console.log('slices.bench: set PLUMBLINE_BENCH_DATABASE_URL (or PLUMBLINE_TEST_DATABASE_URL) to a PostgreSQL server; skipped');
    return;
  }
  const rows = Number(process.env['PLUMBLINE_BENCH_SLICES_ROWS'] ?? 1_000_000);
  const engine = process.env['PLUMBLINE_BENCH_ENGINE'] === 'pushdown' ? 'pushdown' : 'stream';
  const suffix = Date.now().toString(36);
  const src = `bench_slices_src_${suffix}`;
  const table = `${src}.day_rows`;
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  const stores: string[] = [];
  try {
    await client.query(`CREATE SCHEMA ${src}`);
    await client.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, market text, ${featureColumns().map((c) => `${c} double precision`).join(', ')})`);
    const t0 = Date.now();
    for (const d of [...BASELINE, DAY]) await createDay(client, table, d, d === DAY ? rows : Math.max(50_000, Math.floor(rows / 4)));
    await client.query(`CREATE INDEX ON ${table} (snapshot_date)`);
    await client.query(`ANALYZE ${table}`);
    console.log(`slices.bench: generated the day (${rows.toLocaleString('en-US')} rows x ${FEATURES} features) and ${BASELINE.length} baseline days in ${((Date.now() - t0) / 1000).toFixed(1)} s; engine ${engine}`);

    const dir = mkdtempSync(join(tmpdir(), 'plumbline-slices-bench-'));
    const env = { ...process.env, PLUMBLINE_SOURCE_URL: url, PLUMBLINE_STORE_URL: url };
    const timed = (name: string, slices: Record<string, unknown> | undefined): { seconds: number; maxRssMiB: number; findings: number } => {
      const store = `bench_slices_${name}_${suffix}`;
      stores.push(store);
      const config = {
        source: { table, engine },
        features: featureColumns().map((f, i) => ({ name: f, kind: 'numeric', ...(i % 4 === 3 ? { withinList: { rule: 'minmax' } } : {}) })),
        baseline: { window: { type: 'fixed', from: BASELINE[0], to: BASELINE[BASELINE.length - 1] } },
        ...(slices !== undefined ? { slices } : {}),
        store: { schema: store },
      };
      const path = join(dir, `${name}.json`);
      writeFileSync(path, JSON.stringify(config));
      const run = (): { seconds: number; maxRssMiB: number; findings: number } => {
        const r = spawnSync(process.execPath, ['--import', 'tsx', 'tests/bench/run-child.ts', path, DAY], { env, encoding: 'utf8', maxBuffer: 1 << 20 });
        if (r.status !== 0) throw new Error(`run-child failed: ${r.stderr}`);
        // PLUMBLINE_LOG_LEVEL=debug: the phases of each run, with their durations.
        if (process.env['PLUMBLINE_LOG_LEVEL'] === 'debug') process.stderr.write(`-- ${name}\n${r.stderr}`);
        return JSON.parse(r.stdout.trim().split('\n').pop()!) as { seconds: number; maxRssMiB: number; findings: number };
      };
      run(); // builds and stores the baseline (and its slices')
      const a = run();
      const b = run();
      return a.seconds <= b.seconds ? a : b;
    };
    const plain = timed('plain', undefined);
    const sliced = timed('sliced', { topK: [10], segments: [{ column: 'market', maxValues: 10, minRows: 1000 }] });
    console.log('');
    console.log('slices                              run (s)   peak RSS (MiB)   findings');
    console.log(`none                                ${plain.seconds.toFixed(2).padStart(7)}   ${plain.maxRssMiB.toFixed(0).padStart(14)}   ${String(plain.findings).padStart(8)}`);
    console.log(`top10 + market (5 values)           ${sliced.seconds.toFixed(2).padStart(7)}   ${sliced.maxRssMiB.toFixed(0).padStart(14)}   ${String(sliced.findings).padStart(8)}`);
    console.log(`ratio (with / without): ${(sliced.seconds / plain.seconds).toFixed(2)} at ${rows.toLocaleString('en-US')} rows (best of two runs each, baseline stored)`);
    console.log('target (issue 9): ratio <= 1.5 at 1,000,000 rows x 50 features');
  } finally {
    await client.query([src, ...stores].map((s) => `DROP SCHEMA IF EXISTS ${s} CASCADE`).join('; '));
    await client.end();
  }
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await main();
}
