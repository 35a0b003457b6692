/**
 * pushAlerts against a small HTTP server started here that records what it receives: a real
 * HTTP exchange over loopback, not a mocked fetch. The payload shape follows Alertmanager's
 * API v2 `postableAlerts` (labels, annotations, startsAt, endsAt, generatorURL).
 */
import { createServer, type IncomingMessage, type Server, type ServerResponse } from 'node:http';
import { afterEach, describe, expect, it } from 'vitest';
import { alertNameFor, alertingLabels, buildAlerts, pushAlerts, type PostableAlert } from '../../../src/exporter/index.ts';
import { finding, sampleReport } from './fixtures.ts';

interface Recorded {
  method: string;
  url: string;
  contentType: string | undefined;
  body: PostableAlert[];
}

interface Recorder {
  url: string;
  requests: Recorded[];
  close(): Promise<void>;
}

const open: Recorder[] = [];
afterEach(async () => {
  await Promise.all(open.splice(0).map((r) => r.close()));
});

async function recorder(answer: (req: IncomingMessage, res: ServerResponse) => void = (_q, res) => res.writeHead(200).end()): Promise<Recorder> {
  const requests: Recorded[] = [];
  const server: Server = createServer((req, res) => {
    let raw = '';
    req.setEncoding('utf8');
    req.on('data', (c: string) => (raw += c));
    req.on('end', () => {
      requests.push({ method: req.method ?? '', url: req.url ?? '', contentType: req.headers['content-type'], body: raw === '' ? [] : (JSON.parse(raw) as PostableAlert[]) });
      answer(req, res);
    });
  });
  await new Promise<void>((resolve) => server.listen(0, '127.0.0.1', resolve));
  const port = (server.address() as { port: number }).port;
  const r: Recorder = {
    url: `http://127.0.0.1:${port}`,
    requests,
    close: () =>
      new Promise<void>((resolve) => {
        server.closeAllConnections();
        server.close(() => resolve());
      }),
  };
  open.push(r);
  return r;
}

const NOW = new Date('2031-05-15T06:32:00.000Z');
const clock = () => NOW;

