/**
 * PostgreSQL connections: one pool per database, with the settings every session needs
 * (application_name, timeouts), and the transaction helpers the rest of Plumbline uses.
 * This folder is the only importer of `pg` (and of pg-copy-streams, in copy.ts).
 */
import pg from 'pg';

export type Pool = pg.Pool;
export type PoolClient = pg.PoolClient;

export interface PoolOptions {
  url: string;
  /** Shown in pg_stat_activity. */
  applicationName: string;
  /** Server-side cancel of any one statement (statement_timeout). */
  statementTimeoutMs: number;
  /** Closes sessions left idle inside a transaction (a crashed client). */
  idleInTransactionTimeoutMs?: number;
  connectionTimeoutMs?: number;
  max?: number;
  /** Called for errors of idle clients (server restart); without a listener they crash the process. */
  onError?: (err: Error) => void;
}

export function createPool(options: PoolOptions): Pool {
  const pool = new pg.Pool({
    connectionString: options.url,
    application_name: options.applicationName,
    statement_timeout: options.statementTimeoutMs,
    idle_in_transaction_session_timeout: options.idleInTransactionTimeoutMs ?? 60_000,
    connectionTimeoutMillis: options.connectionTimeoutMs ?? 10_000,
    max: options.max ?? 4,
    idleTimeoutMillis: 30_000,
  });
  pool.on('error', (err) => options.onError?.(err));
  return pool;
}

/**
 * Runs `fn` in one `REPEATABLE READ READ ONLY` transaction: every query sees the same
 * snapshot of the source, and nothing can be written by mistake.
 */
export async function withReadOnlyTransaction<T>(pool: Pool, fn: (client: PoolClient) => Promise<T>): Promise<T> {
  return withTransactionMode(pool, 'BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY', fn);
}

/** Runs `fn` in one read-write transaction; rolls back on any error. */
export async function withTransaction<T>(pool: Pool, fn: (client: PoolClient) => Promise<T>): Promise<T> {
  return withTransactionMode(pool, 'BEGIN', fn);
}

async function withTransactionMode<T>(pool: Pool, begin: string, fn: (client: PoolClient) => Promise<T>): Promise<T> {
  const client = await pool.connect();
  let broken: Error | undefined;
  // A checked-out client has no pool listener: without this one, a connection lost in the
  // middle (server restart, terminated backend) is an unhandled 'error' event that ends
  // the process. The failing query rejects anyway; the client must not go back to the pool.
  const onLost = (err: Error): void => {
    broken ??= err;
  };
  client.on('error', onLost);
  try {
    await client.query(begin);
    const result = await fn(client);
    await client.query('COMMIT');
    return result;
  } catch (err) {
    try {
      await client.query('ROLLBACK');
    } catch (rollbackErr) {
      // The connection itself is gone; do not hand it back to the pool.
      broken ??= rollbackErr as Error;
    }
    throw err;
  } finally {
    client.removeListener('error', onLost);
    client.release(broken);
  }
}

/** True for errors after which a retry may succeed: the connection or server went away. */
export function isConnectionError(err: unknown): boolean {
  const e = err as { code?: string; message?: string } | null;
  if (e === null || typeof e !== 'object') return false;
  const code = e.code ?? '';
  // Class 08: connection exception; 57P01-57P03: admin shutdown, crash shutdown, cannot connect now.
  if (code.startsWith('08') || code === '57P01' || code === '57P02' || code === '57P03') return true;
  return ['ECONNREFUSED', 'ECONNRESET', 'EPIPE', 'ETIMEDOUT', 'ENOTFOUND', 'EAI_AGAIN'].includes(code);
}

/** SQLSTATE of a server error, if any. */
export function sqlState(err: unknown): string | undefined {
  const code = (err as { code?: unknown } | null)?.code;
  return typeof code === 'string' && /^[0-9A-Z]{5}$/.test(code) ? code : undefined;
}
