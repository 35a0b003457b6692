/**
 * A tiny TCP forwarder for fault tests: 127.0.0.1:<free port> -> a real PostgreSQL server.
 * The test points Plumbline's connection URLs at it and can then take "the database" away
 * (`pause`: new connections are refused, existing ones cut, as when the server stops),
 * bring it back (`resume`), cut only the open connections (`killAll`), or make every
 * connection half-open (`freeze`: nothing is forwarded and nothing is closed, as when the
 * network path dies silently).
 *
 * Written on node:net because it is a few dozen lines: a forwarder library would add a
 * dependency for less control over pausing.
 */
import { createConnection, createServer, type Server, type Socket } from 'node:net';

export interface TcpProxy {
  /** The port the proxy listens on (the same after pause/resume). */
  readonly port: number;
  /** `url` with its host and port replaced by the proxy's. */
  rewrite(url: string): string;
  /** Stops listening (connects get ECONNREFUSED) and cuts every open connection. */
  pause(): Promise<void>;
  /** Listens again on the same port. */
  resume(): Promise<void>;
  /** Cuts every open connection; new ones are still accepted. Returns how many were cut. */
  killAll(): number;
  /** Stops forwarding on every connection, open or new, without closing any (half-open). */
  freeze(): void;
  /** Forwards new connections again (frozen ones stay frozen: cut them with killAll). */
  thaw(): void;
  /** Local ports of the proxy's open connections to the server (pg_stat_activity.client_port). */
  upstreamPorts(): number[];
  /** Open client connections. */
  readonly open: number;
  readonly paused: boolean;
  close(): Promise<void>;
}

interface Pair {
  client: Socket;
  upstream: Socket;
}

function listen(server: Server, port: number): Promise<void> {
  return new Promise((resolve, reject) => {
    const onError = (err: Error): void => reject(err);
    server.once('error', onError);
    server.listen(port, '127.0.0.1', () => {
      server.off('error', onError);
      resolve();
    });
  });
}

/** Starts a proxy to `target` (a postgres:// URL, or host and port). */
export async function startTcpProxy(target: string | { host: string; port: number }): Promise<TcpProxy> {
  const to = typeof target === 'string' ? (() => {
    const u = new URL(target);
    return { host: u.hostname === '' ? '127.0.0.1' : u.hostname, port: u.port === '' ? 5432 : Number(u.port) };
  })() : target;
  const pairs = new Set<Pair>();
  let frozen = false;

  const onConnection = (client: Socket): void => {
    if (frozen) {
      // Accepted and never answered.
      const hold: Pair = { client, upstream: client };
      pairs.add(hold);
      client.on('error', () => pairs.delete(hold));
      client.on('close', () => pairs.delete(hold));
      return;
    }
    const upstream = createConnection({ host: to.host, port: to.port });
    const pair: Pair = { client, upstream };
    pairs.add(pair);
    const drop = (): void => {
      pairs.delete(pair);
      client.destroy();
      upstream.destroy();
    };
    client.on('error', drop);
    upstream.on('error', drop);
    client.on('close', drop);
    upstream.on('close', drop);
    client.pipe(upstream);
    upstream.pipe(client);
  };

  let server = createServer(onConnection);
  await listen(server, 0);
  const port = (server.address() as { port: number }).port;
  let paused = false;

  const cut = (): number => {
    const n = pairs.size;
    for (const p of [...pairs]) {
      // resetAndDestroy sends RST, as a crashed peer or a cut network would.
      p.client.resetAndDestroy();
      p.upstream.destroy();
    }
    pairs.clear();
    return n;
  };

  const stopListening = (): Promise<void> =>
    new Promise((resolve) => {
      if (!server.listening) return resolve();
      server.close(() => resolve());
    });

  return {
    port,
    rewrite(url: string): string {
      const u = new URL(url);
      u.hostname = '127.0.0.1';
      u.port = String(port);
      return u.toString();
    },
    async pause(): Promise<void> {
      paused = true;
      const closed = stopListening();
      cut();
      await closed;
    },
    async resume(): Promise<void> {
      if (!paused) return;
      server = createServer(onConnection);
      await listen(server, port);
      paused = false;
    },
    killAll: cut,
    freeze(): void {
      frozen = true;
      for (const p of pairs) {
        p.client.unpipe(p.upstream);
        p.upstream.unpipe(p.client);
        p.client.pause();
        p.upstream.pause();
      }
    },
    thaw(): void {
      frozen = false;
    },
    upstreamPorts(): number[] {
      return [...pairs].map((p) => p.upstream.localPort).filter((p): p is number => typeof p === 'number');
    },
    get open(): number {
      return pairs.size;
    },
    get paused(): boolean {
      return paused;
    },
    async close(): Promise<void> {
      const closed = stopListening();
      cut();
      await closed;
    },
  };
}
