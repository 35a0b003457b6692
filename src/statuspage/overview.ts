/**
 * The overview of one run: verdict, a feature-by-check grid, the whole-day checks, and
 * navigation between stored dates.
 */
import { DATASET_CHECKS, FEATURE_CHECKS, STATUS_LEVEL, sliceOf, worstStatus, type Finding, type Report, type Status } from '../report/index.ts';
import { NOT_APPLICABLE, STATUS_STYLE, checkInfo, describeThresholds, formatValue, isStatus, num, pct, timestamp } from './format.ts';
import { html, type SafeHtml } from './html.ts';
import { badge, shell, type StatusPageResult } from './layout.ts';
import { featureHref, jsonHref, overviewHref } from './links.ts';

export interface OverviewInput {
  report: Report;
  /** Stored dates around the report's date, ascending; null when the store cannot list them. */
  dates: string[] | null;
  problemsOnly: boolean;
  siteTitle: string | undefined;
  /** The slice whose feature findings the grid shows: 'all' (the whole day, default) or one of report.slices. */
  slice?: string;
}

/** A finding's status, read defensively (reports come from storage and may be older). */
export function statusOf(f: Pick<Finding, 'status'>): Status {
  return isStatus(f.status) ? f.status : 'ok';
}

export function isAlerting(f: Finding): boolean {
  return f.alert?.alerting === true;
}

interface FeatureRow {
  name: string;
  findings: Finding[];
  worst: Status;
  alerting: number;
}

/** Features in report order, each with its findings on one slice (default: the whole day). */
export function featureRows(report: Report, slice = 'all'): FeatureRow[] {
  const byName = new Map<string, Finding[]>();
  for (const f of report.findings) {
    if (f.feature === null || f.feature === undefined || sliceOf(f) !== slice) continue;
    const list = byName.get(f.feature);
    if (list === undefined) byName.set(f.feature, [f]);
    else list.push(f);
  }
  return [...byName].map(([name, findings]) => ({
    name,
    findings,
    worst: worstStatus(findings.map(statusOf)),
    alerting: findings.filter(isAlerting).length,
  }));
}

/** Columns: the feature checks this report has, in the contract's order, then any unknown ones. */
function columns(rows: FeatureRow[]): string[] {
  const present = new Set(rows.flatMap((r) => r.findings.map((f) => f.check as string)));
  const known: readonly string[] = FEATURE_CHECKS;
  return [...known.filter((c) => present.has(c)), ...[...present].filter((c) => !known.includes(c))];
}

export function statusText(status: Status): string {
  const s = STATUS_STYLE[status];
  return `${s.symbol} ${s.label}`;
}

export function alertTag(f: Finding): SafeHtml | null {
  if (!isAlerting(f)) return null;
  const since = f.alert.since === null ? '' : ` since ${f.alert.since}`;
  return html`<span class="alert" title="${`alerting${since} (${f.alert.consecutiveRuns} run${f.alert.consecutiveRuns === 1 ? '' : 's'} in a row)`}">alerting</span>`;
}

/** A learned threshold, next to the value it judged (checks/adaptive.ts). */
function learnedTag(f: Finding): SafeHtml | null {
  const t = f.thresholds;
  if (t?.type !== 'above' || t.learned !== true) return null;
  return html`<span class="r" title="${`thresholds learned from the baseline’s day-to-day variation: warn at ${formatValue(f.check, t.warn)}, critical at ${formatValue(f.check, t.critical)}`}">learned warn ${formatValue(f.check, t.warn)}</span>`;
}

function gridCell(findings: Finding[]): SafeHtml {
  if (findings.length === 0) {
    return html`<td class="c na"><span aria-hidden="true">${NOT_APPLICABLE.symbol}</span><span class="vh">${NOT_APPLICABLE.label}</span></td>`;
  }
  const sorted = [...findings].sort((a, b) => STATUS_LEVEL[statusOf(b)] - STATUS_LEVEL[statusOf(a)]);
  const worst = statusOf(sorted[0]!);
  const parts = sorted.map(
    (f) =>
      html`<span class="st">${statusText(statusOf(f))}</span><span class="v">${formatValue(f.check, f.value)}</span>${learnedTag(f)}${f.rule === null || f.rule === undefined ? null : html`<span class="r">${f.rule}</span>`}${alertTag(f) === null ? null : html` ${alertTag(f)}`}`,
  );
  const title = sorted
    .filter((f) => statusOf(f) !== 'ok')
    .map((f) => (sliceOf(f) === 'all' ? f.summary : `[${sliceOf(f)}] ${f.summary}`))
    .join('\n');
  return html`<td class="c s-${worst}"${title === '' ? null : html` title="${title}"`}>${parts}</td>`;
}

