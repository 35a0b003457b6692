/**
 * An embedded PostgreSQL (PGlite, in memory) served on 127.0.0.1 so that `pg` talks to
 * it as to any server.
 *
 * What @electric-sql/pglite-socket 0.2.17 does (read from its README and src/index.ts):
 * - PGlite is one backend, one session. `PGLiteSocketServer` accepts `maxConnections`
 *   clients (default 1; it also sets net.Server#maxConnections, so Node drops a socket
 *   beyond the limit at once and `pg` reports "Connection terminated unexpectedly").
 * - With maxConnections > 1 it multiplexes every client onto that one session through a
 *   query queue (holding other clients back while one is inside a transaction). Session
 *   state (SET, search_path, temp tables) is then shared, startup parameters such as
 *   statement_timeout or application_name are not applied, and locks never conflict,
 *   because there is only one backend. The README says "not all use cases are
 *   guaranteed to work".
 * - When a client disconnects inside a transaction the server rolls it back.
 *
 * Checked by hand against 0.2.17 / PGlite 0.5.14 (PostgreSQL 18.6 inside):
 * - Even one connection at a time shares the session with the connections before it (a
 *   plain `SET search_path` outlives the client that ran it), and the startup parameters
 *   pg sends (application_name, statement_timeout) read back as '' and 0. Code that runs
 *   on both must use SET LOCAL inside transactions and must not count on statement_timeout.
 * - pg-pool destroys a client after ANY failed `pool.query` (it calls release(err)) and
 *   opens a new one for the next query without waiting for the old socket to close. With
 *   maxConnections: 1 that new connection arrives while the old one still counts, Node
 *   drops it, and the query fails with "Connection terminated unexpectedly".
 * So the server allows a few connections (room for ones pg is still closing), and every
 * pg pool against this URL must use max: 1: only one client at a time may do work, since
 * all of them share PGlite's single session.
 */
import { PGlite } from '@electric-sql/pglite';
import { PGLiteSocketServer } from '@electric-sql/pglite-socket';

/** One working connection (pool max: 1) plus room for connections pg is still closing. */
const CONNECTION_SLOTS = 4;

export interface PgliteServer {
  /** postgres:// URL of the server (user postgres, database postgres, no password, no TLS). */
  url: string;
  /** Stops the socket server, then closes the database. Safe to call twice. */
  stop(): Promise<void>;
}

export async function startPglite(): Promise<PgliteServer> {
  const db = await PGlite.create(); // no dataDir: in memory
  // Port 0: the OS picks a free port, read back after start (no race with other test files).
  const server = new PGLiteSocketServer({ db, host: '127.0.0.1', port: 0, maxConnections: CONNECTION_SLOTS });
  try {
    await server.start();
  } catch (err) {
    await db.close();
    throw err;
  }
  const url = `postgres://postgres@${server.getServerConn()}/postgres`;
  let stopped: Promise<void> | undefined;
  return {
    url,
    stop() {
      stopped ??= (async () => {
        await server.stop();
        await db.close();
      })();
      return stopped;
    },
  };
}
