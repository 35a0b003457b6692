/**
 * `npm run plumbline -- serve` from a checkout stops when npm gets SIGTERM (a terminal
 * closing, a process supervisor stopping it). npm forwards the signal to its child only, the
 * `sh -c` of the script; a shell that waits for a child dies of it and leaves that child
 * running. The script therefore `exec`s node (with tsx as an --import, not tsx's own CLI,
 * which would add a process of its own), so npm's child is the service itself.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createBigDay, type BigDay } from '../support/big-day.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { REPO_ROOT } from '../support/service.ts';
import { freePort, until } from '../support/tools.ts';

const url = testDatabaseUrl();

describe.skipIf(url === undefined)('npm run plumbline -- serve (needs PLUMBLINE_TEST_DATABASE_URL)', () => {
  let day: BigDay;
  let dir: string;
  beforeAll(async () => {
    day = await createBigDay(url!, 'npmstop');
    dir = mkdtempSync(join(tmpdir(), 'plumbline-npm-stop-'));
  });
  afterAll(async () => {
    await day?.drop();
    if (dir !== undefined) rmSync(dir, { recursive: true, force: true });
  });

  it('stops the service within seconds of SIGTERM to npm and releases the port', async () => {
    const port = await freePort();
    const config = join(dir, 'plumbline.yaml');
    writeFileSync(config, JSON.stringify({ ...day.config, http: { port } }));
    const env: Record<string, string> = {};
    for (const [k, v] of Object.entries(process.env)) if (v !== undefined && !/^npm_/i.test(k) && !k.startsWith('PLUMBLINE_')) env[k] = v;
    env['PATH'] = `${dirname(process.execPath)}:${env['PATH'] ?? '/usr/bin:/bin'}`;
    env['PLUMBLINE_SOURCE_URL'] = url!;
    env['npm_config_update_notifier'] = 'false';
    const npm = spawn('npm', ['run', '--silent', 'plumbline', '--', 'serve', '--config', config], { cwd: REPO_ROOT, env, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    npm.stderr!.setEncoding('utf8').on('data', (c: string) => (stderr += c));
    const exited = new Promise<void>((resolve) => npm.once('exit', () => resolve()));
    const healthy = async (): Promise<boolean> => {
      try {
        return (await fetch(`http://127.0.0.1:${port}/healthz`)).ok;
      } catch {
        return false;
      }
    };
    try {
      await until(`the service to answer on port ${port} (${stderr})`, 60_000, async () => ((await healthy()) ? true : undefined));
      npm.kill('SIGTERM');
      await Promise.race([exited, new Promise((resolve) => setTimeout(resolve, 15_000))]);
      expect(stderr).toContain('"msg":"stopped"');
      // Nothing answers on the port any more, and this process can listen on it.
      await until('the port to be released', 15_000, async () => ((await healthy()) ? undefined : true));
      await new Promise<void>((resolve, reject) => {
        const srv = createServer();
        srv.once('error', reject);
        srv.listen(port, '127.0.0.1', () => srv.close(() => resolve()));
      });
    } finally {
      if (npm.exitCode === null && npm.signalCode === null) npm.kill('SIGKILL');
    }
  }, 120_000);
});