/** Links to the whole day and each slice of the run, each with its worst status; null without slices. */
function sliceSelector(report: Report, slice: string, problemsOnly: boolean): SafeHtml | null {
  const slices = report.slices ?? [];
  if (slices.length === 0) return null;
  const worst = (name: string): Status => worstStatus(report.findings.filter((f) => f.feature !== null && sliceOf(f) === name).map(statusOf));
  const link = (name: string, label: string, detail: string): SafeHtml => {
    const w = worst(name);
    return html`<a href="${overviewHref(report.runDate, problemsOnly, name)}" class="s-${w}" title="${detail}"${name === slice ? html` aria-current="page"` : null}>${STATUS_STYLE[w].symbol} ${label}</a>`;
  };
  return html`<div class="seg slices" role="group" aria-label="Which rows to show">${link('all', 'Whole day', `${num(report.current.rows)} rows`)}${slices.map((s) => link(s.slice, s.slice, `${num(s.rows)} rows in ${num(s.lists)} lists; baseline ${s.baselineDays} days`))}</div>`;
}

function featureGrid(report: Report, rows: FeatureRow[], problemsOnly: boolean, slice = 'all'): SafeHtml {
  const cols = columns(rows);
  const shown = (problemsOnly ? rows.filter((r) => r.worst !== 'ok') : rows)
    .map((r, i) => ({ r, i }))
    // Worst first, report order within a status.
    .sort((a, b) => STATUS_LEVEL[b.r.worst] - STATUS_LEVEL[a.r.worst] || b.r.alerting - a.r.alerting || a.i - b.i)
    .map((x) => x.r);
  const problems = rows.filter((r) => r.worst !== 'ok').length;
  const filter = html`<div class="seg" role="group" aria-label="Which features to show"><a href="${overviewHref(report.runDate, false, slice)}"${problemsOnly ? null : html` aria-current="page"`}>All features (${rows.length})</a><a href="${overviewHref(report.runDate, true, slice)}"${problemsOnly ? html` aria-current="page"` : null}>Only problems (${problems})</a></div>`;
  const hidden = rows.length - shown.length;
  const note = problemsOnly && hidden > 0 ? html`<span class="muted small">${hidden} feature${hidden === 1 ? '' : 's'} with every check ok hidden</span>` : null;
  if (rows.length === 0) return html`<section class="card" aria-labelledby="features-h"><h2 id="features-h">Features</h2>${sliceSelector(report, slice, problemsOnly)}<p class="muted">This run has no feature findings${slice === 'all' ? '' : ` in slice ${slice}`}.</p></section>`;
  const head = html`<tr><th scope="col">Feature</th><th scope="col">Worst</th>${cols.map((c) => html`<th scope="col" title="${`${c}: ${checkInfo(c).about}`}">${checkInfo(c).label}</th>`)}</tr>`;
  const body = shown.map((r) => {
    const byCheck = new Map<string, Finding[]>();
    for (const f of r.findings) byCheck.set(f.check, [...(byCheck.get(f.check) ?? []), f]);
    return html`<tr><th scope="row"><a href="${featureHref(r.name, report.runDate)}">${r.name}</a></th><td class="c s-${r.worst}"><span class="st">${statusText(r.worst)}</span>${r.alerting > 0 ? html`<span class="v">${r.alerting} alerting</span>` : null}</td>${cols.map((c) => gridCell(byCheck.get(c) ?? []))}</tr>`;
  });
  const table =
    shown.length === 0
      ? html`<p class="muted">No feature has a problem on ${report.runDate}.</p>`
      : html`<div class="scroll"><table class="grid"><caption class="vh">Status of each check for each feature on ${report.runDate}</caption><thead>${head}</thead><tbody>${body}</tbody></table></div>`;
  const legend = html`<ul class="legend" aria-label="Legend">${(['critical', 'warn', 'ok'] as const).map((s) => html`<li><span class="pill s-${s}">${statusText(s)}</span></li>`)}<li><span class="na">${NOT_APPLICABLE.symbol}</span> ${NOT_APPLICABLE.label}</li><li><span class="alert">alerting</span> held long enough to page</li><li>Percentages are shares of rows or lists; thresholds of ratio checks apply to the rise over baseline.</li></ul>`;
  const selector = sliceSelector(report, slice, problemsOnly);
  const heading = slice === 'all' ? (selector === null ? 'Features' : 'Features: whole day') : `Features: slice ${slice}`;
  return html`<section class="card" aria-labelledby="features-h"><div class="row"><h2 id="features-h" style="margin:0">${heading}</h2>${filter}${note}</div>${selector}${table}${legend}</section>`;
}

