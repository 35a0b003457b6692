/**
 * The shipped Grafana dashboard (deploy/grafana/plumbline.json), read as its JSON model:
 * every panel's queries, and every templated variable's query as the PromQL Grafana would
 * send, with the template variables replaced by values that select everything.
 */
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { REPO_ROOT } from './service.ts';

export const DASHBOARD = join(REPO_ROOT, 'deploy/grafana/plumbline.json');

export interface DashboardPanel {
  id: number;
  type: string;
  title: string;
  datasource?: { type: string; uid: string };
  targets?: { refId: string; expr: string; datasource?: { type: string; uid: string } }[];
  panels?: DashboardPanel[];
}

export interface Dashboard {
  uid: string;
  title: string;
  panels: DashboardPanel[];
  templating: { list: { name: string; type: string; query: string | { query: string }; allValue?: string }[] };
}

export function loadDashboard(): Dashboard {
  return JSON.parse(readFileSync(DASHBOARD, 'utf8')) as Dashboard;
}

/** Every panel that is not a row, rows' nested panels included. */
export function dataPanels(d: Dashboard): DashboardPanel[] {
  return d.panels.flatMap((p) => (p.type === 'row' ? (p.panels ?? []) : [p]));
}

/** A query as Grafana would send it with every variable at "All" (its allValue), and interval macros filled in. */
export function substitute(expr: string, d: Dashboard): string {
  let out = expr;
  for (const v of d.templating.list) {
    if (v.type !== 'query') continue;
    const all = v.allValue ?? '.*';
    out = out.replaceAll(`\${${v.name}}`, all).replaceAll(`$${v.name}`, all);
  }
  return out.replaceAll('$__rate_interval', '5m').replaceAll('$__interval', '1m').replaceAll('$__range', '1d');
}

/** `label_values(selector, label)` as PromQL: the series whose label values Grafana lists. */
export function variableQuery(q: string): { promql: string; label: string } {
  const m = /^label_values\((.+),\s*([A-Za-z_][A-Za-z0-9_]*)\)$/.exec(q.trim());
  if (m === null) throw new Error(`not a label_values() query: ${q}`);
  return { promql: `group by (${m[2]}) (${m[1]})`, label: m[2]! };
}

/** Every panel query of the dashboard, variables substituted. */
export function panelQueries(d: Dashboard): { panel: string; refId: string; expr: string }[] {
  return dataPanels(d).flatMap((p) => (p.targets ?? []).map((t) => ({ panel: p.title, refId: t.refId, expr: substitute(t.expr, d) })));
}

/** Metric names a query uses (plumbline_*), in order of appearance. */
export function metricsIn(expr: string): string[] {
  return [...new Set(expr.match(/\bplumbline_[a-z0-9_]+/g) ?? [])];
}
