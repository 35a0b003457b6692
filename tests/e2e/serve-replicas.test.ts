/**
 * Two `plumbline serve` replicas on one store (a real PostgreSQL server), the way a
 * deployment with several pods runs: every replica must export the latest stored run within
 * seconds, whoever stored it (the leader's own run, or `plumbline run` from the command line),
 * and manual runs must not be able to break the monitor (future dates, dates before the first
 * snapshot, a missing or wrong token, a foreign Host header, a replica that is not the leader).
 *
 * The refresh delays are printed ([serve-replicas] lines): the time from the writer's
 * "run completed" log line to the moment the other replica's /metrics shows the run.
 */
import { request as httpRequest } from 'node:http';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { loadScenario } from '../../demo-data/load.ts';
import { addDays } from '../../demo-data/scenario.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { runCli, runServeExpectingExit, startService, withApplicationName } from '../support/service.ts';
import { serviceSuite, testSchedule, yesterdayUtc as yesterday } from '../support/service-suite.ts';
import { until } from '../support/tools.ts';

const url = testDatabaseUrl();
const svcUrl = url === undefined ? '' : withApplicationName(url, 'plumbline-e2e-replicas');
const BASELINE_DAYS = 7;
const RUN_TOKEN = 'replicas-run-token-5f2c9a7d41';

