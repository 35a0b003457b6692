/**
 * The shipped Prometheus files against Prometheus' own tools (Debian's `prometheus` package,
 * 2.42): `promtool check rules`, `promtool test rules`, `promtool check config`, `promtool check
 * metrics` on the body of a real scrape of the HTTP server, and a real Prometheus server that
 * scrapes Plumbline (negotiating OpenMetrics as it does by default) and evaluates the rules.
 *
 * Missing tools fail the test in CI (CI=true installs them) and skip it elsewhere.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { parse } from 'yaml';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ALL_ALERTS, PlumblineMetrics, startHttpServer, type ExpositionFormat, type HttpDeps, type RunningHttpServer } from '../../src/exporter/index.ts';
import { findPrometheus, startPrometheus, type ChildServer } from '../support/prometheus.ts';
import { findExecutable, until } from '../support/tools.ts';
import { sampleReport } from '../unit/exporter/fixtures.ts';

const ROOT = fileURLToPath(new URL('../../', import.meta.url));
const PROM_DIR = join(ROOT, 'deploy/prometheus');
const RULES = join(PROM_DIR, 'plumbline.rules.yml');
const RULE_TESTS = join(PROM_DIR, 'plumbline.rules.test.yml');
const IN_CI = process.env.CI === 'true';

const PROMTOOL = findExecutable('promtool');
const PROMETHEUS = findPrometheus();

/** describe() that skips with a reason outside CI and fails inside CI when the tool is missing. */
function withTool(tool: string | undefined, name: string, title: string, body: (bin: string) => void): void {
  if (tool !== undefined) {
    describe(title, () => body(tool));
  } else if (IN_CI) {
    describe(title, () => {
      it(`needs ${name}`, () => {
        throw new Error(`${name} is not installed; CI must install Debian's prometheus package (apt-get install prometheus)`);
      });
    });
  } else {
    describe.skip(`${title} (skipped: ${name} is not installed; apt-get install prometheus)`, () => {
      it('needs the tool', () => undefined);
    });
  }
}

function run(bin: string, args: string[], input?: string): { status: number | null; out: string } {
  const r = spawnSync(bin, args, { cwd: ROOT, input, encoding: 'utf8', timeout: 60_000 });
  return { status: r.status, out: `${r.stdout ?? ''}${r.stderr ?? ''}` };
}

interface RuleFile {
  groups: { name: string; rules: { alert?: string; record?: string }[] }[];
}
const ruleFile = parse(readFileSync(RULES, 'utf8')) as RuleFile;
const ruleCount = ruleFile.groups.reduce((n, g) => n + g.rules.length, 0);
const alertNames = new Set(ruleFile.groups.flatMap((g) => g.rules.map((r) => r.alert ?? '')));

describe('the rules test file covers every alert', () => {
  interface TestFile {
    rule_files: string[];
    tests: { alert_rule_test?: { alertname: string; exp_alerts?: unknown[] }[] }[];
  }
  const tests = parse(readFileSync(RULE_TESTS, 'utf8')) as TestFile;

  it('loads the shipped rule file', () => {
    expect(tests.rule_files).toEqual(['plumbline.rules.yml']);
    expect(ruleCount).toBeGreaterThan(0);
    expect([...alertNames].sort()).toEqual([...ALL_ALERTS].sort());
  });

  it.each([...ALL_ALERTS])('%s has a firing case and a quiet case', (alert) => {
    const cases = tests.tests.flatMap((t) => t.alert_rule_test ?? []).filter((c) => c.alertname === alert);
    expect(cases.some((c) => (c.exp_alerts ?? []).length > 0)).toBe(true);
    expect(cases.some((c) => (c.exp_alerts ?? []).length === 0)).toBe(true);
  });
});