describe('pushAlerts', () => {
  it('POSTs the alerting findings as Alertmanager v2 alerts with the rule labels', async () => {
    const am = await recorder();
    const result = await pushAlerts(`${am.url}/`, sampleReport(), { now: clock, generatorUrl: 'http://plumbline.example.org:9467/' });
    expect(result).toMatchObject({ ok: true, status: 200, firing: 5, resolved: 0 });
    expect(am.requests).toHaveLength(1);
    const req = am.requests[0]!;
    expect(req.method).toBe('POST');
    expect(req.url).toBe('/api/v2/alerts');
    expect(req.contentType).toBe('application/json');
    expect(req.body.map((a) => a.labels)).toEqual([
      { alertname: 'PlumblineFeatureDrifted', severity: 'page', check: 'psi', feature: 'price_rel' },
      { alertname: 'PlumblineFeatureDrifted', severity: 'page', check: 'ks', feature: 'price_rel' },
      { alertname: 'PlumblineWithinListRuleBroken', severity: 'page', check: 'rule_violation_ratio', feature: 'price_rel', rule: 'zscore' },
      { alertname: 'PlumblineWithinListRuleBroken', severity: 'ticket', check: 'flat_list_ratio', feature: 'seller_score' },
      { alertname: 'PlumblineDatasetBroken', severity: 'page', check: 'duplicate_item_ratio' },
    ]);
    const psi = req.body[0]!;
    // since 2031-05-13 (a snapshot date) -> its 00:00 UTC; endsAt = now + 86400 s + 3600 s by default.
    expect(psi.startsAt).toBe('2031-05-13T00:00:00.000Z');
    expect(psi.endsAt).toBe('2031-05-16T07:32:00.000Z');
    expect(psi.generatorURL).toBe('http://plumbline.example.org:9467/');
    expect(psi.annotations).toEqual({
      summary: 'Ranking feature price_rel: psi alerting at critical',
      description: 'Plumbline run for 2031-05-14: feature price_rel, check psi is 0.31, alerting at critical after 2 consecutive run(s) since 2031-05-13. psi 0.31',
      runbook_url: 'https://runbooks.example.org/plumbline/RUNBOOK.md#plumblinefeaturedrifted',
    });
    expect(req.body[4]!.annotations.summary).toBe('Ranking dataset broken: duplicate_item_ratio');
    expect(result.active).toEqual(req.body.map((a) => a.labels));
  });

  it('resolves, with endsAt = now, the alerts that stopped since the previous push', async () => {
    const am = await recorder();
    const first = await pushAlerts(am.url, sampleReport(), { now: clock });
    const calmer = sampleReport({
      runDate: '2031-05-15',
      findings: [
        finding({ feature: 'price_rel', check: 'psi', value: 0.05, status: 'ok' }),
        finding({ feature: 'price_rel', check: 'ks', value: 0.21, status: 'critical', alert: { consecutiveRuns: 3, consecutiveCritical: 3, alerting: true, level: 'critical', since: '2031-05-13' } as never }),
      ],
    });
    const later = new Date('2031-05-16T06:32:00.000Z');
    const second = await pushAlerts(am.url, calmer, { previous: first.active, now: () => later, resendEverySeconds: 3600, graceSeconds: 600 });
    expect(second).toMatchObject({ ok: true, firing: 1, resolved: 4 });
    const body = am.requests[1]!.body;
    const firing = body.filter((a) => a.endsAt > later.toISOString());
    const resolved = body.filter((a) => a.endsAt === later.toISOString());
    expect(firing.map((a) => a.labels.check)).toEqual(['ks']);
    expect(firing[0]!.endsAt).toBe('2031-05-16T07:42:00.000Z');
    expect(resolved.map((a) => a.labels.check).sort()).toEqual(['duplicate_item_ratio', 'flat_list_ratio', 'psi', 'rule_violation_ratio']);
    for (const a of resolved) expect(a.startsAt).toBe(later.toISOString());
    expect(second.active.map((l) => l.check)).toEqual(['ks']);
  });

  it('takes the previous report instead of the previous result', () => {
    const quietReport = sampleReport({ findings: [] });
    const built = buildAlerts(quietReport, { previous: sampleReport(), now: clock });
    expect(built.alerts).toHaveLength(5);
    expect(built.resolved).toBe(5);
    expect(built.alerts.every((a) => a.endsAt === NOW.toISOString())).toBe(true);
  });

  it('treats a severity change as a new alert and resolves the old one', () => {
    const warn = sampleReport({ findings: [finding({ feature: 'seller_score', check: 'flat_list_ratio', value: 0.07, status: 'warn', alert: { consecutiveRuns: 1, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2031-05-14' } as never })] });
    const crit = sampleReport({ findings: [finding({ feature: 'seller_score', check: 'flat_list_ratio', value: 0.3, status: 'critical', alert: { consecutiveRuns: 2, consecutiveCritical: 1, alerting: true, level: 'critical', since: '2031-05-15' } as never })] });
    const built = buildAlerts(crit, { previous: alertingLabels(warn), now: clock });
    expect(built.alerts.map((a) => [a.labels.severity, a.endsAt === NOW.toISOString() ? 'resolved' : 'firing'])).toEqual([
      ['page', 'firing'],
      ['ticket', 'resolved'],
    ]);
  });

  it('sends nothing when nothing is alerting and nothing was', async () => {
    const am = await recorder();
    const result = await pushAlerts(am.url, sampleReport({ findings: [] }), { now: clock });
    expect(result).toEqual({ ok: true, firing: 0, resolved: 0, active: [] });
    expect(am.requests).toHaveLength(0);
  });

  it('returns Alertmanager errors and keeps what may still be active', async () => {
    const am = await recorder((_q, res) => res.writeHead(400, { 'content-type': 'application/json' }).end('{"code":400,"message":"start time must be before end time"}'));
    const before = alertingLabels(sampleReport()).slice(0, 2);
    const result = await pushAlerts(am.url, sampleReport({ findings: [] }), { previous: before, now: clock });
    expect(result.ok).toBe(false);
    expect(result.status).toBe(400);
    expect(result.error).toBe('Alertmanager answered 400: {"code":400,"message":"start time must be before end time"}');
    // The resolutions did not land, so the next push must try them again.
    expect(result.active).toEqual(before);
  });

  it('returns a timeout as an error instead of throwing', async () => {
    const am = await recorder(() => {
      /* never answers */
    });
    const result = await pushAlerts(am.url, sampleReport(), { now: clock, timeoutMs: 200 });
    expect(result.ok).toBe(false);
    expect(result.error).toBe(`cannot reach Alertmanager at ${am.url}: no answer within 200 ms`);
    expect(result.active).toHaveLength(5);
  });

  it('returns a refused connection as an error', async () => {
    const am = await recorder();
    const url = am.url;
    await am.close();
    open.splice(0);
    const result = await pushAlerts(url, sampleReport(), { now: clock, timeoutMs: 2000 });
    expect(result.ok).toBe(false);
    expect(result.error).toBe(`cannot reach Alertmanager at ${url}: ECONNREFUSED`);
  });

  it('rejects a base URL that is not http(s) without sending', async () => {
    const result = await pushAlerts('file:///etc/passwd', sampleReport(), { now: clock });
    expect(result.ok).toBe(false);
    expect(result.error).toBe('bad Alertmanager URL: unsupported scheme file:');
    expect((await pushAlerts('not a url', sampleReport(), { now: clock })).ok).toBe(false);
  });
});

describe('alertNameFor', () => {
  it('maps checks to the alert names of the shipped rules', () => {
    expect(alertNameFor('psi')).toBe('PlumblineFeatureDrifted');
    expect(alertNameFor('new_category_ratio')).toBe('PlumblineFeatureDrifted');
    expect(alertNameFor('constant')).toBe('PlumblineFeatureDataBroken');
    expect(alertNameFor('flat_list_ratio')).toBe('PlumblineWithinListRuleBroken');
    expect(alertNameFor('list_size_psi')).toBe('PlumblineDatasetBroken');
    expect(alertNameFor('snapshot_missing')).toBe('PlumblineSnapshotMissing');
  });
});

describe('slice findings', () => {
  it('push as PlumblineSliceBroken with the slice as a label, apart from the same check on the whole day', () => {
    const alert = { consecutiveRuns: 2, consecutiveCritical: 2, alerting: true, level: 'critical' as const, since: '2031-05-13' };
    const report = sampleReport({
      findings: [
        finding({ slice: 'all', feature: 'price_rel', check: 'psi', value: 0.31, status: 'critical', alert }),
        finding({ slice: 'top10', feature: 'price_rel', check: 'psi', value: 0.52, status: 'critical', alert }),
      ],
    });
    expect(alertNameFor('psi', 'top10')).toBe('PlumblineSliceBroken');
    expect(alertingLabels(report)).toEqual([
      { alertname: 'PlumblineFeatureDrifted', severity: 'page', check: 'psi', feature: 'price_rel' },
      { alertname: 'PlumblineSliceBroken', severity: 'page', check: 'psi', slice: 'top10', feature: 'price_rel' },
    ]);
    const built = buildAlerts(report, { now: () => new Date('2031-05-15T07:00:00Z') });
    const slice = built.alerts.find((a: PostableAlert) => a.labels['slice'] === 'top10')!;
    expect(slice.annotations['summary']).toBe('Ranking feature price_rel in slice top10: psi alerting at critical');
    expect(slice.annotations['description']).toMatch(/^Plumbline run for 2031-05-14: slice top10, feature price_rel, check psi is 0\.52/);
  });
});
