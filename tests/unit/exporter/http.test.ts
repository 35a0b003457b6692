/**
 * The HTTP server over real loopback sockets: routes, status codes, content negotiation,
 * JSON errors that never repeat the request, the manual trigger, and a clean close.
 */
import { request as httpRequest, Agent } from 'node:http';
import { createServer } from 'node:net';
import { afterEach, describe, expect, it } from 'vitest';
import { ConfigError } from '../../../src/errors.ts';
import { PlumblineMetrics, hostAllowed, isSnapshotDate, tokenMatches, preferredFormat, startHttpServer, type HttpDeps, type RunningHttpServer } from '../../../src/exporter/index.ts';
import type { Report } from '../../../src/report/contract.ts';
import { sampleReport } from './fixtures.ts';

// The Accept header Prometheus 2.42 sends when scraping (scrape/scrape.go, scrapeAcceptHeader).
const PROMETHEUS_ACCEPT = 'application/openmetrics-text;version=1.0.0,application/openmetrics-text;version=0.0.1;q=0.75,text/plain;version=0.0.4;q=0.5,*/*;q=0.1';

interface Reply {
  status: number;
  headers: Record<string, string | string[] | undefined>;
  body: string;
}

function call(url: string, opts: { method?: string; headers?: Record<string, string>; agent?: Agent } = {}): Promise<Reply> {
  return new Promise((resolve, reject) => {
    const req = httpRequest(url, { method: opts.method ?? 'GET', headers: opts.headers, agent: opts.agent }, (res) => {
      let body = '';
      res.setEncoding('utf8');
      res.on('data', (c: string) => (body += c));
      res.on('end', () => resolve({ status: res.statusCode ?? 0, headers: res.headers, body }));
    });
    req.on('error', reject);
    req.end();
  });
}

const servers: RunningHttpServer[] = [];
afterEach(async () => {
  await Promise.all(servers.splice(0).map((s) => s.close()));
});

function baseDeps(over: Partial<HttpDeps> = {}): HttpDeps {
  const metrics = new PlumblineMetrics({ version: '0.1.0', defaultMetrics: false });
  const report = sampleReport();
  metrics.showReport(report);
  const reports = new Map<string, Report>([[report.runDate, report]]);
  return {
    metrics,
    latestReport: async () => report,
    reportFor: async (d) => reports.get(d) ?? null,
    readiness: async () => ({ ready: true, reasons: [] }),
    ...over,
  };
}

async function serve(deps: HttpDeps): Promise<RunningHttpServer> {
  const s = await startHttpServer(deps, { host: '127.0.0.1', port: 0 });
  servers.push(s);
  return s;
}

describe('preferredFormat', () => {
  it('picks OpenMetrics for the Prometheus scrape header and text otherwise', () => {
    expect(preferredFormat(PROMETHEUS_ACCEPT)).toBe('openmetrics');
    expect(preferredFormat(undefined)).toBe('prometheus');
    expect(preferredFormat('')).toBe('prometheus');
    expect(preferredFormat('*/*')).toBe('prometheus');
    expect(preferredFormat('text/plain;version=0.0.4')).toBe('prometheus');
    expect(preferredFormat('application/openmetrics-text')).toBe('openmetrics');
    expect(preferredFormat('Application/OpenMetrics-Text; Version=1.0.0')).toBe('openmetrics');
    // Text ranked higher wins; an OpenMetrics version we do not produce does not count.
    expect(preferredFormat('application/openmetrics-text;q=0.3,text/plain;q=0.9')).toBe('prometheus');
    expect(preferredFormat('application/openmetrics-text;version=0.0.1')).toBe('prometheus');
    expect(preferredFormat('application/openmetrics-text;q=0')).toBe('prometheus');
  });
});

describe('isSnapshotDate', () => {
  it('accepts real calendar dates written YYYY-MM-DD only', () => {
    expect(isSnapshotDate('2031-05-14')).toBe(true);
    expect(isSnapshotDate('2028-02-29')).toBe(true);
    expect(isSnapshotDate('2031-02-29')).toBe(false);
    expect(isSnapshotDate('2031-13-01')).toBe(false);
    expect(isSnapshotDate('2031-5-14')).toBe(false);
    expect(isSnapshotDate('latest')).toBe(false);
  });
});

