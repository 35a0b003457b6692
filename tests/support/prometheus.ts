/**
 * Real Prometheus and Alertmanager servers for end-to-end tests (Debian's `prometheus` and
 * `prometheus-alertmanager` packages): each starts on a free loopback port with a temporary
 * folder for its config and storage, and is ready when its /-/ready answers 200.
 */
import { spawn } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { findExecutable, freePort, stopProcess, until, type ChildExit } from './tools.ts';

/** Where the binaries are, undefined when not installed (tests skip then, or fail under CI=true). */
export const findPrometheus = (): string | undefined => findExecutable('prometheus');
export const findAlertmanager = (): string | undefined => findExecutable('prometheus-alertmanager', 'alertmanager');

export interface ChildServer {
  /** http://127.0.0.1:<port> */
  url: string;
  /** What the server wrote on stdout and stderr so far (for failure messages). */
  output(): string;
  /** SIGTERM (SIGKILL after `graceMs`), then removes the temporary folder; safe to call twice. */
  stop(graceMs?: number): Promise<ChildExit>;
}

async function startServer(what: string, bin: string, dir: string, args: (port: number) => string[], readyMs: number): Promise<ChildServer> {
  const port = await freePort();
  const url = `http://127.0.0.1:${port}`;
  const child = spawn(bin, args(port), { stdio: ['ignore', 'pipe', 'pipe'] });
  let log = '';
  child.stdout.on('data', (c: Buffer) => (log += c.toString()));
  child.stderr.on('data', (c: Buffer) => (log += c.toString()));
  child.on('error', (err) => (log += `\n${String(err)}`));
  const server: ChildServer = {
    url,
    output: () => log,
    stop: async (graceMs) => {
      try {
        return await stopProcess(child, graceMs);
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    },
  };
  try {
    await until(`${what} to be ready`, readyMs, async () => ((await fetch(`${url}/-/ready`)).ok ? true : undefined), 200);
  } catch (err) {
    await server.stop();
    throw new Error(`${(err as Error).message}; its output: ${log}`);
  }
  return server;
}

/** Alertmanager with one receiver that sends nowhere, clustering off. */
export async function startAlertmanager(bin: string): Promise<ChildServer> {
  const dir = mkdtempSync(join(tmpdir(), 'plumbline-am-'));
  const config = join(dir, 'alertmanager.yml');
  writeFileSync(config, 'route:\n  receiver: nowhere\nreceivers:\n  - name: nowhere\n');
  return startServer('Alertmanager', bin, dir, (port) => [`--config.file=${config}`, `--storage.path=${join(dir, 'data')}`, `--web.listen-address=127.0.0.1:${port}`, '--cluster.listen-address=', '--log.level=warn'], 30_000);
}

/** Prometheus with `config` (a prometheus.yml document; JSON is valid YAML). */
export async function startPrometheus(bin: string, config: unknown): Promise<ChildServer> {
  const dir = mkdtempSync(join(tmpdir(), 'plumbline-prom-'));
  const file = join(dir, 'prometheus.yml');
  writeFileSync(file, JSON.stringify(config));
  return startServer('Prometheus', bin, dir, (port) => [`--config.file=${file}`, `--storage.tsdb.path=${join(dir, 'data')}`, `--web.listen-address=127.0.0.1:${port}`, '--log.level=warn'], 60_000);
}
