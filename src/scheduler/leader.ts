/**
 * One leader among replicas: a PostgreSQL session-level advisory lock held on a
 * dedicated connection of the store. The lock goes with the connection, so a leader that
 * dies (or loses its connection) is replaced by the next replica that tries.
 */
import { createHash } from 'node:crypto';
import type { Pool, PoolClient } from '../db/index.ts';
import { errorFields, type Logger } from '../log.ts';

/** Two int4 keys from the store schema, so two deployments on one database do not collide. */
export function leaderLockKeys(schema: string): [number, number] {
  const h = createHash('sha256').update(`plumbline.leader:${schema}`).digest();
  return [h.readInt32BE(0), h.readInt32BE(4)];
}

export type LeaderRole = 'leader' | 'follower' | 'unavailable';

export class LeaderLock {
  private client: PoolClient | null = null;

  constructor(
    private readonly pool: Pool,
    private readonly schema: string,
    private readonly log: Logger,
  ) {}

  get isLeader(): boolean {
    return this.client !== null;
  }

  /** Tries to become (or stay) leader; never throws. */
  async tryAcquire(): Promise<boolean> {
    return (await this.acquire()) === 'leader';
  }

  /**
   * Tries to become (or stay) leader and says why not: `follower` when another replica holds
   * the lock, `unavailable` when the store could not be asked (a retry must not be dropped
   * then: nobody else may be running it). Never throws.
   */
  async acquire(): Promise<LeaderRole> {
    if (this.client !== null) {
      try {
        await this.client.query('SELECT 1');
        return 'leader';
      } catch (err) {
        this.log.warn('leader connection lost; giving up leadership', errorFields(err));
        this.drop(err as Error);
      }
    }
    let client: PoolClient | null = null;
    try {
      client = await this.pool.connect();
      const [a, b] = leaderLockKeys(this.schema);
      const res = await client.query<{ ok: boolean }>('SELECT pg_try_advisory_lock($1, $2) AS ok', [a, b]);
      if (res.rows[0]?.ok === true) {
        client.on('error', (err) => {
          this.log.warn('leader connection error', errorFields(err));
          this.drop(err);
        });
        this.client = client;
        this.log.info('this replica is the leader: it runs the schedule');
        return 'leader';
      }
      client.release();
      return 'follower';
    } catch (err) {
      client?.release(err as Error);
      return 'unavailable';
    }
  }

  private drop(err?: Error): void {
    const c = this.client;
    this.client = null;
    c?.release(err ?? true);
  }

  async release(): Promise<void> {
    const c = this.client;
    if (c === null) return;
    this.client = null;
    try {
      const [a, b] = leaderLockKeys(this.schema);
      await c.query('SELECT pg_advisory_unlock($1, $2)', [a, b]);
      c.release();
    } catch (err) {
      c.release(err as Error);
    }
  }
}
