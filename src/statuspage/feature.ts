/**
 * The page of one feature on one date: where its distribution moved, how its drift and
 * within-list checks went over the stored days, and every finding with its evidence.
 */
import { STATUS_LEVEL, sliceOf, worstStatus, type AppliedThresholds, type BinEvidence, type Finding, type Report } from '../report/index.ts';
import { binChart, lineChart, orderBins, type ChartLine, type ChartPoint } from './charts.ts';
import { checkInfo, describeThresholds, evidenceLabel, formatUnit, formatValue, num, pct } from './format.ts';
import { html, type SafeHtml } from './html.ts';
import { badge, shell, type StatusPageResult } from './layout.ts';
import { jsonHref, overviewHref } from './links.ts';
import { alertTag, evidenceNumber, isAlerting, sideFormat, statusOf, statusText } from './overview.ts';

/** The checks charted over time on a feature page, in page order. */
export const CHARTED_CHECKS = ['psi', 'ks', 'rule_violation_ratio', 'flat_list_ratio'] as const;
export type ChartedCheck = (typeof CHARTED_CHECKS)[number];

export interface FeaturePageInput {
  report: Report;
  feature: string;
  /** Stored values per charted check (oldest first); absent when the feature has no such finding. */
  history: Partial<Record<ChartedCheck, ChartPoint[]>>;
  siteTitle: string | undefined;
}

function findingOf(findings: Finding[], check: string): Finding | undefined {
  return findings.find((f) => f.check === check);
}

function bins(f: Finding | undefined): BinEvidence[] {
  const b = f?.evidence?.bins;
  return Array.isArray(b) ? b.filter((x) => x !== null && typeof x === 'object' && typeof x.bin === 'string') : [];
}

/**
 * Threshold lines for a chart of values. Checks judged on the rise over baseline get their
 * lines at baseline + threshold (the baseline of this date), and a baseline line.
 */
export function thresholdLines(f: Finding): ChartLine[] {
  const t: AppliedThresholds | undefined = f.thresholds;
  if (t === undefined || t.type !== 'above') return [];
  const info = checkInfo(f.check);
  const base = info.increase ? (evidenceNumber(f.evidence?.baseline) ?? 0) : 0;
  const fmt = (x: number): string => formatUnit(info.unit, x);
  const lines: ChartLine[] = [
    { kind: 'warn', value: base + t.warn, label: `warn ${fmt(base + t.warn)}` },
    { kind: 'critical', value: base + t.critical, label: `critical ${fmt(base + t.critical)}` },
  ];
  if (info.increase && base > 0) lines.push({ kind: 'baseline', value: base, label: `baseline ${fmt(base)}` });
  return lines;
}

function valuesTable(check: string, points: ChartPoint[]): SafeHtml {
  const rows = [...points].reverse().map((p) => html`<tr><th scope="row">${p.date}</th><td class="num">${formatValue(check, p.value)}</td><td>${statusText(statusOf({ status: p.status as Finding['status'] }))}</td></tr>`);
  return html`<details><summary>Values as a table</summary><table><thead><tr><th scope="col">Date</th><th scope="col" class="num">Value</th><th scope="col">Status</th></tr></thead><tbody>${rows}</tbody></table></details>`;
}

function chartFigure(report: Report, feature: string, f: Finding, points: ChartPoint[], id: string): SafeHtml {
  const info = checkInfo(f.check);
  const name = f.rule === null || f.rule === undefined ? info.label : `${info.label} (${f.rule})`;
  const lines = thresholdLines(f);
  const chart = lineChart({
    id,
    title: `${name} of ${feature} over ${points.length} stored day${points.length === 1 ? '' : 's'}`,
    points,
    lines,
    format: (v) => formatUnit(info.unit, v),
    highlight: report.runDate,
  });
  const judged = describeThresholds(f.check, f.thresholds);
  return html`<figure><h3>${name}: ${formatValue(f.check, f.value)} ${badge(statusOf(f))}</h3>${chart}<figcaption>${points.length} stored day${points.length === 1 ? '' : 's'}${points.length > 0 ? ` (${points[0]!.date} → ${points[points.length - 1]!.date})` : ''}. Lines show the thresholds as applied on ${report.runDate}: ${judged}${lines.some((l) => l.kind === 'baseline') ? '; the dotted line is that day’s baseline' : ''}. Marker shapes: ● ok, ▲ warn, ■ critical.</figcaption>${points.length > 0 ? valuesTable(f.check, points) : null}</figure>`;
}

