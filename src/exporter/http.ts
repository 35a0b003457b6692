/**
 * Plumbline's HTTP server, on Node's own http module (a handful of fixed routes need no
 * framework).
 *
 * Routes:
 *   GET  /metrics                     Prometheus text, or OpenMetrics when the Accept header prefers it
 *   GET  /healthz                     200 "ok" while the process lives (liveness)
 *   GET  /readyz                      200 or 503 with `{ ready, reasons }` (readiness)
 *   GET  /api/v1/reports/latest       the newest stored Report as JSON, 404 when none
 *   GET  /api/v1/reports/YYYY-MM-DD   that date's Report, 404 when none, 400 for a bad date
 *   POST /api/v1/runs?date=YYYY-MM-DD manual run (only when `deps.trigger` is set): 202 accepted,
 *                                     401 without the bearer token, 400 date refused, 409 busy or
 *                                     not the leader, 503 store or source not ready
 * Requests that act (POST) must name an allowed Host (421 otherwise), so a page that rebinds
 * its own DNS name to this address cannot start runs from a browser.
 *   GET  anything else                `deps.page` when given, else 404
 * HEAD is answered like GET without a body. Errors are JSON `{ "error": "..." }` and never
 * repeat what the request said.
 */
import { createHash, timingSafeEqual } from 'node:crypto';
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import type { AddressInfo } from 'node:net';
import { ConfigError } from '../errors.ts';
import type { Report } from '../report/index.ts';
import type { ExpositionFormat, PlumblineMetrics } from './metrics.ts';

export interface PageResult {
  status: number;
  contentType: string;
  body: string;
  /** Extra response headers (e.g. a Content-Security-Policy for HTML). */
  headers?: Record<string, string>;
}

export interface HttpDeps {
  metrics: PlumblineMetrics;
  latestReport(): Promise<Report | null>;
  reportFor(date: string): Promise<Report | null>;
  /** Ready when the store answers and the latest results are loaded; reasons say what is missing. */
  readiness(): Promise<{ ready: boolean; reasons: string[] }>;
  /** Serves every other GET (the status page). Returns null for "not found". */
  page?: (path: string, query: URLSearchParams) => Promise<PageResult | null>;
  /** Starts a run for `date` (null: the date the schedule would pick). Absent: POST /api/v1/runs is 404. */
  trigger?: (date: string | null) => Promise<{ accepted: boolean; message: string; status?: number }>;
  /** Bearer token POST /api/v1/runs requires (set whenever `trigger` is). */
  runToken?: string;
  /** Told about handler failures (the client only sees a 500 "internal error"). */
  onError?: (err: unknown, route: string) => void;
}

export interface HttpServerOptions {
  host: string;
  port: number;
  /**
   * Host header values accepted on requests that act (`name` or `name:port`; a name without a
   * port accepts any port). Default: the bind address, localhost and 127.0.0.1 with the port.
   */
  allowedHosts?: readonly string[];
}

export interface RunningHttpServer {
  /** e.g. http://127.0.0.1:9467 */
  url: string;
  port: number;
  /** Stops listening and drops open connections (keep-alive ones included). Safe to call twice. */
  close(): Promise<void>;
}

const JSON_TYPE = 'application/json; charset=utf-8';
const TEXT_TYPE = 'text/plain; charset=utf-8';
const DATE_PATH = /^\/api\/v1\/reports\/([^/]+)$/;

/** A real calendar date written YYYY-MM-DD. */
export function isSnapshotDate(s: string): boolean {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) return false;
  const d = new Date(`${s}T00:00:00Z`);
  return !Number.isNaN(d.getTime()) && d.toISOString().startsWith(s);
}

/**
 * Content negotiation for /metrics: OpenMetrics 1.0.0 when the client ranks it at least as
 * high as the text format (Prometheus 2.x asks for OpenMetrics first), text otherwise.
 */
export function preferredFormat(accept: string | undefined): ExpositionFormat {
  if (accept === undefined || accept === '') return 'prometheus';
  let om = 0;
  let text = 0;
  for (const part of accept.split(',')) {
    const [rawType = '', ...params] = part.split(';').map((s) => s.trim());
    const type = rawType.toLowerCase();
    let q = 1;
    let version: string | undefined;
    for (const p of params) {
      const eq = p.indexOf('=');
      if (eq < 0) continue;
      const key = p.slice(0, eq).trim().toLowerCase();
      const value = p.slice(eq + 1).trim().replace(/^"|"$/g, '');
      if (key === 'q') q = Number(value);
      else if (key === 'version') version = value;
    }
    if (!Number.isFinite(q) || q < 0) q = 0;
    if (type === 'application/openmetrics-text') {
      if (version === undefined || version === '1.0.0') om = Math.max(om, q);
    } else if (type === 'text/plain' || type === 'text/*' || type === '*/*') {
      text = Math.max(text, q);
    }
  }
  return om > 0 && om >= text ? 'openmetrics' : 'prometheus';
}

