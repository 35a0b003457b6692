/**
 * The performance targets of a daily run, as ratios measured in one run (three repetitions,
 * interleaved, so that a change in the machine's load hits both sides of a ratio alike):
 *
 * 1. stream engine, 1M rows x 50 double features, baseline stored, run as deployed
 *    (`node dist/cli.js run`, compiled JavaScript, no TypeScript loader): wall time against
 *    binary COPY of the same rows to /dev/null through psql; peak RSS against the bytes of
 *    the day's feature columns as float64 plus a fixed overhead: the growth of peak RSS from
 *    a 250,000-row day to the 1M-row day per byte of feature columns (the fixed overhead is
 *    what that line leaves at zero rows), and, as before, the peak less that of a 1,000-row
 *    day (which starts no worker thread) over the big day's columns;
 * 2. pushdown engine, same day, one server: wall time against one aggregate statement that
 *    counts all 50 histograms on the same bins (the baseline's fine bins) in one scan
 *    (GROUPING SETS, JIT off, parallel workers as the server is configured);
 * 3. pushdown on two shards (postgres_fdw partitions by hash of the list id, on two extra
 *    PostgreSQL 15 servers on loopback) against the same engine on one server, same rows.
 *
 * It also prints where each run's time goes (the phases the run logs at debug level).
 * Prints figures; asserts nothing. Needs `psql`, `/usr/bin/time` and a PostgreSQL server:
 *
 *   PLUMBLINE_BENCH_DATABASE_URL=postgres://postgres@127.0.0.1:5432/test npx tsx tests/bench/targets.bench.ts
 *
 * (falls back to PLUMBLINE_TEST_DATABASE_URL). PLUMBLINE_BENCH_KEEP=1 keeps the generated tables
 * and configs for profiling a run by hand. PLUMBLINE_BENCH_SHARD_JIT=1 leaves JIT to the
 * shards' default in part 3 (by default the foreign servers carry options '-c jit=off', as README
 * recommends). PLUMBLINE_BENCH_SHARDS=0 skips part 3 (it
 * starts two servers and copies the rows into them); PLUMBLINE_BENCH_PARTS=1 (or 1,2) runs
 * only the parts named. Creates and drops its own schemas, database and servers.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { cpus, tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import pg from 'pg';
import { parseConfig } from '../../src/config/index.ts';
import { withFineBins } from '../../src/profile/index.ts';
import { widthBucketThresholds } from '../../src/source/index.ts';
import { Store } from '../../src/store/index.ts';
import { startShards, type Shards } from '../support/shards.ts';
import { featureExprs, featureNames } from './day-shapes.ts';

const FEATURES = 50;
const LIST_SIZE = 50;
// PLUMBLINE_BENCH_REPS: repetitions of each measurement (default 3).
const REPS = Number(process.env['PLUMBLINE_BENCH_REPS'] ?? 3);
const BASELINE = [
  { date: '2026-03-02', rows: 250_000 },
  { date: '2026-03-03', rows: 250_000 },
];
const SMALL = { date: '2026-03-04', rows: 1_000 };
const DAY = { date: '2026-03-05', rows: 1_000_000 };
const ROOT = new URL('../../', import.meta.url).pathname;

const names = (): string[] => featureNames(FEATURES);

async function createTable(c: pg.Client, table: string): Promise<void> {
  await c.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, ${names().map((n) => `${n} double precision`).join(', ')})`);
}

async function addDay(c: pg.Client, table: string, date: string, rows: number, shift: number): Promise<void> {
  await c.query(
    `INSERT INTO ${table} SELECT $1::date, 'q' || $1::text || '-' || (g.i / ${LIST_SIZE}), 'item' || g.i, (g.i % ${LIST_SIZE}) + 1, ${featureExprs(FEATURES, LIST_SIZE, shift).join(', ')}
       FROM generate_series(0, $2::int - 1) AS g(i)`,
    [date, rows],
  );
}

function writeConfig(dir: string, name: string, table: string, engine: 'stream' | 'pushdown', store: string): string {
  const config = {
    source: { table, engine, maxRowsPerDay: 5_000_000 },
    features: names().map((n, i) => ({ name: n, kind: 'numeric', ...(i % 4 === 3 ? { withinList: { rule: 'minmax' } } : {}) })),
    baseline: { window: { type: 'fixed', from: BASELINE[0]!.date, to: BASELINE[BASELINE.length - 1]!.date } },
    store: { schema: store },
  };
  const path = join(dir, `${name}.json`);
  writeFileSync(path, JSON.stringify(config));
  return path;
}

interface Measured {
  seconds: number;
  maxRssMiB: number;
  /** CPU seconds of the run's own process (user + system, /usr/bin/time), and of the whole machine while it ran (os.cpus(): the database backend included). */
  processCpu: number;
  machineCpu: number;
  /** Phases from the run's debug log, seconds. */
  phases: Record<string, number>;
}