function distributionSection(report: Report, feature: string, psi: Finding | undefined): SafeHtml {
  const h = html`<h2 id="dist-h">Baseline vs current, on the baseline’s bins</h2>`;
  if (psi === undefined) return html`<section class="card" aria-labelledby="dist-h">${h}<p class="muted">No PSI finding for this feature on ${report.runDate} (no baseline yet, or the check does not apply).</p></section>`;
  const moved = bins(psi);
  if (moved.length === 0) return html`<section class="card" aria-labelledby="dist-h">${h}<p class="muted">The PSI finding of ${report.runDate} keeps no bin evidence.</p></section>`;
  const binsUsed = typeof psi.evidence.binsUsed === 'number' ? psi.evidence.binsUsed : null;
  const ofHow = binsUsed === null ? '' : ` of the ${binsUsed} bins in use`;
  const ordered = orderBins(moved);
  const chart = binChart('h-psi', `Bins of ${feature} that moved most: baseline and current shares`, ordered);
  const table = html`<table><caption class="vh">Bins that moved most, largest contribution to PSI first</caption><thead><tr><th scope="col">Bin</th><th scope="col" class="num">Baseline</th><th scope="col" class="num">Current</th><th scope="col" class="num">Change</th><th scope="col" class="num">PSI term</th></tr></thead><tbody>${moved.map((b) => {
    const change = (b.currentShare - b.baselineShare) * 100;
    return html`<tr><th scope="row"><code>${b.bin}</code></th><td class="num">${pct(b.baselineShare)}</td><td class="num">${pct(b.currentShare)}</td><td class="num">${change >= 0 ? '+' : '−'}${num(Math.abs(change))} pts</td><td class="num">${num(b.contribution)}</td></tr>`;
  })}</tbody><tfoot><tr><th scope="row">PSI over all bins</th><td colspan="3"></td><td class="num"><b>${num(psi.value)}</b></td></tr></tfoot></table>`;
  return html`<section class="card" aria-labelledby="dist-h">${h}<p class="muted small">Showing the ${moved.length} bins that moved most${ofHow}: the report keeps only those. Shares are of all rows in each period; the PSI term of a bin is (current − baseline) × ln(current / baseline).</p><div class="twocol"><div><h3>Bins that moved most</h3>${chart}</div><div><h3>Bins that moved most, by PSI term</h3>${table}</div></div></section>`;
}

/** How a threshold was learned (checks/adaptive.ts), in words. */
function learnedText(f: Finding, v: Record<string, unknown>): string {
  const n = (k: string): string => (typeof v[k] === 'number' ? formatValue(f.check, v[k] as number) : 'n/a');
  const fixed = (v['fixed'] ?? {}) as { warn?: number; critical?: number };
  return `${String(v['statistic'] ?? f.check)} of each of ${String(v['days'])} baseline days against the rest of the window; its ${String(v['quantile'])} quantile ${n('quantileValue')} × ${String(v['margin'])} (never below ${n('floor')}) gives warn, × ${String(v['criticalMultiple'])} more critical; the fixed thresholds would be ${formatValue(f.check, fixed.warn)} / ${formatValue(f.check, fixed.critical)}`;
}