function send(res: ServerResponse, status: number, contentType: string, body: string, headers: Record<string, string> = {}): void {
  res.writeHead(status, {
    'Content-Type': contentType,
    'Content-Length': Buffer.byteLength(body),
    'X-Content-Type-Options': 'nosniff',
    'Cache-Control': 'no-store',
    ...headers,
  });
  res.end(body);
}

function sendJson(res: ServerResponse, status: number, value: unknown, headers: Record<string, string> = {}): void {
  send(res, status, JSON_TYPE, `${JSON.stringify(value)}\n`, headers);
}

function notFound(res: ServerResponse): void {
  sendJson(res, 404, { error: 'not found' });
}

function methodNotAllowed(res: ServerResponse, allow: string): void {
  sendJson(res, 405, { error: 'method not allowed' }, { Allow: allow });
}

const isRead = (m: string): boolean => m === 'GET' || m === 'HEAD';

/** A browser on another origin may POST without a preflight; such a request carries an Origin header that does not match. */
function crossOriginPost(req: IncomingMessage): boolean {
  const origin = req.headers.origin;
  if (origin === undefined) return false;
  try {
    return new URL(origin).host !== req.headers.host;
  } catch {
    return true;
  }
}

/** The Host header checked against the allowed names (case-insensitive; a bare name matches any port). */
export function hostAllowed(host: string | undefined, allowed: readonly string[]): boolean {
  if (host === undefined || host === '') return false;
  const h = host.toLowerCase();
  const name = h.startsWith('[') ? h.slice(0, h.indexOf(']') + 1) : h.replace(/:\d+$/, '');
  return allowed.some((a) => {
    const x = a.toLowerCase();
    return x === h || x === name;
  });
}

/**
 * Constant-time comparison of a presented bearer token with the expected one: both are
 * hashed first (SHA-256), so the comparison runs over equal lengths and leaks neither
 * the token nor its length.
 */
export function tokenMatches(authorization: string | undefined, expected: string): boolean {
  const m = /^Bearer\s+(\S+)\s*$/i.exec(authorization ?? '');
  const presented = m?.[1] ?? '';
  const a = createHash('sha256').update(presented, 'utf8').digest();
  const b = createHash('sha256').update(expected, 'utf8').digest();
  return timingSafeEqual(a, b) && presented !== '';
}

async function route(req: IncomingMessage, res: ServerResponse, deps: HttpDeps, path: string, query: URLSearchParams, allowedHosts: readonly string[]): Promise<void> {
  const method = req.method ?? 'GET';
  if (!isRead(method) && !hostAllowed(req.headers.host, allowedHosts)) {
    return sendJson(res, 421, { error: 'this server does not answer that host name (http.allowedHosts)' });
  }

  if (path === '/metrics') {
    if (!isRead(method)) return methodNotAllowed(res, 'GET, HEAD');
    let rendered: { contentType: string; body: string };
    try {
      rendered = await deps.metrics.render(preferredFormat(req.headers.accept));
    } catch (err) {
      deps.onError?.(err, '/metrics');
      return send(res, 500, TEXT_TYPE, 'metrics unavailable\n');
    }
    return send(res, 200, rendered.contentType, rendered.body);
  }

  if (path === '/healthz') {
    if (!isRead(method)) return methodNotAllowed(res, 'GET, HEAD');
    return send(res, 200, TEXT_TYPE, 'ok\n');
  }

  if (path === '/readyz') {
    if (!isRead(method)) return methodNotAllowed(res, 'GET, HEAD');
    let r: { ready: boolean; reasons: string[] };
    try {
      r = await deps.readiness();
    } catch (err) {
      deps.onError?.(err, '/readyz');
      r = { ready: false, reasons: ['readiness check failed'] };
    }
    return sendJson(res, r.ready ? 200 : 503, { ready: r.ready, reasons: r.reasons });
  }

  if (path === '/api/v1/reports/latest') {
    if (!isRead(method)) return methodNotAllowed(res, 'GET, HEAD');
    const report = await deps.latestReport();
    return report === null ? sendJson(res, 404, { error: 'no report stored yet' }) : sendJson(res, 200, report);
  }

  const dated = DATE_PATH.exec(path);
  if (dated !== null) {
    if (!isRead(method)) return methodNotAllowed(res, 'GET, HEAD');
    const date = dated[1]!;
    if (!isSnapshotDate(date)) return sendJson(res, 400, { error: 'the date must be a calendar date written YYYY-MM-DD' });
    const report = await deps.reportFor(date);
    // The date passed the pattern above, so it is safe to repeat.
    return report === null ? sendJson(res, 404, { error: `no report for ${date}` }) : sendJson(res, 200, report);
  }

  if (path === '/api/v1/runs' && deps.trigger !== undefined) {
    if (method !== 'POST') return methodNotAllowed(res, 'POST');
    if (crossOriginPost(req)) return sendJson(res, 403, { error: 'cross-origin requests may not start runs' });
    if (deps.runToken === undefined || !tokenMatches(req.headers.authorization, deps.runToken)) {
      return sendJson(res, 401, { error: 'a bearer token is required (Authorization: Bearer <PLUMBLINE_RUN_TOKEN>)' }, { 'WWW-Authenticate': 'Bearer realm="plumbline"' });
    }
    const raw = query.get('date');
    if (raw !== null && !isSnapshotDate(raw)) return sendJson(res, 400, { error: 'date must be a calendar date written YYYY-MM-DD' });
    const result = await deps.trigger(raw);
    return sendJson(res, result.status ?? (result.accepted ? 202 : 409), { accepted: result.accepted, message: result.message });
  }

  if (deps.page !== undefined && isRead(method)) {
    const page = await deps.page(path, query);
    if (page === null) return notFound(res);
    return send(res, page.status, page.contentType, page.body, page.headers);
  }
  return notFound(res);
}