/** `node dist/cli.js run` as a deployed service runs it, timed from outside (wall clock, peak RSS by /usr/bin/time). */
function cliRun(configPath: string, date: string, sourceUrl: string, storeUrl: string): Measured {
  const env = { ...process.env, PLUMBLINE_SOURCE_URL: sourceUrl, PLUMBLINE_STORE_URL: storeUrl, PLUMBLINE_LOG_LEVEL: 'debug' };
  const t0 = process.hrtime.bigint();
  const c0 = machineBusySeconds();
  const r = spawnSync('/usr/bin/time', ['-f', 'maxrss_kib=%M cpu_s=%U+%S', process.execPath, join(ROOT, 'dist/cli.js'), 'run', '--config', configPath, '--date', date, '--format', 'json'], { env, encoding: 'utf8', maxBuffer: 64 << 20 });
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const machineCpu = machineBusySeconds() - c0;
  if (r.status !== 0) throw new Error(`plumbline run failed (${r.status}): ${r.stderr.slice(-2000)}`);
  const rss = /maxrss_kib=(\d+)/.exec(r.stderr);
  const phases: Record<string, number> = {};
  for (const line of r.stderr.split('\n')) {
    if (!line.startsWith('{')) continue;
    const e = JSON.parse(line) as Record<string, unknown>;
    const put = (k: string, v: unknown): void => {
      if (typeof v === 'number') phases[k] = (phases[k] ?? 0) + v;
    };
    if (e['msg'] === 'baseline ready') put('baseline load', e['seconds']);
    else if (e['msg'] === 'day profiled') {
      put('COPY and parse', e['readSeconds']);
      put('slices', e['sliceSeconds']);
      put('sort/profile', e['profileSeconds']);
    } else if (e['msg'] === 'day profiled in the database') {
      put('list statement', e['listPassSeconds']);
      put('value statements', e['valuePassSeconds']);
      put('ranking statement', e['rankingSeconds']);
      put('slice statements', e['slicesSeconds']);
      put('sample read', e['sampleSeconds']);
      put('sample profile', e['profileSeconds']);
    } else if (e['msg'] === 'run stored') put('store writes', e['seconds']);
  }
  // Start-up (node, modules, config, pools, catalogue checks, migrations check) and the rest: what the phases leave.
  phases['start-up and the rest'] = seconds - Object.values(phases).reduce((s, x) => s + x, 0);
  const cpu = /cpu_s=([\d.]+)\+([\d.]+)/.exec(r.stderr);
  return { seconds, maxRssMiB: rss === null ? Number.NaN : Number(rss[1]) / 1024, processCpu: cpu === null ? Number.NaN : Number(cpu[1]) + Number(cpu[2]), machineCpu, phases };
}

/** CPU seconds all cores have spent busy since boot (user, nice, system, irq), from os.cpus(). */
function machineBusySeconds(): number {
  return cpus().reduce((s, c) => s + c.times.user + c.times.nice + c.times.sys + c.times.irq, 0) / 1000;
}

/** `sql` through psql: wall seconds, and the whole machine's busy CPU seconds meanwhile (the backend's, mostly). */
function psqlRun(url: string, sql: string): { seconds: number; machineCpu: number } {
  const t0 = process.hrtime.bigint();
  const c0 = machineBusySeconds();
  // On stdin: the reference statement (thousands of bin thresholds) is too long for a command line.
  execFileSync('psql', [url, '-X', '-q', '-v', 'ON_ERROR_STOP=1', '-f', '-'], { input: sql, stdio: ['pipe', 'ignore', 'inherit'], maxBuffer: 64 << 20 });
  return { seconds: Number(process.hrtime.bigint() - t0) / 1e9, machineCpu: machineBusySeconds() - c0 };
}

