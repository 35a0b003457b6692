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
  /**
   * Client-side limit on waiting for one query's answer (pg `query_timeout`): a half-open
   * connection (the server vanished without a FIN) otherwise waits forever. Keep it above
   * statementTimeoutMs, which cancels on the server; a client that timed out is discarded.
   */
  queryTimeoutMs?: number;
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
    // TCP keepalive probes notice a peer that is gone while a connection waits.
    keepAlive: true,
    keepAliveInitialDelayMillis: 10_000,
    ...(options.queryTimeoutMs !== undefined ? { query_timeout: options.queryTimeoutMs } : {}),
  });
  pool.on('error', (err) => options.onError?.(err));
  return pool;
}

/**
 * Runs `fn` in one `REPEATABLE READ READ ONLY` transaction: every query sees the same
 * snapshot of the source, and nothing can be written by mistake.
 */
export async function withReadOnlyTransaction<T>(pool: Pool, fn: (client: PoolClient) => Promise<T>, options: TransactionOptions = {}): Promise<T> {
  return withTransactionMode(pool, 'BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY', fn, options);
}

export interface TransactionOptions {
  /**
   * Aborting it cancels the statement in flight on the server (a cancel request for this
   * session's backend), so a long read stops at once instead of at statement_timeout.
   */
  signal?: AbortSignal;
}

/** Runs `fn` in one read-write transaction; rolls back on any error. */
export async function withTransaction<T>(pool: Pool, fn: (client: PoolClient) => Promise<T>): Promise<T> {
  return withTransactionMode(pool, 'BEGIN', fn);
}

async function withTransactionMode<T>(pool: Pool, begin: string, fn: (client: PoolClient) => Promise<T>, options: TransactionOptions = {}): Promise<T> {
  options.signal?.throwIfAborted();
  const client = await pool.connect();
  const onAbort = (): void => void cancelBackend(pool, client);
  options.signal?.addEventListener('abort', onAbort, { once: true });
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
    options.signal?.removeEventListener('abort', onAbort);
    client.removeListener('error', onLost);
    // After a cancel the session is fine, but drop it anyway: it may have been mid-COPY.
    client.release(broken ?? options.signal?.aborted === true);
  }
}

/**
 * Cancels the statement `client` is running, from a new short-lived connection with the
 * pool's settings (pg_cancel_backend of its backend pid). Never throws: a failed cancel
 * leaves the statement to statement_timeout.
 */
export async function cancelBackend(pool: Pool, client: PoolClient): Promise<boolean> {
  const pid = (client as unknown as { processID?: number | null }).processID;
  if (typeof pid !== 'number') return false;
  const canceller = new pg.Client({ ...pool.options, application_name: 'plumbline-cancel', statement_timeout: 5000, connectionTimeoutMillis: 5000 });
  canceller.on('error', () => undefined);
  try {
    await canceller.connect();
    const res = await canceller.query<{ ok: boolean }>('SELECT pg_cancel_backend($1) AS ok', [pid]);
    return res.rows[0]?.ok === true;
  } catch {
    return false;
  } finally {
    await canceller.end().catch(() => undefined);
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