function handler(deps: HttpDeps, allowedHosts: () => readonly string[]) {
  return (req: IncomingMessage, res: ServerResponse): void => {
    // Bodies are never read; draining keeps the connection usable.
    req.resume();
    const target = req.url ?? '/';
    if (!target.startsWith('/')) return sendJson(res, 400, { error: 'bad request target' });
    const q = target.indexOf('?');
    const path = q < 0 ? target : target.slice(0, q);
    const query = new URLSearchParams(q < 0 ? '' : target.slice(q + 1));
    route(req, res, deps, path, query, allowedHosts()).catch((err: unknown) => {
      deps.onError?.(err, path);
      if (!res.headersSent) sendJson(res, 500, { error: 'internal error' });
      else res.destroy();
    });
  };
}

function listen(server: Server, opts: HttpServerOptions): Promise<void> {
  return new Promise((resolve, reject) => {
    const onError = (err: NodeJS.ErrnoException): void => {
      server.off('listening', onListening);
      const where = `${opts.host}:${opts.port}`;
      const why = err.code === 'EADDRINUSE' ? 'is already in use' : err.code === 'EACCES' ? 'needs privileges' : `cannot be used (${err.code ?? 'error'})`;
      reject(new ConfigError(`cannot serve HTTP on ${where}: the address ${why}`, [`http: ${where} ${why}; choose another http.host or http.port`], { cause: err }));
    };
    const onListening = (): void => {
      server.off('error', onError);
      resolve();
    };
    server.once('error', onError);
    server.once('listening', onListening);
    server.listen(opts.port, opts.host);
  });
}

/** Starts the server on `opts.host:opts.port` (port 0 picks a free one) and resolves once it listens. */
export async function startHttpServer(deps: HttpDeps, opts: HttpServerOptions): Promise<RunningHttpServer> {
  let allowed: readonly string[] = opts.allowedHosts ?? [];
  const server = createServer(handler(deps, () => allowed));
  // Slow or stuck clients must not hold sockets for long; a scrape takes milliseconds.
  server.headersTimeout = 10_000;
  server.requestTimeout = 30_000;
  await listen(server, opts);
  const address = server.address() as AddressInfo;
  const host = address.address.includes(':') ? `[${address.address}]` : address.address;
  // The default needs the real port (port 0 picks one).
  if (opts.allowedHosts === undefined) allowed = [...new Set([`${host}:${address.port}`, `${opts.host}:${address.port}`, `localhost:${address.port}`, `127.0.0.1:${address.port}`])];
  let closing: Promise<void> | null = null;
  return {
    url: `http://${host}:${address.port}`,
    port: address.port,
    close(): Promise<void> {
      closing ??= new Promise<void>((resolve, reject) => {
        server.close((err) => (err ? reject(err) : resolve()));
        server.closeAllConnections();
      });
      return closing;
    },
  };
}