function evidenceValue(f: Finding, key: string, value: unknown): SafeHtml | string {
  if (value === null || value === undefined) return 'n/a';
  if (key === 'learnedThreshold' && typeof value === 'object' && !Array.isArray(value)) return learnedText(f, value as Record<string, unknown>);
  if (key === 'alertRule') return value === 'immediate' ? 'first run: far beyond the critical threshold' : 'consecutive runs at its level';
  if (typeof value === 'number') return key === 'baseline' || key === 'current' ? sideFormat(f.check)(value) : key === 'tolerance' ? String(value) : num(value);
  if (typeof value === 'boolean') return value ? 'yes' : 'no';
  if (typeof value === 'string') return value;
  if (Array.isArray(value) && value.every((v) => typeof v !== 'object' || v === null)) {
    return value.length === 0 ? 'none' : html`${value.map((v, i) => html`${i > 0 ? ', ' : ''}<code>${String(v)}</code>`)}`;
  }
  return html`<code>${JSON.stringify(value)}</code>`;
}

const EVIDENCE_ORDER = ['baseline', 'current', 'n', 'm', 'pValue', 'adjustedPValue', 'pValueMethod', 'noiseFloor', 'binsUsed'];

function evidenceEntries(f: Finding): SafeHtml {
  // jsonb does not keep key order; show the usual keys first, the rest by name.
  const rank = (k: string): number => (EVIDENCE_ORDER.indexOf(k) + 1 || EVIDENCE_ORDER.length + 1);
  const entries = Object.entries(f.evidence ?? {})
    .filter(([k]) => k !== 'bins')
    .sort(([a], [b]) => rank(a) - rank(b) || a.localeCompare(b));
  const b = bins(f);
  const binsPart =
    b.length === 0
      ? null
      : f.check === 'psi'
        ? html`<dt>bins that moved most</dt><dd>${b.length}, charted above</dd>`
        : html`<dt>bins that moved most</dt><dd>${b.map((x, i) => html`${i > 0 ? '; ' : ''}<code>${x.bin}</code> ${pct(x.baselineShare)} → ${pct(x.currentShare)}`)}</dd>`;
  return html`${entries.map(([k, v]) => html`<dt>${evidenceLabel(k)}</dt><dd>${evidenceValue(f, k, v)}</dd>`)}${binsPart}`;
}

function alertText(f: Finding): string {
  const a = f.alert;
  if (a === undefined) return 'no alert state recorded';
  if (a.alerting) {
    const why = a.rule === 'immediate' ? '; on its first run, far beyond the critical threshold' : '';
    return `alerting at ${a.level ?? 'warn'}${a.since === null ? '' : ` since ${a.since}`}; ${a.consecutiveRuns} run${a.consecutiveRuns === 1 ? '' : 's'} in a row at warn or worse, ${a.consecutiveCritical} at critical${why}`;
  }
  if (a.consecutiveRuns > 0) return `not alerting yet; ${a.consecutiveRuns} run${a.consecutiveRuns === 1 ? '' : 's'} in a row at warn or worse`;
  return 'not alerting';
}

function findingCard(f: Finding): SafeHtml {
  const info = checkInfo(f.check);
  const status = statusOf(f);
  const score = info.increase && Number.isFinite(f.score) && f.score !== f.value ? html`<dt>rise over baseline</dt><dd>${formatUnit(info.unit, f.score)}</dd>` : null;
  const slice = sliceOf(f);
  return html`<article class="finding f-${status}"><h3>${slice === 'all' ? null : html`<span class="slice">${slice}</span> `}${info.label}${f.rule === null || f.rule === undefined ? null : html` <span class="muted">(rule ${f.rule})</span>`} <code class="muted">${f.check}</code> ${badge(status)}${alertTag(f)}</h3><p class="summary">${f.summary}</p>${info.about === '' ? null : html`<p class="muted small">${info.about}.</p>`}<dl class="ev"><dt>value</dt><dd>${formatValue(f.check, f.value)}</dd>${score}<dt>judged by</dt><dd>${describeThresholds(f.check, f.thresholds)}</dd><dt>alert</dt><dd>${alertText(f)}</dd>${evidenceEntries(f)}</dl></article>`;
}

