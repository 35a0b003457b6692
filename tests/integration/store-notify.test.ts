/**
 * The store's change notifications on a real PostgreSQL server: saveRun and recordFailure
 * NOTIFY the schema's channel once committed (a failed save sends nothing), and
 * listenToChannel (db/listen.ts) reconnects by itself when its connection is terminated,
 * reporting the reconnection as a notification (whatever was sent meanwhile was missed).
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createPool, listenToChannel, quoteIdent, type ChannelListener, type Pool } from '../../src/db/index.ts';
import { runsChannel, Store } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { until } from '../support/tools.ts';
import { scenarioDay } from '../unit/statuspage/fixtures.ts';

const url = testDatabaseUrl();

describe.skipIf(url === undefined)(`store notifications on a PostgreSQL server${url === undefined ? ' (skipped: PLUMBLINE_TEST_DATABASE_URL is not set)' : ''}`, () => {
  let pool: Pool;
  let schema: string;
  let store: Store;
  let listener: ChannelListener | undefined;
  const heard: (string | null)[] = [];
  const errors: string[] = [];

  beforeAll(async () => {
    pool = createPool({ url: url!, applicationName: 'plumbline-notify-test', statementTimeoutMs: 30_000 });
    schema = uniqueSchema('notify');
    store = new Store(pool, schema);
    await store.migrate();
    listener = listenToChannel({ pool, channel: store.channel, onNotify: (p) => void heard.push(p), onError: (err) => void errors.push(err.message), minRetryMs: 200 });
    await until('the listener to connect', 10_000, () => (listener!.connected && heard.includes(null) ? true : undefined), 20);
  });

  afterAll(async () => {
    await listener?.close();
    await pool?.query(`DROP SCHEMA IF EXISTS ${quoteIdent(schema)} CASCADE`);
    await pool?.end();
  });

  it('names a short channel of its own per schema', () => {
    expect(store.channel).toBe(runsChannel(schema));
    expect(runsChannel('plumbline')).toMatch(/^plumbline_runs_[0-9a-f]{16}$/);
    expect(runsChannel('plumbline')).not.toBe(runsChannel('plumbline_eu'));
  });

  it('notifies a committed run and a recorded failure, and nothing for a save that failed', async () => {
    heard.length = 0;
    await store.saveRun(scenarioDay(0, '2025-05-08'));
    await until('the notification of the saved run', 5000, () => (heard.includes('2025-05-08') ? true : undefined), 10);
    await store.recordFailure({ runDate: '2025-05-09', startedAt: '2025-05-10T06:30:00Z', finishedAt: '2025-05-10T06:30:01Z', error: 'source unreachable', configFingerprint: 'x' });
    await until('the notification of the failure', 5000, () => (heard.includes('2025-05-09') ? true : undefined), 10);
    // A finding with a status the table refuses: the transaction rolls back before its NOTIFY.
    const broken = scenarioDay(1, '2025-05-10');
    (broken.findings[0] as { status: string }).status = 'purple';
    await expect(store.saveRun(broken)).rejects.toThrow(/saving the run of 2025-05-10 failed/);
    // A later committed run arrives; the failed one never did.
    await store.saveRun(scenarioDay(2, '2025-05-11'));
    await until('the notification of the next run', 5000, () => (heard.includes('2025-05-11') ? true : undefined), 10);
    expect(heard).toEqual(['2025-05-08', '2025-05-09', '2025-05-11']);
  });

  it('reconnects after its connection is terminated and keeps hearing runs', async () => {
    heard.length = 0;
    const killed = await pool.query<{ n: number }>(`SELECT count(pg_terminate_backend(pid))::int AS n FROM pg_stat_activity WHERE application_name = 'plumbline-listen' AND query ILIKE 'LISTEN "${store.channel}"'`);
    expect(killed.rows[0]!.n).toBe(1);
    await until('the reconnection', 10_000, () => (heard.includes(null) && listener!.connected ? true : undefined), 20);
    expect(errors.length).toBeGreaterThanOrEqual(1);
    await store.saveRun(scenarioDay(0, '2025-05-12'));
    await until('a notification after the reconnection', 5000, () => (heard.includes('2025-05-12') ? true : undefined), 10);
  });
});
