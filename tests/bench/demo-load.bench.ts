/**
 * Prints how long loading the demo scenario takes, on a PostgreSQL server (env
 * PLUMBLINE_TEST_DATABASE_URL, skipped when unset) and on PGlite through its socket
 * server, for both layouts and both insert methods. Also prints the share of rows per
 * day and checks that NaN and infinities arrive as such. No assertions: figures only.
 *
 *   npx tsx tests/bench/demo-load.bench.ts [days] [listsPerDay]
 */
import { PGlite } from '@electric-sql/pglite';
import { PGLiteSocketServer } from '@electric-sql/pglite-socket';
import pg from 'pg';
import { DEMO_SCENARIO, generateDay, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario, type InsertMethod, type Layout } from '../../demo-data/load.ts';

const days = Number(process.argv[2] ?? 35);
const listsPerDay = Number(process.argv[3] ?? 400);
const scenario: ScenarioOptions = {
  ...DEMO_SCENARIO,
  days,
  listsPerDay,
  faults: [...(DEMO_SCENARIO.faults ?? []), { date: DEMO_SCENARIO.startDate, kind: 'nonfinite', feature: 'photo_quality', amount: 0.01 }],
};

async function generationOnly(): Promise<void> {
  const t0 = performance.now();
  let n = 0;
  for (let d = 0; d < 7; d++) for (const _ of generateDay(scenario, new Date(Date.parse(`${scenario.startDate}T00:00:00Z`) + d * 86_400_000).toISOString().slice(0, 10))) n++;
  const ms = (performance.now() - t0) / 7;
  console.log(`generation only: ${ms.toFixed(0)} ms per day (${Math.round(n / 7)} rows per day); load average ${(await import('node:os')).loadavg().map((x) => x.toFixed(1)).join(' ')}`);
}

async function run(label: string, client: pg.Client, methods: InsertMethod[]): Promise<void> {
  const schema = `demo_bench_${Math.random().toString(36).slice(2, 8)}`;
  try {
    for (const layout of ['wide', 'jsonb'] as Layout[]) {
      for (const method of methods) {
        const table = `${schema}.imp_${layout}_${method}`;
        const cpu0 = process.cpuUsage();
        const r = await loadScenario(client, { table, layout, scenario, method });
        const cpu = process.cpuUsage(cpu0);
        console.log(
          `${label.padEnd(16)} ${layout.padEnd(6)} ${method.padEnd(7)} ${r.rows} rows, ${r.days} days: ${r.seconds.toFixed(1)} s wall, ${((cpu.user + cpu.system) / 1e6).toFixed(1)} s CPU in this process (${Math.round(r.rows / r.seconds)} rows/s)`,
        );
      }
    }
    const col = `photo_quality`;
    const wide = await client.query(
      `SELECT count(*) FILTER (WHERE ${col} = 'NaN'::float8) AS nan, count(*) FILTER (WHERE ${col} = 'Infinity'::float8) AS pinf, count(*) FILTER (WHERE ${col} = '-Infinity'::float8) AS ninf FROM ${schema}.imp_wide_${methods.at(-1)} WHERE snapshot_date = $1`,
      [scenario.startDate],
    );
    const jsonb = await client.query(
      `SELECT count(*) FILTER (WHERE features->>'${col}' IN ('NaN', 'Infinity', '-Infinity')) AS nonfinite_text, count(*) FILTER (WHERE jsonb_typeof(features->'${col}') = 'number') AS numbers FROM ${schema}.imp_jsonb_values WHERE snapshot_date = $1`,
      [scenario.startDate],
    );
    console.log(`${label.padEnd(16)} nonfinite check, wide float8: ${JSON.stringify(wide.rows[0])}; jsonb: ${JSON.stringify(jsonb.rows[0])}`);
  } finally {
    await client.query(`DROP SCHEMA IF EXISTS ${schema} CASCADE`);
  }
}

await generationOnly();
const url = process.env.PLUMBLINE_TEST_DATABASE_URL;
if (url === undefined) console.log('server: skipped (set PLUMBLINE_TEST_DATABASE_URL)');
else {
  const client = new pg.Client({ connectionString: url, application_name: 'plumbline-demo-bench' });
  await client.connect();
  try {
    await run('server', client, ['unnest', 'values', 'copy']);
  } finally {
    await client.end();
  }
}

const db = await PGlite.create();
const server = new PGLiteSocketServer({ db, port: 0, host: '127.0.0.1' });
await server.start();
const [host, port] = server.getServerConn().split(':');
const client = new pg.Client({ host, port: Number(port), user: 'postgres', database: 'postgres' });
await client.connect();
try {
  // COPY FROM STDIN does not work through PGlite's socket server (protocol synchronisation is lost).
  await run('pglite (socket)', client, ['unnest', 'values']);
} finally {
  await client.end();
  await server.stop();
  await db.close();
}