export function renderFeature(input: FeaturePageInput): StatusPageResult {
  const { report, feature } = input;
  // The whole day's findings; those of the slices (config `slices`) are listed at the end, each titled with its slice.
  const everyFinding = report.findings.filter((f) => f.feature === feature);
  const findings = everyFinding.filter((f) => sliceOf(f) === 'all');
  const worst = worstStatus(findings.map(statusOf));
  const alerting = findings.filter(isAlerting).length;
  const date = report.runDate;

  const glance = [...findings]
    .sort((a, b) => STATUS_LEVEL[statusOf(b)] - STATUS_LEVEL[statusOf(a)])
    .map((f) => html`<li><span class="pill s-${statusOf(f)}">${statusText(statusOf(f))}</span> ${checkInfo(f.check).label} ${formatValue(f.check, f.value)}</li>`);

  const drift = (['psi', 'ks'] as const).flatMap((c) => {
    const f = findingOf(findings, c);
    return f === undefined ? [] : [chartFigure(report, feature, f, input.history[c] ?? [], `c-${c}`)];
  });
  const within = (['rule_violation_ratio', 'flat_list_ratio'] as const).flatMap((c) => {
    const f = findingOf(findings, c);
    return f === undefined ? [] : [chartFigure(report, feature, f, input.history[c] ?? [], `c-${c}`)];
  });

  const head = html`<p class="crumbs"><a href="${overviewHref(date)}">Overview of ${date}</a> › ${feature}</p><section class="card" aria-labelledby="feature-h"><h1 id="feature-h"><span>${feature}</span> ${badge(worst)}${alerting > 0 ? html`<span class="alert" style="font-size:.8rem">${alerting} alerting</span>` : null}</h1><p class="muted">${findings.length} checks on ${date} · <a href="${overviewHref(date)}">back to the overview</a> · <a href="${jsonHref(date)}">JSON report of ${date}</a></p><ul class="legend" aria-label="Checks at a glance">${glance}</ul></section>`;
  const driftSection = html`<section class="card" aria-labelledby="drift-h"><h2 id="drift-h">Drift over the stored days</h2>${drift.length === 0 ? html`<p class="muted">No PSI or KS finding for this feature on ${date}.</p>` : html`<div class="charts">${drift}</div>`}</section>`;
  const withinSection =
    within.length === 0
      ? null
      : html`<section class="card" aria-labelledby="within-h"><h2 id="within-h">Inside each list</h2><p class="muted small">The ranker sees a feature next to the other items of the same list: a rule broken inside lists, or lists where the feature does not vary, can hide behind a healthy day-wide histogram.</p><div class="charts">${within}</div></section>`;
  const all = html`<section class="card" aria-labelledby="all-h"><h2 id="all-h">Every finding of ${feature} on ${date}</h2><div class="findings">${[...findings]
    .sort((a, b) => STATUS_LEVEL[statusOf(b)] - STATUS_LEVEL[statusOf(a)])
    .map(findingCard)}</div></section>`;
  const sliced = everyFinding.filter((f) => sliceOf(f) !== 'all' && statusOf(f) !== 'ok');
  const slices =
    everyFinding.length === findings.length
      ? null
      : html`<section class="card" aria-labelledby="slices-h"><h2 id="slices-h">Slices of ${date}: findings not ok</h2>${
          sliced.length === 0
            ? html`<p class="muted">Every check of ${feature} is ok in every slice.</p>`
            : html`<div class="findings">${[...sliced].sort((a, b) => STATUS_LEVEL[statusOf(b)] - STATUS_LEVEL[statusOf(a)]).map(findingCard)}</div>`
        }</section>`;

  return shell({
    heading: `${feature} on ${date}: ${statusText(worst)}`,
    siteTitle: input.siteTitle,
    body: html`${head}${distributionSection(report, feature, findingOf(findings, 'psi'))}${driftSection}${withinSection}${all}${slices}`,
    home: overviewHref(date),
    json: jsonHref(date),
  });
}
