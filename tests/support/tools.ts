/**
 * Small helpers the end-to-end and integration tests share: a free loopback port, an
 * installed program by name, a clean environment for child processes, bounded polling, and
 * stopping a child process.
 */
import type { ChildProcess } from 'node:child_process';
import { accessSync, constants } from 'node:fs';
import { createServer } from 'node:net';
import { delimiter, dirname, join } from 'node:path';

export const sleep = (ms: number): Promise<void> => new Promise((resolve) => setTimeout(resolve, ms));

/** A TCP port on 127.0.0.1 that was free a moment ago (the OS picks it). */
export function freePort(): Promise<number> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(0, '127.0.0.1', () => {
      const addr = srv.address();
      const port = typeof addr === 'object' && addr !== null ? addr.port : 0;
      srv.close(() => resolve(port));
    });
  });
}

/** Resolves once this process can listen on `port` of 127.0.0.1 (so nothing else holds it), and lets it go again; rejects when the port is taken. */
export function listenOnce(port: number): Promise<void> {
  return new Promise((resolve, reject) => {
    const srv = createServer();
    srv.once('error', reject);
    srv.listen(port, '127.0.0.1', () => srv.close(() => resolve()));
  });
}

/**
 * The caller's environment for npm and the installed `plumbline` command: without npm's
 * lifecycle variables (npm test sets npm_config_*) and PLUMBLINE_* settings, with this Node
 * first on PATH (for `#!/usr/bin/env node` bins), npm's update check off, plus `extra`.
 */
export function cleanEnv(extra: Record<string, string> = {}): Record<string, string> {
  const env: Record<string, string> = {};
  for (const [k, v] of Object.entries(process.env)) if (v !== undefined && !/^npm_/i.test(k) && !k.startsWith('PLUMBLINE_')) env[k] = v;
  env['PATH'] = `${dirname(process.execPath)}:${env['PATH'] ?? '/usr/bin:/bin'}`;
  return { ...env, npm_config_update_notifier: 'false', ...extra };
}

/** Folders searched after PATH: where Debian's packages and local installs put programs. */
const USUAL_DIRS = ['/usr/bin', '/usr/local/bin', '/bin'];

/**
 * The full path of the first of `names` that is an executable file in a PATH folder or in
 * /usr/bin, /usr/local/bin or /bin (earlier names win over later ones); undefined when none is.
 */
export function findExecutable(...names: string[]): string | undefined {
  const dirs = [...(process.env.PATH ?? '').split(delimiter), ...USUAL_DIRS].filter((d) => d !== '');
  for (const name of names) {
    for (const dir of dirs) {
      const candidate = join(dir, name);
      try {
        accessSync(candidate, constants.X_OK);
        return candidate;
      } catch {
        /* not here */
      }
    }
  }
  return undefined;
}

/**
 * Polls `probe` every `everyMs` until it returns something other than undefined; fails after
 * `limitMs` with what it waited for and the last error (a bound, so a test fails rather than hangs).
 */
export async function until<T>(what: string, limitMs: number, probe: () => Promise<T | undefined> | T | undefined, everyMs = 100): Promise<T> {
  const deadline = Date.now() + limitMs;
  let last: unknown;
  for (;;) {
    try {
      const v = await probe();
      if (v !== undefined) return v;
    } catch (err) {
      last = err;
    }
    if (Date.now() >= deadline) break;
    await sleep(everyMs);
  }
  throw new Error(`timed out after ${limitMs} ms waiting for ${what}${last !== undefined ? ` (last error: ${String(last)})` : ''}`);
}

export interface ChildExit {
  code: number | null;
  signal: NodeJS.Signals | null;
}

/** SIGTERM, then SIGKILL if `child` is still running after `graceMs`; resolves with how it exited. */
export async function stopProcess(child: ChildProcess, graceMs = 10_000): Promise<ChildExit> {
  // No pid: the program never started (spawn failed), so there is nothing to stop.
  const done = (): boolean => child.pid === undefined || child.exitCode !== null || child.signalCode !== null;
  if (!done()) {
    const exited = new Promise<void>((resolve) => child.once('exit', () => resolve()));
    child.kill('SIGTERM');
    let timer: NodeJS.Timeout | undefined;
    await Promise.race([exited, new Promise<void>((resolve) => (timer = setTimeout(resolve, graceMs)))]);
    clearTimeout(timer);
    if (!done()) {
      child.kill('SIGKILL');
      await Promise.race([exited, sleep(5_000)]);
    }
  }
  return { code: child.exitCode, signal: child.signalCode };
}