function copyFloorSql(table: string, date: string): string {
  return `COPY (SELECT ${['list_id', 'item_id', 'position', ...names()].join(', ')} FROM ${table} WHERE snapshot_date = DATE '${date}') TO STDOUT (FORMAT binary)`;
}

/**
 * The reference statement: every feature's counts on the same bins the value statement
 * counts into (the baseline's fine bins), all in one scan of the day.
 */
async function histogramSql(url: string, configPath: string, storeSchema: string, table: string, date: string): Promise<string> {
  const config = parseConfig(JSON.parse(readFileSync(configPath, 'utf8')), configPath);
  const pool = new pg.Pool({ connectionString: url, max: 1 });
  try {
    const store = new Store(pool, storeSchema);
    const report = await store.latestReport();
    const stored = report === null ? null : await store.loadBaseline(report.baseline.fingerprint);
    if (stored === null) throw new Error('targets.bench: no stored baseline for the reference statement');
    const baseline = withFineBins(stored);
    const codes = config.features.map((f, i) => {
      const spec = baseline.fineBins?.[f.name] ?? baseline.bins[f.name];
      if (spec === undefined) throw new Error(`targets.bench: no bins for ${f.name}`);
      return `width_bucket(${f.name}, '{${widthBucketThresholds(spec).map((x) => (Number.isFinite(x) ? x.toPrecision(17) : String(x))).join(',')}}'::float8[]) AS b${i}`;
    });
    const sets = config.features.map((_, i) => `(b${i})`).join(', ');
    return `SET jit = off; SELECT ${config.features.map((_, i) => `b${i}`).join(', ')}, count(*) FROM (SELECT ${codes.join(', ')} FROM ${table} WHERE snapshot_date = DATE '${date}') AS s GROUP BY GROUPING SETS (${sets})`;
  } finally {
    await pool.end();
  }
}

const range = (xs: number[], digits = 2): string => `${Math.min(...xs).toFixed(digits)}-${Math.max(...xs).toFixed(digits)}`;
const median = (xs: number[]): number => [...xs].sort((a, b) => a - b)[Math.floor(xs.length / 2)]!;

function printSplit(title: string, runs: Measured[]): void {
  console.log(`  where the time goes (${title}, median of ${runs.length} runs, s):`);
  for (const k of Object.keys(runs[0]!.phases)) console.log(`    ${k.padEnd(24)} ${median(runs.map((r) => r.phases[k] ?? 0)).toFixed(2).padStart(6)}`);
}

function loadAverage(): string {
  try {
    return execFileSync('cat', ['/proc/loadavg'], { encoding: 'utf8' }).split(' ').slice(0, 3).join(' ');
  } catch {
    return 'unknown';
  }
}