/** How a dataset finding's evidence.baseline / evidence.current read. */
export function sideFormat(check: string): (x: number | null | undefined) => string {
  const unit = checkInfo(check).unit;
  if (unit === 'share' || check === 'label_positive_ratio' || check === 'positive_position_psi') return pct;
  return num;
}

export function evidenceNumber(x: unknown): number | null {
  return typeof x === 'number' ? x : null;
}

function datasetSection(report: Report): SafeHtml {
  const found = report.findings.filter((f) => f.feature === null || f.feature === undefined);
  const known: readonly string[] = DATASET_CHECKS;
  found.sort((a, b) => (known.indexOf(a.check) + 1 || 99) - (known.indexOf(b.check) + 1 || 99));
  const b = report.baseline;
  const c = report.current;
  const counts = html`<ul class="facts"><li><b>${num(c.rows)}</b><span>rows (baseline ${num(b.meanRowsPerDay)} a day)</span></li><li><b>${num(c.lists)}</b><span>lists (baseline ${num(b.meanListsPerDay)} a day)</span></li><li><b>${c.lists > 0 ? num(c.rows / c.lists) : 'n/a'}</b><span>items per list</span></li>${c.sampled ? html`<li><b>${num(c.evaluatedRows)}</b><span>rows evaluated (whole lists sampled)</span></li>` : null}</ul>`;
  const rows = found.map((f) => {
    const side = sideFormat(f.check);
    const bins = Array.isArray(f.evidence?.bins) ? f.evidence.bins : [];
    const binsTable =
      bins.length === 0
        ? null
        : html`<details><summary>${f.check === 'positive_position_psi' ? 'Ranks whose share of positives moved most' : 'List sizes that moved most'}</summary><table><thead><tr><th scope="col">${f.check === 'positive_position_psi' ? 'Served rank' : 'Size'}</th><th scope="col" class="num">Baseline</th><th scope="col" class="num">Current</th><th scope="col" class="num">Contribution</th></tr></thead><tbody>${bins.map((x) => html`<tr><th scope="row">${x.bin}</th><td class="num">${pct(x.baselineShare)}</td><td class="num">${pct(x.currentShare)}</td><td class="num">${num(x.contribution)}</td></tr>`)}</tbody></table></details>`;
    return html`<tr><th scope="row">${checkInfo(f.check).label}<br><code class="muted">${f.check}</code></th><td class="c s-${statusOf(f)}"><span class="st">${statusText(statusOf(f))}</span>${alertTag(f) === null ? null : html` ${alertTag(f)}`}</td><td class="num">${formatValue(f.check, f.value)}</td><td class="num">${side(evidenceNumber(f.evidence?.baseline))}</td><td class="num">${side(evidenceNumber(f.evidence?.current))}</td><td class="small">${describeThresholds(f.check, f.thresholds)}</td><td class="small">${f.summary}${binsTable}</td></tr>`;
  });
  const table =
    rows.length === 0
      ? html`<p class="muted">No whole-day findings in this run.</p>`
      : html`<div class="scroll"><table class="dataset"><thead><tr><th scope="col">Check</th><th scope="col">Status</th><th scope="col" class="num">Value</th><th scope="col" class="num">Baseline</th><th scope="col" class="num">Current</th><th scope="col">Judged by</th><th scope="col">Summary</th></tr></thead><tbody>${rows}</tbody></table></div>`;
  return html`<section class="card" aria-labelledby="dataset-h"><h2 id="dataset-h">Whole day: rows, lists and list shape</h2>${counts}<div style="height:14px"></div>${table}</section>`;
}

