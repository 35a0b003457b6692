/**
 * Benchmark of a daily run against a real PostgreSQL: days of 250k, 500k and 1M rows x 50
 * double precision features (lists of 50 items), with the baseline already stored, timed
 * against the floor of moving the same rows out of PostgreSQL (binary COPY to /dev/null
 * through psql). Prints figures; asserts nothing.
 *
 *   PLUMBLINE_BENCH_DATABASE_URL=postgres://postgres@127.0.0.1:5432/test npx tsx tests/bench/run.bench.ts
 *
 * (falls back to PLUMBLINE_TEST_DATABASE_URL). Creates and drops its own schemas.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { featureExprs, featureNames } from './day-shapes.ts';

const FEATURES = 50;
const LIST_SIZE = 50;
const DAYS = [
  { date: '2026-01-08', rows: 250_000 },
  { date: '2026-01-09', rows: 500_000 },
  { date: '2026-01-10', rows: 1_000_000 },
];
const BASELINE = [
  { date: '2026-01-06', rows: 250_000 },
  { date: '2026-01-07', rows: 250_000 },
];

const featureColumns = (): string[] => featureNames(FEATURES);

async function createDay(client: pg.Client, table: string, date: string, rows: number, shift: number): Promise<void> {
  const lists = rows / LIST_SIZE;
  const exprs = featureExprs(FEATURES, LIST_SIZE, shift);
  await client.query(
    `INSERT INTO ${table} SELECT $1::date, 'q' || (g.i / ${LIST_SIZE}), 'item' || g.i, (g.i % ${LIST_SIZE}) + 1, ${exprs.join(', ')}
       FROM generate_series(0, $2::int - 1) AS g(i)`,
    [date, lists * LIST_SIZE],
  );
}

function copyFloorSeconds(url: string, table: string, date: string): number {
  const cols = ['list_id', 'item_id', 'position', ...featureColumns()].join(', ');
  const t0 = process.hrtime.bigint();
  execFileSync('psql', [url, '-X', '-q', '-c', `COPY (SELECT ${cols} FROM ${table} WHERE snapshot_date = DATE '${date}') TO STDOUT (FORMAT binary)`], { stdio: ['ignore', 'ignore', 'inherit'] });
  return Number(process.hrtime.bigint() - t0) / 1e9;
}

export async function main(): Promise<void> {
  const url = process.env['PLUMBLINE_BENCH_DATABASE_URL'] ?? process.env['PLUMBLINE_TEST_DATABASE_URL'];
  if (url === undefined) {
    console.log('run.bench: set PLUMBLINE_BENCH_DATABASE_URL (or PLUMBLINE_TEST_DATABASE_URL) to a PostgreSQL server; skipped');
    return;
  }
  // PLUMBLINE_BENCH_KEEP=1 keeps the generated data (schema bench_src_keep) for profiling.
  const keep = process.env['PLUMBLINE_BENCH_KEEP'] === '1';
  const suffix = keep ? 'keep' : Date.now().toString(36);
  const src = `bench_src_${suffix}`;
  const store = `bench_store_${suffix}`;
  const table = `${src}.day_rows`;
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  try {
    const exists = keep && (await client.query(`SELECT 1 FROM pg_namespace WHERE nspname = $1`, [src])).rowCount === 1;
    if (!exists) await client.query(`CREATE SCHEMA ${src}`);
    if (!exists) await client.query(
      `CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, ${featureColumns().map((c) => `${c} double precision`).join(', ')})`,
    );
    const t0 = Date.now();
    if (!exists) {
      for (const d of [...BASELINE, ...DAYS]) await createDay(client, table, d.date, d.rows, d.date === '2026-01-10' ? 0.05 : 0);
      await client.query(`CREATE INDEX ON ${table} (snapshot_date)`);
      await client.query(`ANALYZE ${table}`);
    }
    console.log(`run.bench: generated ${[...BASELINE, ...DAYS].reduce((s, d) => s + d.rows, 0).toLocaleString('en-US')} rows x ${FEATURES} features in ${((Date.now() - t0) / 1000).toFixed(1)} s`);

    const dir = mkdtempSync(join(tmpdir(), 'plumbline-bench-'));
    const config = {
      source: { table, maxRowsPerDay: 5_000_000 },
      features: featureColumns().map((name, i) => ({ name, kind: 'numeric', ...(i % 4 === 3 ? { withinList: { rule: 'minmax' } } : {}) })),
      baseline: { window: { type: 'fixed', from: BASELINE[0]!.date, to: BASELINE[BASELINE.length - 1]!.date } },
      store: { schema: store },
    };
    const configPath = join(dir, 'config.json');
    writeFileSync(configPath, JSON.stringify(config));
    const env = { ...process.env, PLUMBLINE_SOURCE_URL: url, PLUMBLINE_STORE_URL: url };
    const child = (date: string): { seconds: number; maxRssMiB: number } => {
      const r = spawnSync(process.execPath, ['--import', 'tsx', 'tests/bench/run-child.ts', configPath, date], { env, encoding: 'utf8', maxBuffer: 1 << 20 });
      if (r.status !== 0) throw new Error(`run-child failed: ${r.stderr}`);
      return JSON.parse(r.stdout.trim().split('\n').pop()!) as { seconds: number; maxRssMiB: number };
    };

    // The baseline is computed and stored by a first run (not timed here).
    const warm = child(DAYS[0]!.date);
    console.log(`run.bench: first run (builds and stores the baseline of ${BASELINE.length} days): ${warm.seconds.toFixed(2)} s`);
    console.log('');
    console.log('rows/day    run (s)   COPY floor (s)   ratio   peak RSS (MiB)');
    for (const d of DAYS) {
      const floor = copyFloorSeconds(url, table, d.date);
      const run = child(d.date);
      console.log(`${d.rows.toLocaleString('en-US').padStart(9)}   ${run.seconds.toFixed(2).padStart(7)}   ${floor.toFixed(2).padStart(14)}   ${(run.seconds / floor).toFixed(2).padStart(5)}   ${run.maxRssMiB.toFixed(0).padStart(14)}`);
    }
    console.log('');
    console.log('targets (issue 3): run <= 2x the COPY floor; peak RSS < 1 GiB at 1M rows; memory flat as the day grows');
  } finally {
    if (!keep) await client.query(`DROP SCHEMA IF EXISTS ${src} CASCADE; DROP SCHEMA IF EXISTS ${store} CASCADE`);
    await client.end();
  }
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await main();
}