describe.skipIf(url === undefined)(`two serve replicas on one store${url === undefined ? ' (skipped: PLUMBLINE_TEST_DATABASE_URL is not set)' : ''}`, () => {
  const suite = serviceSuite(url);

  it('every replica exports a run within seconds of its commit, whoever stored it; manual runs are guarded', async () => {
    const day = yesterday();
    const src = suite.schema('rep_src');
    const store = suite.schema('rep_store');
    const table = `${src}.impressions`;
    // BASELINE_DAYS + 2 days: the catch-up evaluates `day`; the CLI later runs the day before.
    await loadScenario(suite.admin, { table, layout: 'wide', scenario: { startDate: addDays(day, -BASELINE_DAYS - 1), days: BASELINE_DAYS + 2, listsPerDay: 100, meanListSize: 10, seed: 5150, faults: [] } });
    const config = scenarioConfig(table, {
      storeSchema: store,
      overrides: {
        baseline: { window: { type: 'trailing', days: BASELINE_DAYS } },
        schedule: testSchedule(),
        // The periodic fallback is long, so a change within seconds can only come from NOTIFY.
        http: { host: '127.0.0.1', port: 0, manualRuns: { enabled: true }, refreshSeconds: 3600 },
      },
    });

    // Replica A starts first and becomes the leader; its catch-up evaluates `day`.
    const a = await startService({ runToken: RUN_TOKEN, config, sourceUrl: svcUrl });
    await a.waitForLog('the catch-up run', (l) => l.msg === 'run completed' && l['runDate'] === day, 60_000);
    expect(await a.metric('plumbline_leader')).toBe(1);
    const b = await startService({ runToken: RUN_TOKEN, config, sourceUrl: svcUrl });
    // B loaded the stored run at start, and is not the leader.
    await until('B to load the stored run', 20_000, async () => ((await b.metric('plumbline_runs_total')) === 1 ? true : undefined), 100);
    expect(await b.metric('plumbline_leader')).toBe(0);
    expect(await b.metric('plumbline_snapshot_date_timestamp_seconds')).toBe(Date.parse(`${day}T00:00:00Z`) / 1000);

    // --- a manual re-run on the leader: B follows through NOTIFY ---------------------------------
    const lastRunOnB = await b.metric('plumbline_last_run_timestamp_seconds');
    const fromA = a.logs.length;
    const accepted = await a.postRun(`/api/v1/runs?date=${day}`);
    expect(accepted.status, accepted.body).toBe(202);
    const done = await a.waitForLog('the re-run', (l) => l.msg === 'run completed' && l['runDate'] === day, 60_000, fromA);
    const seenOnB = await until('B to export the re-run', 15_000, async () => ((await b.metric('plumbline_runs_total')) === 2 ? Date.now() : undefined), 20);
    const leaderDelayMs = seenOnB - Date.parse(String(done.time));
    expect(await b.metric('plumbline_last_run_timestamp_seconds')).toBeGreaterThan(lastRunOnB!);

    // --- `plumbline run` from the command line: both replicas follow -----------------------------
    const older = addDays(day, -1);
    const cli = await cliWithConfig(config, older);
    expect(cli.result.code, cli.result.stderr).toBe(0);
    const cliDone = cli.result.logs.find((l) => l.msg === 'run completed' && l['runDate'] === older);
    expect(cliDone).toBeDefined();
    const [cliSeenOnA, cliSeenOnB] = await Promise.all(
      [a, b].map((s) => until('the CLI run on both replicas', 15_000, async () => ((await s.metric('plumbline_runs_total')) === 3 ? Date.now() : undefined), 20)),
    );
    const cliDelayA = cliSeenOnA! - Date.parse(String(cliDone!.time));
    const cliDelayB = cliSeenOnB! - Date.parse(String(cliDone!.time));
    // An older date is history: "latest" stays `day` on both.
    for (const s of [a, b]) expect(await s.metric('plumbline_snapshot_date_timestamp_seconds')).toBe(Date.parse(`${day}T00:00:00Z`) / 1000);
    console.log(
      `[serve-replicas] refresh delay, commit log line -> other replica's /metrics: leader's run -> B ${leaderDelayMs} ms; CLI run -> A ${cliDelayA} ms, -> B ${cliDelayB} ms (polling every 20 ms)`,
    );

    // --- manual runs are guarded -------------------------------------------------------------------
    const future = addDays(day, 30);
    const tooNew = await a.post(`/api/v1/runs?date=${future}`);
    expect(tooNew.status).toBe(400);
    expect((tooNew.json as { message: string }).message).toContain(`${future} is after ${day}`);
    const tomorrow = addDays(day, 2);
    expect((await a.post(`/api/v1/runs?date=${tomorrow}`)).status).toBe(400);
    const first = addDays(day, -BASELINE_DAYS - 1);
    const tooOld = await a.post(`/api/v1/runs?date=${addDays(first, -1)}`);
    expect(tooOld.status).toBe(400);
    expect((tooOld.json as { message: string }).message).toBe(`${addDays(first, -1)} is before ${first}, the first snapshot date in ${table}`);
    expect((await a.post(`/api/v1/runs?date=${day}`, { authorization: '' })).status).toBe(401);
    expect((await a.post(`/api/v1/runs?date=${day}`, { authorization: `Bearer ${RUN_TOKEN.slice(1)}` })).status).toBe(401);
    // fetch() may not set Host; a browser on a rebinding domain sends its own name there.
    const rebound = await postWithHost(`${a.url}/api/v1/runs?date=${day}`, `rebind.attacker.example:${new URL(a.url).port}`, RUN_TOKEN);
    expect(rebound).toBe(421);
    // B is not the leader: it refuses rather than running beside the leader.
    const onFollower = await b.post(`/api/v1/runs?date=${day}`);
    expect(onFollower.status).toBe(409);
    expect((onFollower.json as { message: string }).message).toContain('another replica holds the leader lock');
    // None of these stored anything: still three runs, and nothing after `day`.
    const rows = (await suite.admin.query<{ n: number; newest: string }>(`SELECT count(*)::int AS n, max(run_date)::text AS newest FROM "${store}".runs`)).rows[0]!;
    expect(rows).toEqual({ n: 3, newest: day });

    // The CLI refuses a future date too (exit 2, naming the date), and stores nothing.
    const cliFuture = await cliWithConfig(config, future);
    expect(cliFuture.result.code).toBe(2);
    expect(cliFuture.result.stderr).toContain(`${future} is after ${day}`);
    expect((await suite.admin.query<{ n: number }>(`SELECT count(*)::int AS n FROM "${store}".runs`)).rows[0]!.n).toBe(3);

    expect(await b.stop()).toEqual({ code: 0, signal: null });
    expect(await a.stop()).toEqual({ code: 0, signal: null });
  }, 150_000);

  it('a run stored for a future date (an older version, a manual SQL insert) is never "latest", and catch-up goes on', async () => {
    const day = yesterday();
    const src = suite.schema('rep_fut_src');
    const store = suite.schema('rep_fut_store');
    const table = `${src}.impressions`;
    await loadScenario(suite.admin, { table, layout: 'wide', scenario: { startDate: addDays(day, -BASELINE_DAYS), days: BASELINE_DAYS + 1, listsPerDay: 100, meanListSize: 10, seed: 99, faults: [] } });
    const config = scenarioConfig(table, {
      storeSchema: store,
      overrides: {
        baseline: { window: { type: 'trailing', days: BASELINE_DAYS } },
        schedule: testSchedule({ catchUpMaxDays: 3 }),
        http: { host: '127.0.0.1', port: 0 },
      },
    });
    // What the old `POST /api/v1/runs?date=<future>` left behind: a snapshot_missing run for a future date.
    const cliMigrate = await cliWithConfig(config, null, ['migrate']);
    expect(cliMigrate.result.code, cliMigrate.result.stderr).toBe(0);
    const future = addDays(day, 40);
    const bogus = { schemaVersion: 1, runDate: future, status: 'critical', findings: [], baseline: {}, current: { rows: 0 } };
    await suite.admin.query(
      `INSERT INTO "${store}".runs (run_date, started_at, finished_at, outcome, status, config_fingerprint, duration_seconds, report) VALUES ($1, now(), now(), 'success', 'critical', 'old', 0, $2::jsonb)`,
      [future, JSON.stringify(bogus)],
    );
    const svc = await startService({ config, sourceUrl: svcUrl });
    await svc.waitForLog('the catch-up run', (l) => l.msg === 'run completed' && l['runDate'] === day, 60_000);
    const latest = await until('the latest report', 10_000, async () => {
      const r = await svc.get('/api/v1/reports/latest');
      return r.status === 200 && (r.json as { runDate: string }).runDate === day ? r.json : undefined;
    });
    expect((latest as { runDate: string }).runDate).toBe(day);
    await until('the metrics of the catch-up run', 10_000, async () => ((await svc.metric('plumbline_snapshot_date_timestamp_seconds')) === Date.parse(`${day}T00:00:00Z`) / 1000 ? true : undefined));
    // Manual runs are off unless enabled: the route does not exist.
    expect((await svc.post(`/api/v1/runs?date=${day}`)).status).toBe(404);
    // The status page shows the same "latest".
    const page = await svc.get('/');
    expect(page.status).toBe(200);
    expect(page.body).toContain(`<h1 id="run-h">Run of ${day} `);
    expect(await svc.stop()).toEqual({ code: 0, signal: null });

    // Enabled without a token: refused before anything starts (exit 2, naming the variable).
    const noToken = await runServeExpectingExit({ config: { ...config, http: { ...config.http, manualRuns: { enabled: true } } }, sourceUrl: svcUrl });
    expect(noToken.exit).toEqual({ code: 2, signal: null });
    expect(noToken.stderr.join('\n')).toContain('PLUMBLINE_RUN_TOKEN');
    expect(noToken.logs.some((l) => l.msg === 'listening')).toBe(false);

    // http.statusPage: false leaves only metrics, health and the API.
    const bare = await startService({ config: { ...config, http: { ...config.http, statusPage: false } }, sourceUrl: svcUrl });
    expect((await bare.get('/')).status).toBe(404);
    expect((await bare.get('/metrics')).status).toBe(200);
    expect((await bare.get(`/api/v1/reports/${day}`)).status).toBe(200);
    expect(await bare.stop()).toEqual({ code: 0, signal: null });
  }, 90_000);

  function postWithHost(target: string, host: string, token: string): Promise<number> {
    return new Promise((resolve, reject) => {
      const req = httpRequest(target, { method: 'POST', headers: { host, authorization: `Bearer ${token}` } }, (res) => {
        res.resume();
        res.on('end', () => resolve(res.statusCode ?? 0));
      });
      req.on('error', reject);
      req.end();
    });
  }

  /** `plumbline <command> --config FILE [--date D]` with the config written to a temp file. */
  async function cliWithConfig(config: unknown, date: string | null, command: string[] = ['run']): Promise<{ result: Awaited<ReturnType<typeof runCli>> }> {
    const dir = mkdtempSync(join(tmpdir(), 'plumbline-cli-'));
    const file = join(dir, 'plumbline.json');
    writeFileSync(file, JSON.stringify(config));
    try {
      const args = [...command, '--config', file, ...(date !== null ? ['--date', date] : [])];
      const result = await runCli(args, { PLUMBLINE_SOURCE_URL: withApplicationName(url!, 'plumbline-e2e-cli') });
      return { result };
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  }
});
