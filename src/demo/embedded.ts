/**
 * An embedded PostgreSQL for the demo: PGlite (a real Postgres build running in-process)
 * served on 127.0.0.1 through @electric-sql/pglite-socket, so Plumbline talks to it with
 * `pg` exactly as to a server.
 *
 * PGlite is one session; the socket server multiplexes several clients onto it through a
 * queue (one transaction at a time). Plumbline's pools need a few connections at once
 * (source, store, leader lock, the notification listener), hence maxConnections > 1. Startup parameters such as
 * statement_timeout are not applied by the multiplexer; the demo does not rely on them.
 */
import { PGlite } from '@electric-sql/pglite';
import { PGLiteSocketServer } from '@electric-sql/pglite-socket';

export interface EmbeddedPostgres {
  url: string;
  stop(): Promise<void>;
}

export async function startEmbeddedPostgres(options: { dataDir?: string; maxConnections?: number } = {}): Promise<EmbeddedPostgres> {
  const db = options.dataDir === undefined ? await PGlite.create() : await PGlite.create(options.dataDir);
  const server = new PGLiteSocketServer({ db, host: '127.0.0.1', port: 0, maxConnections: options.maxConnections ?? 16 });
  try {
    await server.start();
  } catch (err) {
    await db.close();
    throw err;
  }
  let stopped: Promise<void> | undefined;
  return {
    url: `postgres://postgres@${server.getServerConn()}/postgres?sslmode=disable`,
    stop() {
      stopped ??= (async () => {
        await server.stop();
        await db.close();
      })();
      return stopped;
    },
  };
}
