/**
 * LISTEN on one channel over a dedicated connection (a pooled one would be handed back and
 * lose its LISTEN), reconnecting with backoff when it drops. A (re)connection counts as a
 * notification too: whatever was sent while it was down was missed.
 */
import pg from 'pg';
import type { Pool } from './pool.ts';

export interface ChannelListenerOptions {
  /** Connection settings are taken from this pool (same server, user and timeouts). */
  pool: Pool;
  channel: string;
  /** A notification (its payload), or null after a (re)connection. */
  onNotify: (payload: string | null) => void;
  /** Connection lost or refused; the listener retries by itself. */
  onError?: (err: Error, retryInMs: number) => void;
  /** Backoff bounds. */
  minRetryMs?: number;
  maxRetryMs?: number;
}

export interface ChannelListener {
  readonly connected: boolean;
  close(): Promise<void>;
}

export function listenToChannel(options: ChannelListenerOptions): ChannelListener {
  const minRetry = options.minRetryMs ?? 1000;
  const maxRetry = options.maxRetryMs ?? 30_000;
  let client: pg.Client | null = null;
  let connected = false;
  let closed = false;
  let failures = 0;
  let timer: NodeJS.Timeout | null = null;

  const retry = (err: Error): void => {
    connected = false;
    const c = client;
    client = null;
    c?.removeAllListeners('notification');
    void c?.end().catch(() => undefined);
    if (closed || timer !== null) return;
    const wait = Math.min(minRetry * 2 ** failures, maxRetry);
    failures++;
    options.onError?.(err, wait);
    timer = setTimeout(() => {
      timer = null;
      void connect();
    }, wait);
    timer.unref();
  };

  const connect = async (): Promise<void> => {
    if (closed) return;
    const c = new pg.Client({ ...options.pool.options, application_name: 'plumbline-listen', statement_timeout: 10_000, keepAlive: true, keepAliveInitialDelayMillis: 10_000 });
    client = c;
    let failed = false;
    const fail = (err: Error): void => {
      if (failed || client !== c) return;
      failed = true;
      retry(err);
    };
    c.on('error', fail);
    c.on('end', () => fail(new Error('the listening connection ended')));
    c.on('notification', (msg) => {
      if (msg.channel === options.channel) options.onNotify(msg.payload ?? '');
    });
    try {
      await c.connect();
      await c.query(`LISTEN ${c.escapeIdentifier(options.channel)}`);
      if (closed || client !== c) {
        // Closed (or replaced) while connecting: this connection must not outlive the listener.
        await c.end().catch(() => undefined);
        return;
      }
      connected = true;
      failures = 0;
      options.onNotify(null);
    } catch (err) {
      fail(err as Error);
    }
  };
  void connect();

  return {
    get connected() {
      return connected;
    },
    async close() {
      closed = true;
      if (timer !== null) clearTimeout(timer);
      const c = client;
      client = null;
      connected = false;
      await c?.end().catch(() => undefined);
    },
  };
}
