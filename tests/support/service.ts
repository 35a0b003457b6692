/**
 * Runs `plumbline serve` as a child process for end-to-end tests, exactly as an operator
 * would (`node --import tsx src/cli.ts serve --config FILE`, connection URLs in the
 * environment), and reads what it says: the JSON log lines on stderr, its HTTP routes and
 * its /metrics text.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { until } from './tools.ts';

export const REPO_ROOT = fileURLToPath(new URL('../../', import.meta.url));

/**
 * `url` with its own application_name. pg lets the URL override the name Plumbline sets
 * ('plumbline-source' / 'plumbline-store'), so another test file that terminates every
 * 'plumbline-source' COPY on the shared server cannot hit this test's service by accident.
 */
export function withApplicationName(url: string, name: string): string {
  const u = new URL(url);
  u.searchParams.set('application_name', name);
  return u.toString();
}

/** `body` parsed as JSON, or undefined when it is not JSON. */
function jsonOrUndefined(body: string): unknown {
  try {
    return JSON.parse(body) as unknown;
  } catch {
    return undefined;
  }
}

export interface LogLine {
  time?: string;
  level?: string;
  msg?: string;
  [field: string]: unknown;
}

export interface ExitInfo {
  code: number | null;
  signal: NodeJS.Signals | null;
}

/** One sample of the Prometheus text format. */
export interface Sample {
  name: string;
  labels: Record<string, string>;
  value: number;
}