withTool(PROMTOOL, 'promtool', 'promtool on the shipped files', (promtool) => {
  it('check rules: the rule file loads and every rule is found', () => {
    const r = run(promtool, ['check', 'rules', RULES]);
    expect(r.out).toContain('SUCCESS');
    expect(r.status).toBe(0);
    const found = /SUCCESS: (\d+) rules found/.exec(r.out);
    expect(found, r.out).not.toBeNull();
    const n = Number(found![1]);
    expect(n).toBeGreaterThan(0);
    expect(n).toBe(ruleCount);
  });

  it('test rules: every unit test passes', () => {
    const r = run(promtool, ['test', 'rules', RULE_TESTS]);
    expect(r.out).toContain('SUCCESS');
    expect(r.out).not.toContain('FAILED');
    expect(r.status).toBe(0);
  });

  it('check config: the example configuration loads the rules, and the scrape snippet is valid', () => {
    const example = run(promtool, ['check', 'config', join(PROM_DIR, 'prometheus.example.yml')]);
    expect(example.status, example.out).toBe(0);
    expect(example.out).toContain('SUCCESS: 1 rule files found');
    expect(example.out).toContain(`SUCCESS: ${ruleCount} rules found`);
    const scrape = run(promtool, ['check', 'config', join(PROM_DIR, 'scrape.yml')]);
    expect(scrape.status, scrape.out).toBe(0);
  });

  describe('check metrics on a real scrape', () => {
    let server: RunningHttpServer;
    beforeAll(async () => {
      const metrics = new PlumblineMetrics({ version: '0.1.0' });
      metrics.showReport(sampleReport());
      metrics.restoreHealth({ lastSuccessAt: '2031-05-14T06:31:00Z', lastRunAt: '2031-05-14T06:31:00Z', lastDurationSeconds: 60, lastOutcome: 'success', successes: 10, failures: 2, sourceUp: true, storeUp: true, leader: true });
      metrics.recordRun({ ok: false, startedAt: '2031-05-15T06:30:00Z', finishedAt: '2031-05-15T06:30:04Z' });
      server = await startHttpServer(depsFor(metrics), { host: '127.0.0.1', port: 0 });
    });
    afterAll(async () => {
      await server?.close();
    });

    it('finds no problem in the text exposition', async () => {
      const res = await fetch(`${server.url}/metrics`);
      expect(res.status).toBe(200);
      const body = await res.text();
      expect(body).toContain('plumbline_feature_check_alerting{feature="price_rel",check="psi"} 2');
      expect(body).toContain('process_cpu_seconds_total');
      const r = run(promtool, ['check', 'metrics'], body);
      expect(r.out).toBe('');
      expect(r.status).toBe(0);
    });
  });
});

function depsFor(metrics: PlumblineMetrics): HttpDeps {
  return {
    metrics,
    latestReport: async () => sampleReport(),
    reportFor: async () => null,
    readiness: async () => ({ ready: true, reasons: [] }),
  };
}

