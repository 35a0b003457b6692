/**
 * The wiring every command shares: one pool for the source, one for the store, and the
 * store on top. Connection strings come from the environment only (config/ reads it).
 */
import { connectionsFromEnv, maskUrl, type Config } from './config/index.ts';
import { createPool, type Pool } from './db/index.ts';
import { errorFields, type Logger } from './log.ts';
import { Store } from './store/index.ts';

/** Open connections for one config. */
export interface Runtime {
  config: Config;
  log: Logger;
  source: Pool;
  storePool: Pool;
  store: Store;
  close(): Promise<void>;
}

/** Pools and store for a config; connection strings come from the environment only. */
/** `env` defaults to the process environment, which config/ reads. */
export function openRuntime(config: Config, log: Logger, env?: Readonly<Record<string, string | undefined>>): Runtime {
  const conn = connectionsFromEnv(env);
  const onError = (which: string) => (err: Error) => log.warn(`${which} connection error`, errorFields(err));
  const source = createPool({ url: conn.sourceUrl, applicationName: 'plumbline-source', statementTimeoutMs: config.source.statementTimeoutSeconds * 1000, onError: onError('source') });
  // A pool of its own even when both URLs are the same: source reads never queue behind store writes.
  // query_timeout above statement_timeout: a half-open store connection fails the query instead of hanging it.
  const storePool = createPool({ url: conn.storeUrl, applicationName: 'plumbline-store', statementTimeoutMs: 120_000, queryTimeoutMs: 150_000, onError: onError('store') });
  log.debug('connections', { source: maskUrl(conn.sourceUrl), store: maskUrl(conn.storeUrl) });
  const store = new Store(storePool, config.store.schema);
  return {
    config,
    log,
    source,
    storePool,
    store,
    async close() {
      await Promise.allSettled([source.end(), storePool.end()]);
    },
  };
}