describe('startHttpServer', () => {
  it('serves the metrics in the text format, or OpenMetrics when asked', async () => {
    const s = await serve(baseDeps());
    expect(s.url).toBe(`http://127.0.0.1:${s.port}`);
    const text = await call(`${s.url}/metrics`);
    expect(text.status).toBe(200);
    expect(text.headers['content-type']).toBe('text/plain; version=0.0.4; charset=utf-8');
    expect(text.body).toContain('plumbline_feature_psi{feature="price_rel"} 0.31\n');
    expect(text.body).toContain('# TYPE plumbline_runs_total counter');
    const om = await call(`${s.url}/metrics`, { headers: { accept: PROMETHEUS_ACCEPT } });
    expect(om.status).toBe(200);
    expect(om.headers['content-type']).toBe('application/openmetrics-text; version=1.0.0; charset=utf-8');
    expect(om.body).toContain('# TYPE plumbline_runs counter\nplumbline_runs_total 0\n');
    expect(om.body.endsWith('# EOF\n')).toBe(true);
    const head = await call(`${s.url}/metrics`, { method: 'HEAD' });
    expect(head.status).toBe(200);
    expect(head.body).toBe('');
    expect((await call(`${s.url}/metrics`, { method: 'POST' })).status).toBe(405);
  });

  it('answers 500 without details when rendering the metrics fails', async () => {
    const errors: unknown[] = [];
    const deps = baseDeps({ onError: (e) => errors.push(e) });
    deps.metrics.render = async () => {
      throw new Error('secret detail');
    };
    const s = await serve(deps);
    const r = await call(`${s.url}/metrics`);
    expect(r.status).toBe(500);
    expect(r.body).toBe('metrics unavailable\n');
    expect(errors).toHaveLength(1);
  });

  it('answers /healthz while alive and /readyz from the readiness check', async () => {
    let ready = { ready: false, reasons: ['store unreachable', 'latest results not loaded'] };
    const s = await serve(baseDeps({ readiness: async () => ready }));
    const h = await call(`${s.url}/healthz`);
    expect(h.status).toBe(200);
    expect(h.body).toBe('ok\n');
    const notReady = await call(`${s.url}/readyz`);
    expect(notReady.status).toBe(503);
    expect(notReady.headers['content-type']).toBe('application/json; charset=utf-8');
    expect(JSON.parse(notReady.body)).toEqual({ ready: false, reasons: ['store unreachable', 'latest results not loaded'] });
    ready = { ready: true, reasons: [] };
    const ok = await call(`${s.url}/readyz`);
    expect(ok.status).toBe(200);
    expect(JSON.parse(ok.body)).toEqual({ ready: true, reasons: [] });
  });

  it('treats a readiness check that throws as not ready', async () => {
    const s = await serve(
      baseDeps({
        readiness: async () => {
          throw new Error('connection refused to 10.1.2.3');
        },
      }),
    );
    const r = await call(`${s.url}/readyz`);
    expect(r.status).toBe(503);
    expect(JSON.parse(r.body)).toEqual({ ready: false, reasons: ['readiness check failed'] });
  });

  it('serves stored reports as JSON, 404 when none, 400 for a bad date', async () => {
    const report = sampleReport();
    const s = await serve(baseDeps());
    const latest = await call(`${s.url}/api/v1/reports/latest`);
    expect(latest.status).toBe(200);
    expect(latest.headers['content-type']).toBe('application/json; charset=utf-8');
    expect(JSON.parse(latest.body)).toEqual(report);
    const dated = await call(`${s.url}/api/v1/reports/2031-05-14`);
    expect(dated.status).toBe(200);
    expect(JSON.parse(dated.body)).toEqual(report);
    const none = await call(`${s.url}/api/v1/reports/2031-05-13`);
    expect(none.status).toBe(404);
    expect(JSON.parse(none.body)).toEqual({ error: 'no report for 2031-05-13' });
    const bad = await call(`${s.url}/api/v1/reports/2031-02-30`);
    expect(bad.status).toBe(400);
    expect(JSON.parse(bad.body)).toEqual({ error: 'the date must be a calendar date written YYYY-MM-DD' });

    const empty = await serve(baseDeps({ latestReport: async () => null }));
    const nothing = await call(`${empty.url}/api/v1/reports/latest`);
    expect(nothing.status).toBe(404);
    expect(JSON.parse(nothing.body)).toEqual({ error: 'no report stored yet' });
  });

  it('never repeats request data in its answers', async () => {
    const s = await serve(baseDeps());
    const evil = '%3Cscript%3Ealert(1)%3C%2Fscript%3E';
    for (const path of [`/${evil}`, `/api/v1/reports/${evil}`, `/api/v1/runs?date=${evil}`, `/metrics/${evil}`]) {
      const r = await call(`${s.url}${path}`);
      expect(r.status).toBeGreaterThanOrEqual(400);
      expect(r.headers['content-type']).toBe('application/json; charset=utf-8');
      expect(r.headers['x-content-type-options']).toBe('nosniff');
      expect(r.body).not.toMatch(/script|alert|%3C/i);
      expect(JSON.parse(r.body)).toHaveProperty('error');
    }
  });

  it('answers 500 with a generic JSON error when a handler throws, and tells onError', async () => {
    const errors: string[] = [];
    const s = await serve(
      baseDeps({
        latestReport: async () => {
          throw new Error('password=hunter2 in a connection string');
        },
        onError: (e, route) => errors.push(`${route}: ${(e as Error).message}`),
      }),
    );
    const r = await call(`${s.url}/api/v1/reports/latest`);
    expect(r.status).toBe(500);
    expect(JSON.parse(r.body)).toEqual({ error: 'internal error' });
    expect(errors).toEqual(['/api/v1/reports/latest: password=hunter2 in a connection string']);
  });

  it('has no run trigger unless one is given', async () => {
    const s = await serve(baseDeps());
    const r = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST' });
    expect(r.status).toBe(404);
    expect(JSON.parse(r.body)).toEqual({ error: 'not found' });
  });

  it('starts manual runs: 202 accepted, 409 busy, 400 bad date, 405 wrong method, 403 cross-origin', async () => {
    const calls: (string | null)[] = [];
    let busy = false;
    const token = 'unit-test-token-0123456789';
    const s = await serve(
      baseDeps({
        runToken: token,
        trigger: async (date) => {
          calls.push(date);
          return busy ? { accepted: false, message: 'a run is in progress' } : { accepted: true, message: `run for ${date ?? 'the scheduled date'} started` };
        },
      }),
    );
    const auth = { authorization: `Bearer ${token}` };
    const ok = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: auth });
    expect(ok.status).toBe(202);
    expect(JSON.parse(ok.body)).toEqual({ accepted: true, message: 'run for 2031-05-14 started' });
    const noDate = await call(`${s.url}/api/v1/runs`, { method: 'POST', headers: auth });
    expect(noDate.status).toBe(202);
    busy = true;
    const conflict = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: auth });
    expect(conflict.status).toBe(409);
    expect(JSON.parse(conflict.body)).toEqual({ accepted: false, message: 'a run is in progress' });
    const bad = await call(`${s.url}/api/v1/runs?date=yesterday`, { method: 'POST', headers: auth });
    expect(bad.status).toBe(400);
    const get = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { headers: auth });
    expect(get.status).toBe(405);
    expect(get.headers.allow).toBe('POST');
    const cross = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: { ...auth, origin: 'http://elsewhere.example' } });
    expect(cross.status).toBe(403);
    const sameOrigin = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: { ...auth, origin: s.url } });
    expect(sameOrigin.status).toBe(409);
    // Only the accepted-format, same-origin, authorised POSTs reached the trigger.
    expect(calls).toEqual(['2031-05-14', null, '2031-05-14', '2031-05-14']);
  });

  it('refuses a manual run without the right bearer token (401) and from a host name it does not serve (421)', async () => {
    const calls: (string | null)[] = [];
    const token = 'unit-test-token-0123456789';
    const s = await serve(baseDeps({ runToken: token, trigger: async (date) => (calls.push(date), { accepted: true, message: 'ok' }) }));
    const missing = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST' });
    expect(missing.status).toBe(401);
    expect(missing.headers['www-authenticate']).toBe('Bearer realm="plumbline"');
    expect(missing.body).not.toContain(token);
    for (const wrong of [`Bearer ${token}x`, `Bearer ${token.slice(0, -1)}`, token, 'Bearer ', `Basic ${token}`]) {
      expect((await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: { authorization: wrong } })).status, wrong).toBe(401);
    }
    // A page on a rebinding domain reaches this address with its own name in Host.
    const rebound = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: { authorization: `Bearer ${token}`, host: `attacker.example:${s.port}` } });
    expect(rebound.status).toBe(421);
    const otherPort = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: { authorization: `Bearer ${token}`, host: `127.0.0.1:${s.port + 1}` } });
    expect(otherPort.status).toBe(421);
    const localhost = await call(`${s.url}/api/v1/runs?date=2031-05-14`, { method: 'POST', headers: { authorization: `Bearer ${token}`, host: `localhost:${s.port}` } });
    expect(localhost.status).toBe(202);
    // Reads stay open (Prometheus scrapes by address).
    expect((await call(`${s.url}/healthz`, { headers: { host: 'attacker.example' } })).status).toBe(200);
    expect(calls).toEqual(['2031-05-14']);
  });

  it('matches Host headers against configured names, with or without a port', () => {
    expect(hostAllowed('plumbline.example.internal:9467', ['plumbline.example.internal'])).toBe(true);
    expect(hostAllowed('PLUMBLINE.example.internal', ['plumbline.example.internal'])).toBe(true);
    expect(hostAllowed('plumbline.example.internal:9467', ['plumbline.example.internal:9468'])).toBe(false);
    expect(hostAllowed('[::1]:9467', ['[::1]'])).toBe(true);
    expect(hostAllowed(undefined, ['localhost'])).toBe(false);
    expect(tokenMatches('Bearer abc', 'abc')).toBe(true);
    expect(tokenMatches('bearer  abc ', 'abc')).toBe(true);
    expect(tokenMatches(undefined, 'abc')).toBe(false);
  });

  it('hands every other GET to the page handler, and 404s without one', async () => {
    const seen: string[] = [];
    const s = await serve(
      baseDeps({
        page: async (path, query) => {
          seen.push(`${path}?${query.toString()}`);
          if (path === '/') return { status: 200, contentType: 'text/html; charset=utf-8', body: '<h1>status</h1>', headers: { 'Content-Security-Policy': "default-src 'self'" } };
          return null;
        },
      }),
    );
    const home = await call(`${s.url}/?feature=price_rel`);
    expect(home.status).toBe(200);
    expect(home.headers['content-type']).toBe('text/html; charset=utf-8');
    expect(home.headers['content-security-policy']).toBe("default-src 'self'");
    expect(home.body).toBe('<h1>status</h1>');
    expect((await call(`${s.url}/nowhere`)).status).toBe(404);
    expect((await call(`${s.url}/`, { method: 'POST' })).status).toBe(404);
    expect(seen).toEqual(['/?feature=price_rel', '/nowhere?']);

    const bare = await serve(baseDeps());
    const r = await call(`${bare.url}/`);
    expect(r.status).toBe(404);
    expect(JSON.parse(r.body)).toEqual({ error: 'not found' });
  });

  it('closes cleanly with a keep-alive connection open, and close is idempotent', async () => {
    const s = await startHttpServer(baseDeps(), { host: '127.0.0.1', port: 0 });
    const agent = new Agent({ keepAlive: true });
    const r = await call(`${s.url}/healthz`, { agent });
    expect(r.status).toBe(200);
    await s.close();
    await s.close();
    await expect(call(`${s.url}/healthz`)).rejects.toMatchObject({ code: 'ECONNREFUSED' });
    agent.destroy();
  });

  it('refuses a port that is taken with a ConfigError naming the address', async () => {
    const blocker = createServer();
    await new Promise<void>((resolve) => blocker.listen(0, '127.0.0.1', resolve));
    const port = (blocker.address() as { port: number }).port;
    try {
      const err = await startHttpServer(baseDeps(), { host: '127.0.0.1', port }).then(
        () => null,
        (e: unknown) => e,
      );
      expect(err).toBeInstanceOf(ConfigError);
      expect((err as ConfigError).message).toBe(`cannot serve HTTP on 127.0.0.1:${port}: the address is already in use`);
    } finally {
      await new Promise<void>((resolve) => blocker.close(() => resolve()));
    }
  });
});