/** Parses the Prometheus text exposition format (the subset prom-client writes). */
export function parseMetrics(text: string): Sample[] {
  const out: Sample[] = [];
  for (const line of text.split('\n')) {
    if (line === '' || line.startsWith('#')) continue;
    const m = /^([a-zA-Z_:][a-zA-Z0-9_:]*)(?:\{(.*)\})?\s+(\S+)/.exec(line);
    if (m === null) continue;
    const labels: Record<string, string> = {};
    for (const l of (m[2] ?? '').matchAll(/([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\]|\\.)*)"/g)) labels[l[1]!] = l[2]!.replace(/\\(.)/g, (_s, c: string) => (c === 'n' ? '\n' : c));
    const raw = m[3]!;
    out.push({ name: m[1]!, labels, value: raw === 'NaN' ? Number.NaN : raw === '+Inf' ? Infinity : raw === '-Inf' ? -Infinity : Number(raw) });
  }
  return out;
}

export interface ServiceOptions {
  /** The config document (written as JSON, which is valid YAML). */
  config: unknown;
  sourceUrl: string;
  storeUrl?: string;
  /** Extra environment (e.g. PLUMBLINE_LOG_LEVEL). */
  env?: Record<string, string>;
  /** Echo the service's stderr to this process's stderr (debugging). */
  echo?: boolean;
  /** Given as PLUMBLINE_RUN_TOKEN, and sent by post() as its bearer token. */
  runToken?: string;
  /** More `node --import` modules, loaded into the service's process before the CLI. */
  imports?: string[];
}

/** A running `plumbline serve` child process. */
export class ServiceProcess {
  readonly logs: LogLine[] = [];
  /** stderr lines that are not JSON (e.g. the CLI's own messages). */
  readonly rawErr: string[] = [];
  readonly stdout: string[] = [];
  readonly exited: Promise<ExitInfo>;
  exit: ExitInfo | null = null;
  url = '';
  readonly runToken: string | undefined;
  private readonly child: ChildProcess;
  private readonly dir: string;

  constructor(options: ServiceOptions, args: string[] = []) {
    this.dir = mkdtempSync(join(tmpdir(), 'plumbline-serve-'));
    const configFile = join(this.dir, 'plumbline.json');
    writeFileSync(configFile, JSON.stringify(options.config, null, 2));
    // Only what the service needs: no inherited PLUMBLINE_* settings from the test runner's shell.
    const env: Record<string, string> = {
      PATH: process.env.PATH ?? '/usr/bin:/bin',
      HOME: process.env.HOME ?? tmpdir(),
      PLUMBLINE_SOURCE_URL: options.sourceUrl,
      PLUMBLINE_STORE_URL: options.storeUrl ?? options.sourceUrl,
      ...(options.runToken !== undefined ? { PLUMBLINE_RUN_TOKEN: options.runToken } : {}),
      ...options.env,
    };
    this.runToken = options.runToken;
    this.child = spawn(process.execPath, ['--import', 'tsx', ...(options.imports ?? []).flatMap((m) => ['--import', m]), 'src/cli.ts', 'serve', '--config', configFile, ...args], {
      cwd: REPO_ROOT,
      env,
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let errBuf = '';
    this.child.stderr!.setEncoding('utf8');
    this.child.stderr!.on('data', (chunk: string) => {
      if (options.echo === true) process.stderr.write(chunk);
      errBuf += chunk;
      let nl: number;
      while ((nl = errBuf.indexOf('\n')) >= 0) {
        const line = errBuf.slice(0, nl);
        errBuf = errBuf.slice(nl + 1);
        this.onLine(line);
      }
    });
    this.child.stdout!.setEncoding('utf8');
    this.child.stdout!.on('data', (chunk: string) => this.stdout.push(chunk));
    this.exited = new Promise((resolve) => {
      this.child.once('exit', (code, signal) => {
        if (errBuf !== '') this.onLine(errBuf);
        errBuf = '';
        this.exit = { code, signal };
        resolve(this.exit);
      });
    });
    live.add(this);
    // The config file is read at start only; remove the temp dir once the process is gone.
    void this.exited.then(() => {
      live.delete(this);
      this.cleanup();
    });
  }

  private onLine(line: string): void {
    if (line.trim() === '') return;
    try {
      const parsed = JSON.parse(line) as LogLine;
      this.logs.push(parsed);
      if (parsed.msg === 'listening' && typeof parsed['url'] === 'string') this.url = parsed['url'];
    } catch {
      this.rawErr.push(line);
    }
  }

  get pid(): number | undefined {
    return this.child.pid;
  }

  /** Waits for the "listening" log line; fails early if the process exits first. */
  async ready(limitMs = 30_000): Promise<string> {
    return until(`the service to listen (logs so far: ${this.tail()})`, limitMs, () => {
      if (this.exit !== null) throw new Error(`the service exited (${JSON.stringify(this.exit)}): ${this.tail()}`);
      return this.url === '' ? undefined : this.url;
    });
  }

  /** The first log line matching `pred` at or after index `from`, waiting up to `limitMs`. */
  async waitForLog(what: string, pred: (l: LogLine) => boolean, limitMs: number, from = 0): Promise<LogLine> {
    return until(`${what} in the service log (${this.tail()})`, limitMs, () => this.logs.slice(from).find(pred));
  }

  /** The last few lines of output, for failure messages. */
  tail(n = 8): string {
    const lines = [...this.logs.slice(-n).map((l) => JSON.stringify(l)), ...this.rawErr.slice(-n)];
    return lines.join('\n');
  }

  async get(path: string): Promise<{ status: number; body: string; json: unknown }> {
    const res = await fetch(`${this.url}${path}`);
    const body = await res.text();
    const json = jsonOrUndefined(body);
    return { status: res.status, body, json };
  }

  /** POSTs with the service's run token as bearer token (unless `headers` says otherwise). */
  async post(path: string, headers: Record<string, string> = {}): Promise<{ status: number; json: unknown; body: string }> {
    const auth: Record<string, string> = this.runToken !== undefined ? { authorization: `Bearer ${this.runToken}` } : {};
    const res = await fetch(`${this.url}${path}`, { method: 'POST', headers: { ...auth, ...headers } });
    const body = await res.text();
    const json = jsonOrUndefined(body);
    return { status: res.status, json, body };
  }

  /**
   * POST /api/v1/runs...: like post(), but waits while the service answers 409 "a run is in
   * progress" (the run before may still be publishing its results), at most `limitMs`.
   */
  async postRun(path: string, limitMs = 15_000): Promise<{ status: number; json: unknown; body: string }> {
    const deadline = Date.now() + limitMs;
    for (;;) {
      const r = await this.post(path);
      const busy = r.status === 409 && (r.json as { message?: string } | undefined)?.message === 'a run is in progress';
      if (!busy || Date.now() >= deadline) return r;
      await new Promise((resolve) => setTimeout(resolve, 100));
    }
  }

  async metrics(): Promise<Sample[]> {
    const res = await fetch(`${this.url}/metrics`);
    if (res.status !== 200) throw new Error(`/metrics answered ${res.status}`);
    return parseMetrics(await res.text());
  }

  /** The value of an unlabelled sample (or the first matching `labels`), undefined when absent. */
  async metric(name: string, labels: Record<string, string> = {}): Promise<number | undefined> {
    const samples = await this.metrics();
    return samples.find((s) => s.name === name && Object.entries(labels).every(([k, v]) => s.labels[k] === v))?.value;
  }

  signal(sig: NodeJS.Signals): void {
    if (this.exit === null) this.child.kill(sig);
  }

  /** SIGTERM, then SIGKILL if it is still there after `graceMs`. */
  async stop(graceMs = 30_000): Promise<ExitInfo> {
    if (this.exit !== null) return this.exit;
    this.child.kill('SIGTERM');
    const t = setTimeout(() => this.child.kill('SIGKILL'), graceMs);
    try {
      return await this.exited;
    } finally {
      clearTimeout(t);
    }
  }

  cleanup(): void {
    rmSync(this.dir, { recursive: true, force: true });
  }
}

const live = new Set<ServiceProcess>();

/** Starts `plumbline serve` and waits until it listens. */
export async function startService(options: ServiceOptions): Promise<ServiceProcess> {
  const s = new ServiceProcess(options);
  await s.ready();
  return s;
}

/** Runs `plumbline serve` with a config that is expected to be refused; resolves when it exits. */
export async function runServeExpectingExit(options: ServiceOptions, limitMs = 30_000): Promise<{ exit: ExitInfo; stderr: string[]; logs: LogLine[] }> {
  const s = new ServiceProcess(options);
  const timer = setTimeout(() => s.signal('SIGKILL'), limitMs);
  try {
    const exit = await s.exited;
    return { exit, stderr: s.rawErr, logs: s.logs };
  } finally {
    clearTimeout(timer);
  }
}

/** Stops every service this file started that still runs (afterAll). */
export async function stopAllServices(): Promise<void> {
  await Promise.all(
    [...live].map(async (s) => {
      await s.stop(5000);
    }),
  );
}

export interface CliResult {
  code: number | null;
  stdout: string;
  stderr: string;
  /** The JSON log lines among stderr. */
  logs: LogLine[];
}

/** Runs the CLI (`node --import tsx src/cli.ts ARGS`) as a child process, without blocking the event loop. */
export function runCli(args: string[], env: Record<string, string>, limitMs = 120_000): Promise<CliResult> {
  return new Promise((resolve, reject) => {
    const child = spawn(process.execPath, ['--import', 'tsx', 'src/cli.ts', ...args], {
      cwd: REPO_ROOT,
      env: { PATH: process.env.PATH ?? '/usr/bin:/bin', HOME: process.env.HOME ?? tmpdir(), ...env },
      stdio: ['ignore', 'pipe', 'pipe'],
    });
    let stdout = '';
    let stderr = '';
    child.stdout.setEncoding('utf8').on('data', (c: string) => (stdout += c));
    child.stderr.setEncoding('utf8').on('data', (c: string) => (stderr += c));
    const timer = setTimeout(() => child.kill('SIGKILL'), limitMs);
    child.once('error', reject);
    child.once('exit', (code) => {
      clearTimeout(timer);
      const logs: LogLine[] = [];
      for (const line of stderr.split('\n')) {
        try {
          logs.push(JSON.parse(line) as LogLine);
        } catch {
          /* not a log line */
        }
      }
      resolve({ code, stdout, stderr, logs });
    });
  });
}
