/**
 * One leader among replicas, on a real PostgreSQL server: the advisory lock is held by one
 * replica at a time, and a leader whose connection dies is replaced by the next that tries.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createPool, type Pool } from '../../src/db/index.ts';
import { silentLogger } from '../../src/log.ts';
import { LeaderLock, leaderLockKeys } from '../../src/scheduler/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';

const url = testDatabaseUrl();

describe.skipIf(url === undefined)('leader lock on a PostgreSQL server', () => {
  const schema = uniqueSchema('leader');
  let poolA: Pool;
  let poolB: Pool;
  let admin: pg.Client;

  beforeAll(async () => {
    const opts = { url: url!, statementTimeoutMs: 10_000, onError: () => undefined };
    poolA = createPool({ ...opts, applicationName: 'plumbline-replica-a' });
    poolB = createPool({ ...opts, applicationName: 'plumbline-replica-b' });
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
  });

  afterAll(async () => {
    await Promise.allSettled([poolA?.end(), poolB?.end(), admin?.end()]);
  });

  it('lets one replica lead, and hands the lead over when the leader connection dies', async () => {
    const a = new LeaderLock(poolA, schema, silentLogger);
    const b = new LeaderLock(poolB, schema, silentLogger);
    expect(await a.tryAcquire()).toBe(true);
    expect(await b.tryAcquire()).toBe(false);
    expect(await a.tryAcquire()).toBe(true); // staying leader is idempotent

    // The lock is visible in pg_locks as an advisory lock with our two keys.
    const [k1, k2] = leaderLockKeys(schema);
    const held = await admin.query(`SELECT count(*)::int AS n FROM pg_locks WHERE locktype = 'advisory' AND classid = ($1::int)::oid AND objid = ($2::int)::oid AND granted`, [k1, k2]);
    expect(held.rows[0].n).toBe(1);

    // The leader "dies": its session is terminated on the server.
    await admin.query(`SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE application_name = 'plumbline-replica-a'`);
    let tookOver = false;
    for (let i = 0; i < 50 && !tookOver; i++) {
      tookOver = await b.tryAcquire();
      if (!tookOver) await new Promise((r) => setTimeout(r, 100));
    }
    expect(tookOver).toBe(true);
    expect(await a.tryAcquire()).toBe(false);
    expect(a.isLeader).toBe(false);

    await b.release();
    expect(await a.tryAcquire()).toBe(true);
    await a.release();
  });

  it('keeps two deployments on one database apart (the lock key depends on the store schema)', () => {
    expect(leaderLockKeys('plumbline')).not.toEqual(leaderLockKeys('plumbline_staging'));
  });
});
