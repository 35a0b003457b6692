/**
 * The shipped Grafana dashboard (deploy/grafana/plumbline.json) is well formed, uses only the
 * documented metrics, and deploy/METRICS.md links each of its panels to the metrics it reads.
 * Its queries are run against a real Prometheus in tests/e2e/prometheus-alerting.test.ts.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { dataPanels, loadDashboard, metricsIn, panelQueries, substitute, variableQuery } from '../support/dashboard.ts';
import { REPO_ROOT } from '../support/service.ts';

const dashboard = loadDashboard();
const metricsDoc = readFileSync(join(REPO_ROOT, 'deploy/METRICS.md'), 'utf8');
const documented = new Set([...metricsDoc.matchAll(/^\| `(plumbline_[a-z_]+)` \|/gm)].map((x) => x[1]!));

describe('deploy/grafana/plumbline.json', () => {
  it('takes its Prometheus data source from a variable, on every panel and query', () => {
    const ds = dashboard.templating.list.find((v) => v.name === 'datasource');
    expect(ds).toMatchObject({ type: 'datasource', query: 'prometheus' });
    for (const p of dataPanels(dashboard)) {
      expect(p.datasource, p.title).toEqual({ type: 'prometheus', uid: '${datasource}' });
      for (const t of p.targets ?? []) expect(t.datasource, `${p.title} ${t.refId}`).toEqual({ type: 'prometheus', uid: '${datasource}' });
    }
  });

  it('covers the overview of features by check, the PSI/KS history per feature and the monitor health', () => {
    const rows = dashboard.panels.filter((p) => p.type === 'row').map((p) => p.title);
    expect(rows).toEqual(['Overview: features by check', 'History of drift per feature', 'Monitor health']);
    const used = new Set(panelQueries(dashboard).flatMap((q) => metricsIn(q.expr)));
    for (const m of ['plumbline_feature_check_status', 'plumbline_feature_psi', 'plumbline_feature_ks_statistic', 'plumbline_last_success_timestamp_seconds', 'plumbline_source_up']) expect(used.has(m), m).toBe(true);
    // Panel ids are unique (Grafana keys panel state on them).
    const ids = dashboard.panels.flatMap((p) => [p.id, ...(p.panels ?? []).map((x) => x.id)]);
    expect(new Set(ids).size).toBe(ids.length);
  });

  it('queries only metrics deploy/METRICS.md documents', () => {
    expect(documented.size).toBeGreaterThan(30);
    const queries = [...panelQueries(dashboard).map((q) => q.expr), ...dashboard.templating.list.filter((v) => v.type === 'query').map((v) => substitute(variableQuery(typeof v.query === 'string' ? v.query : v.query.query).promql, dashboard))];
    for (const q of queries) expect(q, 'every template variable is substituted').not.toMatch(/\$/);
    for (const q of queries) {
      const ms = metricsIn(q);
      expect(ms.length, q).toBeGreaterThan(0);
      for (const m of ms) expect(documented.has(m), `${m} in ${q}`).toBe(true);
    }
  });

  it('is linked panel by panel to its metrics in deploy/METRICS.md', () => {
    for (const p of dataPanels(dashboard)) {
      const line = metricsDoc.split('\n').find((l) => l.startsWith('| ') && l.includes(`| ${p.title} |`));
      expect(line, p.title).toBeDefined();
      const listed = [...line!.matchAll(/`(plumbline_[a-z_]+)`/g)].map((m) => m[1]).sort();
      const used = [...new Set((p.targets ?? []).flatMap((t) => metricsIn(t.expr)))].sort();
      expect(listed, p.title).toEqual(used);
    }
  });
});
