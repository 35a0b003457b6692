/**
 * What the end-to-end files that run `plumbline serve` against a real PostgreSQL server
 * share: an admin connection, schemas and TCP proxies that are cleaned up after the file,
 * the date the catch-up on start evaluates, and a schedule that never fires by itself.
 */
import pg from 'pg';
import { afterAll, beforeAll } from 'vitest';
import { addDays } from '../../demo-data/scenario.ts';
import type { ConfigInput } from '../../src/config/index.ts';
import { uniqueSchema } from './pg.ts';
import { stopAllServices } from './service.ts';
import { startTcpProxy, type TcpProxy } from './tcp-proxy.ts';

/** The date the catch-up on start evaluates (schedule.lagDays 1, UTC). Near 00:00 UTC the test's and the service's clocks could disagree for a moment. */
export const yesterdayUtc = (): string => addDays(new Date().toISOString().slice(0, 10), -1);

type ScheduleInput = NonNullable<ConfigInput['schedule']>;

/**
 * A schedule for tests: the cron fires on 1 January at 00:00 only, so runs come from the
 * catch-up on start, retries and POST /api/v1/runs; retries start after 1 s.
 */
export function testSchedule(extra: Partial<ScheduleInput> = {}): ScheduleInput {
  return { cron: '0 0 1 1 *', timezone: 'UTC', lagDays: 1, catchUpMaxDays: 0, retryBaseSeconds: 1, ...extra };
}

export interface ServiceSuite {
  /** The admin connection (application_name plumbline-e2e-admin), open between beforeAll and afterAll. */
  readonly admin: pg.Client;
  /** A unique schema name, dropped after the file. */
  schema(prefix: string): string;
  /** A TCP proxy to the server, closed after the file. */
  proxy(): Promise<TcpProxy>;
}

/**
 * Registers the file's beforeAll/afterAll: the admin connection; then every service still
 * running stopped, the proxies closed, backends whose application_name is LIKE
 * `terminateLike` terminated (statements left sleeping hold locks DROP SCHEMA needs), and
 * the schemas dropped.
 */
export function serviceSuite(url: string | undefined, options: { terminateLike?: string } = {}): ServiceSuite {
  const schemas: string[] = [];
  const proxies: TcpProxy[] = [];
  let admin: pg.Client | undefined;

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url, application_name: 'plumbline-e2e-admin' });
    await admin.connect();
  });

  afterAll(async () => {
    await stopAllServices();
    await Promise.all(proxies.map((p) => p.close()));
    if (admin !== undefined) {
      if (options.terminateLike !== undefined) await admin.query(`SELECT pg_terminate_backend(pid) FROM pg_stat_activity WHERE application_name LIKE $1`, [options.terminateLike]);
      for (const s of schemas) await admin.query(`DROP SCHEMA IF EXISTS "${s}" CASCADE`);
      await admin.end();
    }
  });

  return {
    get admin(): pg.Client {
      if (admin === undefined) throw new Error('the admin connection is open only between beforeAll and afterAll');
      return admin;
    },
    schema(prefix) {
      const s = uniqueSchema(prefix);
      schemas.push(s);
      return s;
    },
    async proxy() {
      const p = await startTcpProxy(url!);
      proxies.push(p);
      return p;
    },
  };
}