function dateNav(report: Report, dates: string[] | null, problemsOnly: boolean): SafeHtml {
  const d = report.runDate;
  const all = dates === null ? [] : dates.includes(d) ? dates : [...dates, d].sort();
  const i = all.indexOf(d);
  const older = i > 0 ? all[i - 1]! : null;
  const newer = i >= 0 && i < all.length - 1 ? all[i + 1]! : null;
  const near = i < 0 ? [] : all.slice(Math.max(0, i - 8), i + 4).reverse();
  const chips = near.map((x) => (x === d ? html`<li><span aria-current="page">${x}</span></li>` : html`<li><a href="${overviewHref(x, problemsOnly)}">${x}</a></li>`));
  const steps = html`${older === null ? null : html`<a href="${overviewHref(older, problemsOnly)}" rel="prev">‹ ${older}</a>`}${newer === null ? null : html`<a href="${overviewHref(newer, problemsOnly)}" rel="next">${newer} ›</a>`}<a href="${overviewHref(null, problemsOnly)}">latest</a>`;
  const picker = html`<form class="pick" method="get" action="/"><label for="date-pick">Go to</label><input id="date-pick" type="date" name="date" value="${d}" required>${problemsOnly ? html`<input type="hidden" name="problems" value="1">` : null}<button type="submit">Show</button></form>`;
  const list = chips.length === 0 ? html`<p class="muted small" style="margin:0">The list of stored dates is not available.</p>` : html`<ul class="dates" aria-label="Stored dates near ${d}">${chips}</ul>`;
  return html`<nav class="card" aria-labelledby="dates-h"><div class="row"><h2 id="dates-h" style="margin:0">Stored runs</h2>${steps}<span class="spacer"></span>${picker}</div>${list}</nav>`;
}

export function renderOverview(input: OverviewInput): StatusPageResult {
  const { report, problemsOnly } = input;
  const status = isStatus(report.status) ? report.status : worstStatus(report.findings.map(statusOf));
  const slice = input.slice ?? 'all';
  const rows = featureRows(report, slice);
  const critical = rows.filter((r) => r.worst === 'critical').length;
  const warn = rows.filter((r) => r.worst === 'warn').length;
  const alerting = report.findings.filter(isAlerting).length;
  const b = report.baseline;
  const window =
    b?.window === undefined ? 'n/a' : b.source?.type === 'relation' ? `relation ${b.source.table}, ${b.window.from} → ${b.window.to}` : `${b.window.type} ${b.window.from} → ${b.window.to}`;
  const head = html`<section class="card" aria-labelledby="run-h"><h1 id="run-h">Run of ${report.runDate} ${badge(status)}</h1><p class="muted">Finished ${timestamp(report.finishedAt)} · baseline ${window} (${b?.days?.length ?? 0} days with data) · <a href="${jsonHref(report.runDate)}">JSON report</a></p><ul class="facts"><li><b>${rows.length}</b><span>features checked</span></li><li><b>${critical}</b><span>${STATUS_STYLE.critical.symbol} critical features</span></li><li><b>${warn}</b><span>${STATUS_STYLE.warn.symbol} warn features</span></li><li><b>${alerting}</b><span>findings alerting</span></li><li><b>${report.findings.length}</b><span>checks run</span></li></ul></section>`;
  const body = html`${head}${dateNav(report, input.dates, problemsOnly)}${featureGrid(report, rows, problemsOnly, slice)}${datasetSection(report)}`;
  return shell({
    heading: `${problemsOnly ? 'Problems' : 'Overview'} ${report.runDate}${slice === 'all' ? '' : ` (${slice})`}: ${statusText(status)}`,
    siteTitle: input.siteTitle,
    body,
    home: overviewHref(report.runDate),
    json: jsonHref(report.runDate),
  });
}