export async function main(): Promise<void> {
  const url = process.env['PLUMBLINE_BENCH_DATABASE_URL'] ?? process.env['PLUMBLINE_TEST_DATABASE_URL'];
  if (url === undefined) {
    console.log('targets.bench: set PLUMBLINE_BENCH_DATABASE_URL (or PLUMBLINE_TEST_DATABASE_URL) to a PostgreSQL server; skipped');
    return;
  }
  if (!existsSync('/usr/bin/time')) {
    console.log('targets.bench: /usr/bin/time (Debian package time) is needed for the peak RSS of a process; skipped');
    return;
  }
  const suffix = Date.now().toString(36);
  const src = `tgbench_src_${suffix}`;
  const stores = ['stream', 'push', 'shard'].map((s) => `tgbench_${s}_${suffix}`);
  const coordDb = `tgbench_coord_${suffix}`;
  const dir = mkdtempSync(join(tmpdir(), 'plumbline-tgbench-'));
  const table = `${src}.day_rows`;
  const client = new pg.Client({ connectionString: url });
  client.on('error', (err) => console.log(`targets.bench: connection: ${err.message}`));
  await client.connect();
  let shards: Shards | undefined;
  try {
    let t0 = Date.now();
    execFileSync(process.execPath, [join(ROOT, 'node_modules/typescript/bin/tsc'), '-p', join(ROOT, 'tsconfig.build.json')], { stdio: 'inherit' });
    console.log(`targets.bench: built dist/ in ${((Date.now() - t0) / 1000).toFixed(1)} s; load average at start ${loadAverage()}`);
    await client.query(`CREATE SCHEMA ${src}`);
    await createTable(client, table);
    t0 = Date.now();
    for (const d of [...BASELINE, SMALL, DAY]) await addDay(client, table, d.date, d.rows, d === DAY ? 0.05 : 0);
    await client.query(`CREATE INDEX ON ${table} (snapshot_date)`);
    await client.query(`VACUUM ANALYZE ${table}`);
    console.log(`targets.bench: generated ${[...BASELINE, SMALL, DAY].reduce((s, d) => s + d.rows, 0).toLocaleString('en-US')} rows x ${FEATURES} features in ${((Date.now() - t0) / 1000).toFixed(1)} s`);

    const parts = (process.env['PLUMBLINE_BENCH_PARTS'] ?? '1,2,3').split(',').map((p) => p.trim());
    // ---- 1. stream engine against the binary COPY floor
    if (parts.includes('1')) {
      const streamConfig = writeConfig(dir, 'stream', table, 'stream', stores[0]!);
      cliRun(streamConfig, SMALL.date, url, url); // builds and stores the baseline (not timed)
      const fixed = [cliRun(streamConfig, SMALL.date, url, url), cliRun(streamConfig, SMALL.date, url, url)];
      const fixedMiB = Math.min(...fixed.map((r) => r.maxRssMiB));
      const columnMiB = (DAY.rows * FEATURES * 8) / 2 ** 20;
      const floors: number[] = [];
      const streams: Measured[] = [];
      // A smaller day of the same shape (the second baseline day, evaluated against the stored
      // baseline): the growth of peak RSS from it to the big day, per byte of feature columns,
      // is what each byte of a day costs; the rest, whatever the day's size, is the fixed overhead.
      const mids: Measured[] = [];
      const MID = BASELINE[BASELINE.length - 1]!;
      const floorCpu: number[] = [];
      for (let i = 0; i < REPS; i++) {
        const floor = psqlRun(url, copyFloorSql(table, DAY.date));
        floors.push(floor.seconds);
        floorCpu.push(floor.machineCpu);
        streams.push(cliRun(streamConfig, DAY.date, url, url));
        mids.push(cliRun(streamConfig, MID.date, url, url));
      }
      console.log('');
      console.log(`1. stream engine, ${DAY.rows.toLocaleString('en-US')} rows x ${FEATURES} features, baseline stored, node dist/cli.js run (load average now ${loadAverage()})`);
      console.log('   rep   run (s)   COPY floor (s)   ratio   peak RSS (MiB)');
      streams.forEach((r, i) => console.log(`   ${String(i + 1).padStart(3)}   ${r.seconds.toFixed(2).padStart(7)}   ${floors[i]!.toFixed(2).padStart(14)}   ${(r.seconds / floors[i]!).toFixed(2).padStart(5)}   ${r.maxRssMiB.toFixed(0).padStart(14)}`));
      const streamRatios = streams.map((r, i) => r.seconds / floors[i]!);
      const rssRatios = streams.map((r) => (r.maxRssMiB - fixedMiB) / columnMiB);
      const midColumnMiB = (MID.rows * FEATURES * 8) / 2 ** 20;
      const slopes = streams.map((r, i) => (r.maxRssMiB - mids[i]!.maxRssMiB) / (columnMiB - midColumnMiB));
      const intercepts = mids.map((m, i) => m.maxRssMiB - slopes[i]! * midColumnMiB);
      console.log(`   RATIO run / COPY floor: ${range(streamRatios)} (target <= 1.25)`);
      console.log(`   RATIO peak RSS per MiB of feature columns as float64, ${MID.rows.toLocaleString('en-US')} -> ${DAY.rows.toLocaleString('en-US')} rows (${midColumnMiB.toFixed(0)} -> ${columnMiB.toFixed(0)} MiB of columns; peak ${range(mids.map((m) => m.maxRssMiB), 0)} -> ${range(streams.map((r) => r.maxRssMiB), 0)} MiB): ${range(slopes)} (target <= 1.2); the fixed overhead, what the line leaves at zero rows: ${range(intercepts, 0)} MiB`);
      console.log(`   (peak RSS - ${fixedMiB.toFixed(0)} MiB, the peak of the same command on a ${SMALL.rows.toLocaleString('en-US')}-row day, which starts no worker thread) / feature columns: ${range(rssRatios)}`);
      printSplit('stream', streams);
      // Where the CPU goes: on a machine this small the run is bound by CPU, not by waiting. The
      // machine's busy CPU seconds over its cores is the shortest the run could take were every
      // part of it perfectly overlapped; against the floor, that is the least ratio this amount of work allows.
      const cores = cpus().length;
      console.log(`  CPU seconds (median of ${streams.length}): the run's process ${median(streams.map((r) => r.processCpu)).toFixed(2)}; the whole machine during the run ${median(streams.map((r) => r.machineCpu)).toFixed(2)} of ${(cores * median(streams.map((r) => r.seconds))).toFixed(2)} (${cores} cores x wall), during the COPY floor ${median(floorCpu).toFixed(2)}`);
      console.log(`  the least ratio the run's CPU work allows on ${cores} cores (machine busy CPU s / ${cores} / floor, perfect overlap): ${range(streams.map((r, i) => r.machineCpu / cores / floors[i]!))}`);
    }
    if (!parts.includes('2') && !parts.includes('3')) return;

    // ---- 2. pushdown engine against the one-statement histogram of the same bins
    const pushConfig = writeConfig(dir, 'push', table, 'pushdown', stores[1]!);
    cliRun(pushConfig, DAY.date, url, url); // builds and stores the baseline (not timed)
    if (parts.includes('2')) {
      const refSql = await histogramSql(url, pushConfig, stores[1]!, table, DAY.date);
      const refs: number[] = [];
      const pushes: Measured[] = [];
      for (let i = 0; i < REPS; i++) {
        refs.push(psqlRun(url, refSql).seconds);
        pushes.push(cliRun(pushConfig, DAY.date, url, url));
      }
      console.log('');
      console.log(`2. pushdown engine, same day, one server (load average now ${loadAverage()})`);
      console.log('   rep   run (s)   one-statement histogram (s)   ratio   peak RSS (MiB)');
      pushes.forEach((r, i) => console.log(`   ${String(i + 1).padStart(3)}   ${r.seconds.toFixed(2).padStart(7)}   ${refs[i]!.toFixed(2).padStart(27)}   ${(r.seconds / refs[i]!).toFixed(2).padStart(5)}   ${r.maxRssMiB.toFixed(0).padStart(14)}`));
      console.log(`   RATIO run / one-statement histogram: ${range(pushes.map((r, i) => r.seconds / refs[i]!))} (target <= 1.5)`);
      printSplit('pushdown, one server', pushes);
    }

    // ---- 3. two shards against one server
    if (process.env['PLUMBLINE_BENCH_SHARDS'] === '0' || !parts.includes('3')) {
      console.log('');
      console.log('3. two shards: skipped (PLUMBLINE_BENCH_SHARDS=0 or PLUMBLINE_BENCH_PARTS)');
      return;
    }
    try {
      shards = await startShards(2);
    } catch (err) {
      console.log(`targets.bench: cannot start two PostgreSQL 15 servers (${(err as Error).message.split('\n')[0]}); part 3 skipped`);
      return;
    }
    await client.query(`CREATE DATABASE ${coordDb}`);
    const u = new URL(url);
    u.pathname = `/${coordDb}`;
    const coordUrl = u.toString();
    const coord = new pg.Client({ connectionString: coordUrl });
    coord.on('error', (err) => console.log(`targets.bench: coordinator connection: ${err.message}`));
    await coord.connect();
    try {
      await coord.query(`CREATE EXTENSION postgres_fdw; CREATE SCHEMA src`);
      await createTable(coord, 'src.day_rows_local');
      await coord.query(`CREATE TABLE src.day_rows (LIKE src.day_rows_local) PARTITION BY HASH (list_id)`);
      for (const [i, s] of shards.shards.entries()) {
        const sc = new pg.Client({ connectionString: s.url });
        sc.on('error', (err) => console.log(`targets.bench: shard connection: ${err.message}`));
        await sc.connect();
        await createTable(sc, 'public.day_rows');
        await sc.end();
        // JIT off in the remote sessions, as README recommends (check-config --connect notes a server without it).
        const jit = process.env['PLUMBLINE_BENCH_SHARD_JIT'] === '1' ? '' : `, options '-c jit=off'`;
        await coord.query(`CREATE SERVER shard${i} FOREIGN DATA WRAPPER postgres_fdw OPTIONS (host '127.0.0.1', port '${s.port}', dbname 'postgres', async_capable 'true', batch_size '5000', fetch_size '50000'${jit})`);
        await coord.query(`CREATE USER MAPPING FOR CURRENT_USER SERVER shard${i} OPTIONS (user 'postgres')`);
        await coord.query(`CREATE FOREIGN TABLE src.day_rows_p${i} PARTITION OF src.day_rows FOR VALUES WITH (MODULUS 2, REMAINDER ${i}) SERVER shard${i} OPTIONS (schema_name 'public', table_name 'day_rows')`);
      }
      t0 = Date.now();
      // The same rows as the one-server table, routed to the shards by the partitioned table.
      await coord.query(`CREATE SERVER here FOREIGN DATA WRAPPER postgres_fdw OPTIONS (host '${new URL(url).hostname}', port '${new URL(url).port || '5432'}', dbname '${new URL(url).pathname.slice(1)}', fetch_size '50000')`);
      await coord.query(`CREATE USER MAPPING FOR CURRENT_USER SERVER here OPTIONS (user '${decodeURIComponent(new URL(url).username) || 'postgres'}')`);
      await coord.query(`CREATE FOREIGN TABLE src.one_server (snapshot_date date NOT NULL, list_id text, item_id text, position int, ${names().map((n) => `${n} double precision`).join(', ')}) SERVER here OPTIONS (schema_name '${src}', table_name 'day_rows')`);
      await coord.query(`INSERT INTO src.day_rows SELECT * FROM src.one_server WHERE snapshot_date IN (${[...BASELINE, DAY].map((d) => `DATE '${d.date}'`).join(', ')})`);
      for (const s of shards.shards) {
        const sc = new pg.Client({ connectionString: s.url });
        sc.on('error', (err) => console.log(`targets.bench: shard connection: ${err.message}`));
        await sc.connect();
        await sc.query('CREATE INDEX ON public.day_rows (snapshot_date)');
        await sc.query('VACUUM ANALYZE public.day_rows');
        await sc.end();
      }
      console.log('');
      console.log(`targets.bench: copied the rows into the two shards in ${((Date.now() - t0) / 1000).toFixed(1)} s`);
      const shardConfig = writeConfig(dir, 'shard', 'src.day_rows', 'pushdown', stores[2]!);
      cliRun(shardConfig, DAY.date, coordUrl, url); // builds and stores the baseline (not timed)
      const one: Measured[] = [];
      const two: Measured[] = [];
      for (let i = 0; i < REPS; i++) {
        one.push(cliRun(pushConfig, DAY.date, url, url));
        two.push(cliRun(shardConfig, DAY.date, coordUrl, url));
      }
      console.log(`3. pushdown engine, same rows, two shards (postgres_fdw, hash of the list id) against one server (load average now ${loadAverage()})`);
      console.log('   rep   two shards (s)   one server (s)   ratio   peak RSS two shards (MiB)');
      two.forEach((r, i) => console.log(`   ${String(i + 1).padStart(3)}   ${r.seconds.toFixed(2).padStart(14)}   ${one[i]!.seconds.toFixed(2).padStart(14)}   ${(r.seconds / one[i]!.seconds).toFixed(2).padStart(5)}   ${r.maxRssMiB.toFixed(0).padStart(25)}`));
      console.log(`   RATIO two shards / one server: ${range(two.map((r, i) => r.seconds / one[i]!.seconds))} (target <= 1; the shards and the coordinator share this machine's cores)`);
      printSplit('pushdown, two shards', two);
    } finally {
      await coord.end();
      await client.query(`DROP DATABASE IF EXISTS ${coordDb} WITH (FORCE)`);
    }
  } finally {
    await shards?.stop();
    if (process.env['PLUMBLINE_BENCH_KEEP'] === '1') {
      // For profiling one run by hand (DEVELOPERS.md): the tables and configs stay.
      console.log(`targets.bench: kept schemas ${[src, ...stores].join(', ')} and the configs in ${dir} (PLUMBLINE_BENCH_KEEP=1); drop them by hand`);
    } else {
      await client.query([src, ...stores].map((s) => `DROP SCHEMA IF EXISTS ${s} CASCADE`).join('; '));
      rmSync(dir, { recursive: true, force: true });
    }
    await client.end();
  }
}

if (process.argv[1] !== undefined && import.meta.url === pathToFileURL(process.argv[1]).href) {
  await main();
}