withTool(PROMETHEUS, 'prometheus', 'a real Prometheus scraping Plumbline and evaluating the rules', (prometheusBin) => {
  let server: RunningHttpServer;
  let prom: ChildServer | undefined;
  let promUrl: string;
  const formats: ExpositionFormat[] = [];

  beforeAll(async () => {
    const metrics = new PlumblineMetrics({ version: '0.1.0' });
    metrics.showReport(sampleReport());
    metrics.restoreHealth({ lastSuccessAt: '2031-05-14T06:31:00Z', lastRunAt: '2031-05-14T06:31:00Z', lastDurationSeconds: 60, lastOutcome: 'success', successes: 10, failures: 2, sourceUp: true, storeUp: true, leader: true });
    metrics.recordRun({ ok: true, startedAt: '2031-05-15T06:30:00Z', finishedAt: '2031-05-15T06:31:00Z' });
    const render = metrics.render.bind(metrics);
    metrics.render = async (format) => {
      formats.push(format ?? 'prometheus');
      return render(format);
    };
    server = await startHttpServer(depsFor(metrics), { host: '127.0.0.1', port: 0 });

    const config = {
      global: { scrape_interval: '1s', evaluation_interval: '1s' },
      rule_files: [RULES],
      scrape_configs: [{ job_name: 'plumbline', static_configs: [{ targets: [`127.0.0.1:${server.port}`] }] }],
    };
    prom = await startPrometheus(prometheusBin, config);
    promUrl = prom.url;
  });

  afterAll(async () => {
    await prom?.stop();
    await server?.close();
  });

  async function query(q: string): Promise<{ metric: Record<string, string>; value: [number, string] }[]> {
    const res = await fetch(`${promUrl}/api/v1/query?query=${encodeURIComponent(q)}`);
    const json = (await res.json()) as { status: string; data: { result: { metric: Record<string, string>; value: [number, string] }[] } };
    if (json.status !== 'success') throw new Error(`query failed: ${JSON.stringify(json)}`);
    return json.data.result;
  }

  it('ingests the counters under their _total names over OpenMetrics', async () => {
    const runs = await until('plumbline_runs_total to be scraped', 60_000, async () => {
      const r = await query('plumbline_runs_total');
      return r.length > 0 ? r : undefined;
    });
    expect(runs.map((s) => [s.metric.job, s.value[1]])).toEqual([['plumbline', '13']]);
    expect(await query('{__name__=~"plumbline_runs|plumbline_runs_total_total|plumbline_run_failures"}')).toEqual([]);
    expect((await query('plumbline_run_failures_total'))[0]?.value[1]).toBe('2');
    expect((await query('plumbline_feature_check_value{feature="price_rel",check="psi"}'))[0]?.value[1]).toBe('0.31');
    expect((await query('plumbline_feature_check_alerting{feature="price_rel",check="rule_violation_ratio",rule="zscore"}'))[0]?.value[1]).toBe('2');
    expect((await query('process_cpu_seconds_total{job="plumbline"}')).length).toBe(1);
    // Prometheus asked for OpenMetrics, and got it.
    expect(formats.length).toBeGreaterThan(0);
    expect(formats.every((f) => f === 'openmetrics'), `${formats.join(',')} / ${prom!.output()}`).toBe(true);
  });

  it('still serves clean text to other scrapers after Prometheus took OpenMetrics', async (ctx) => {
    if (PROMTOOL === undefined) ctx.skip();
    await until('an OpenMetrics scrape', 60_000, async () => (formats.includes('openmetrics') ? true : undefined));
    const body = await (await fetch(`${server.url}/metrics`)).text();
    expect(body).toContain('# TYPE plumbline_runs_total counter\nplumbline_runs_total 13\n');
    const r = run(PROMTOOL!, ['check', 'metrics'], body);
    expect(r.out).toBe('');
    expect(r.status).toBe(0);
  });

  it('evaluates every shipped rule without error against the real series', async () => {
    interface RulesResponse {
      data: { groups: { rules: { name: string; health: string; lastError?: string; lastEvaluation: string }[] }[] };
    }
    const rules = await until('every rule to be evaluated', 60_000, async () => {
      const json = (await (await fetch(`${promUrl}/api/v1/rules`)).json()) as RulesResponse;
      const all = json.data.groups.flatMap((g) => g.rules);
      return all.length > 0 && all.every((r) => r.health !== 'unknown' && !r.lastEvaluation.startsWith('0001')) ? all : undefined;
    });
    expect(rules).toHaveLength(ruleCount);
    expect(rules.filter((r) => r.health !== 'ok').map((r) => `${r.name}: ${r.lastError}`)).toEqual([]);
  });

  it('turns the alerting findings into pending alerts with the rule labels', async () => {
    interface AlertsResponse {
      data: { alerts: { labels: Record<string, string>; state: string; value: string }[] };
    }
    const alerts = await until('the finding alerts to be pending', 60_000, async () => {
      const json = (await (await fetch(`${promUrl}/api/v1/alerts`)).json()) as AlertsResponse;
      const mine = json.data.alerts.filter((a) => a.labels.job === 'plumbline');
      return mine.length >= 5 ? mine : undefined;
    });
    const seen = alerts.map((a) => `${a.labels.alertname} ${a.labels.severity} ${a.labels.feature ?? '-'} ${a.labels.check} ${a.labels.rule ?? '-'} ${a.state}`).sort();
    // The alerting findings of fixtures.ts, each still inside its `for:` window.
    expect(seen).toEqual([
      'PlumblineDatasetBroken page - duplicate_item_ratio - pending',
      'PlumblineFeatureDrifted page price_rel ks - pending',
      'PlumblineFeatureDrifted page price_rel psi - pending',
      'PlumblineWithinListRuleBroken page price_rel rule_violation_ratio zscore pending',
      'PlumblineWithinListRuleBroken ticket seller_score flat_list_ratio - pending',
    ]);
  });
});
