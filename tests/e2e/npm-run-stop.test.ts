/**
 * `npm run plumbline -- serve` from a checkout stops when npm gets SIGTERM (a terminal
 * closing, a process supervisor stopping it). npm forwards the signal to its child only, the
 * `sh -c` of the script; a shell that waits for a child dies of it and leaves that child
 * running. The script therefore `exec`s node (with tsx as an --import, not tsx's own CLI,
 * which would add a process of its own), so npm's child is the service itself.
 */
import { spawn } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { useBigDay } from '../support/big-day.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { REPO_ROOT } from '../support/service.ts';
import { cleanEnv, freePort, listenOnce, until } from '../support/tools.ts';

const url = testDatabaseUrl();

describe.skipIf(url === undefined)('npm run plumbline -- serve (needs PLUMBLINE_TEST_DATABASE_URL)', () => {
  const big = useBigDay(url!, 'npmstop');

  it('stops the service within seconds of SIGTERM to npm and releases the port', async () => {
    const port = await freePort();
    const config = join(big.dir, 'plumbline.yaml');
    writeFileSync(config, JSON.stringify({ ...big.day.config, http: { port } }));
    const env = cleanEnv({ PLUMBLINE_SOURCE_URL: url! });
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
      await listenOnce(port);
    } finally {
      if (npm.exitCode === null && npm.signalCode === null) npm.kill('SIGKILL');
    }
  }, 120_000);
});
