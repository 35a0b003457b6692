/**
 * Extra PostgreSQL 15 servers for tests that need real shards: each is initialised into a
 * temporary folder owned by the `postgres` user (initdb refuses to run as root, hence
 * `runuser -u postgres --` when the tests run as root) and started on a free loopback port
 * with trust authentication. `stop()` stops every server that was started and removes the
 * folders, also after a partial start.
 */
import { execFile } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, chownSync, mkdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { promisify } from 'node:util';
import { freePort } from './tools.ts';

const run = promisify(execFile);

/** Where Debian's PostgreSQL 15 server binaries live. */
export const PG15_BIN = '/usr/lib/postgresql/15/bin';

export interface Shard {
  port: number;
  /** postgres://postgres@127.0.0.1:<port>/postgres */
  url: string;
  dir: string;
}

export interface Shards {
  shards: Shard[];
  stop(): Promise<void>;
}

async function postgresIds(): Promise<{ uid: number; gid: number }> {
  const uid = Number((await run('id', ['-u', 'postgres'])).stdout.trim());
  const gid = Number((await run('id', ['-g', 'postgres'])).stdout.trim());
  return { uid, gid };
}

/** Runs a PostgreSQL binary as the `postgres` user. */
async function asPostgres(binary: string, args: string[]): Promise<void> {
  const isRoot = process.getuid?.() === 0;
  const cmd = isRoot ? 'runuser' : join(PG15_BIN, binary);
  const argv = isRoot ? ['-u', 'postgres', '--', join(PG15_BIN, binary), ...args] : args;
  await run(cmd, argv, { timeout: 60_000 });
}

/**
 * Starts `count` servers. Throws (after stopping whatever did start) when the binaries are
 * missing or a server does not come up; the message says why.
 */
export async function startShards(count: number): Promise<Shards> {
  if (!existsSync(join(PG15_BIN, 'initdb'))) throw new Error(`PostgreSQL 15 binaries not found in ${PG15_BIN}`);
  const started: Shard[] = [];
  const dirs: string[] = [];
  const stop = async (): Promise<void> => {
    for (const s of started) {
      try {
        await asPostgres('pg_ctl', ['-D', join(s.dir, 'data'), '-m', 'immediate', '-w', 'stop']);
      } catch {
        // Already gone; the folder is removed below either way.
      }
    }
    started.length = 0;
    for (const d of dirs) rmSync(d, { recursive: true, force: true });
    dirs.length = 0;
  };
  try {
    const ids = process.getuid?.() === 0 ? await postgresIds() : null;
    for (let i = 0; i < count; i++) {
      const dir = mkdtempSync(join(tmpdir(), `plumbline-shard${i}-`));
      dirs.push(dir);
      const data = join(dir, 'data');
      const sockets = join(dir, 'sock');
      mkdirSync(sockets);
      if (ids !== null) {
        chownSync(dir, ids.uid, ids.gid);
        chownSync(sockets, ids.uid, ids.gid);
      }
      await asPostgres('initdb', ['-D', data, '-A', 'trust', '-U', 'postgres', '-E', 'UTF8', '--locale=C', '--no-sync']);
      const port = await freePort();
      const opts = `-p ${port} -c listen_addresses=127.0.0.1 -k ${sockets} -c fsync=off -c synchronous_commit=off -c full_page_writes=off`;
      await asPostgres('pg_ctl', ['-D', data, '-o', opts, '-l', join(dir, 'server.log'), '-w', '-t', '60', 'start']);
      started.push({ port, url: `postgres://postgres@127.0.0.1:${port}/postgres`, dir });
    }
    return { shards: [...started], stop };
  } catch (err) {
    await stop();
    throw err;
  }
}
