/**
 * Inline SVG charts: a line chart of one check over the stored days (with its threshold
 * lines) and paired horizontal bars comparing baseline and current bin shares.
 * Every chart carries role="img", a <title> and a <desc>, and its numbers are also
 * printed as text, so nothing depends on colour or on seeing the picture.
 */
import type { Status } from '../report/index.ts';
import { STATUS_STYLE, isStatus, pct } from './format.ts';
import { html, join, type SafeHtml } from './html.ts';

/**
 * Line chart geometry, in SVG user units (the viewBox). The plot area runs from
 * x = left to x = width - right and from y = top (the axis maximum) down to
 * y = height - bottom (zero). A value v is drawn at
 *
 *     y(v) = top + (height - top - bottom) * (1 - v / yMax)
 *
 * where yMax = niceCeiling(1.1 * max(all plotted values, all threshold lines)), so the
 * thresholds are always inside the plot with some headroom. Values below 0 are drawn at 0
 * (the charted checks are never negative). Points are spread evenly over the stored days
 * (one step per stored run, not per calendar day).
 */
export const LINE_CHART = { width: 560, height: 200, left: 56, right: 104, top: 14, bottom: 30 } as const;

/**
 * The smallest m * 10^k >= x with m in {1, 2, 2.5, 5}: a round axis maximum.
 * niceCeiling(0.341) = 0.5, niceCeiling(0.22) = 0.25, niceCeiling(1.3) = 2. Gives 1 for x <= 0.
 */
export function niceCeiling(x: number): number {
  if (!(x > 0) || !Number.isFinite(x)) return 1;
  const k = Math.floor(Math.log10(x));
  for (const m of [1, 2, 2.5, 5, 10]) {
    const candidate = Number((m * 10 ** k).toPrecision(12));
    if (candidate >= x * (1 - 1e-12)) return candidate;
  }
  return Number((10 ** (k + 1)).toPrecision(12));
}

/** Axis ticks from 0 to yMax at round steps (yMax comes from niceCeiling). */
function ticks(yMax: number): number[] {
  const mantissa = Number((yMax / 10 ** Math.floor(Math.log10(yMax))).toPrecision(6));
  const count = mantissa === 2 ? 4 : 5;
  return Array.from({ length: count + 1 }, (_, i) => Number(((yMax * i) / count).toPrecision(12)));
}

const r1 = (x: number): number => Math.round(x * 10) / 10;

export interface ChartPoint {
  date: string;
  value: number;
  status: string;
}

export interface ChartLine {
  /** warn and critical lines take the status colours; baseline is grey. */
  kind: 'warn' | 'critical' | 'baseline';
  value: number;
  label: string;
}

export interface LineChartOptions {
  /** Unique on the page; used for the aria ids. */
  id: string;
  /** Accessible name, e.g. "PSI of price_rel over 30 stored days". */
  title: string;
  points: readonly ChartPoint[];
  lines: readonly ChartLine[];
  format: (v: number) => string;
  /** The date the page is about; marked with a vertical line when it is not the newest point. */
  highlight?: string;
}

const LINE_STYLE: Record<ChartLine['kind'], { stroke: string; dash: string }> = {
  critical: { stroke: STATUS_STYLE.critical.mark, dash: '7 4' },
  warn: { stroke: STATUS_STYLE.warn.mark, dash: '3 3' },
  baseline: { stroke: '#7b8794', dash: '1 3' },
};

function marker(x: number, y: number, status: Status, label: string): SafeHtml {
  const fill = STATUS_STYLE[status].mark;
  const title = html`<title>${label}</title>`;
  if (status === 'critical') {
    return html`<rect class="mk mk-critical" x="${r1(x - 4.5)}" y="${r1(y - 4.5)}" width="9" height="9" fill="${fill}" stroke="#fff" stroke-width="1">${title}</rect>`;
  }
  if (status === 'warn') {
    const d = `M${r1(x)} ${r1(y - 6.5)}L${r1(x + 6)} ${r1(y + 4)}L${r1(x - 6)} ${r1(y + 4)}Z`;
    return html`<path class="mk mk-warn" d="${d}" fill="${fill}" stroke="#fff" stroke-width="1">${title}</path>`;
  }
  return html`<circle class="mk mk-ok" cx="${r1(x)}" cy="${r1(y)}" r="4.5" fill="${fill}" stroke="#fff" stroke-width="1">${title}</circle>`;
}

/** A line chart of one check over time, or a short note when there is no history. */
export function lineChart(o: LineChartOptions): SafeHtml {
  const g = LINE_CHART;
  const finite = o.points.filter((p) => Number.isFinite(p.value));
  if (finite.length === 0) return html`<p class="muted">No stored values to chart yet.</p>`;
  const plotW = g.width - g.left - g.right;
  const plotH = g.height - g.top - g.bottom;
  const yMax = niceCeiling(1.1 * Math.max(0, ...finite.map((p) => p.value), ...o.lines.map((l) => l.value)));
  const y = (v: number): number => g.top + plotH * (1 - Math.min(Math.max(v, 0), yMax) / yMax);
  const n = o.points.length;
  const x = (i: number): number => (n === 1 ? g.left + plotW / 2 : g.left + (plotW * i) / (n - 1));
  const right = g.left + plotW;
  const bottom = g.top + plotH;

  const grid = ticks(yMax).map(
    (t) => html`<line x1="${g.left}" x2="${right}" y1="${r1(y(t))}" y2="${r1(y(t))}" stroke="${t === 0 ? '#9aa5b1' : '#e3e7eb'}" stroke-width="1"/><text x="${g.left - 6}" y="${r1(y(t) + 3.5)}" text-anchor="end" class="tick">${o.format(t)}</text>`,
  );

  // Threshold labels sit right of the plot; keep them at least 12 units apart.
  const labelled = o.lines.map((l) => ({ ...l, y: y(l.value), ly: y(l.value) + 4 })).sort((a, b) => a.y - b.y);
  for (let i = 1; i < labelled.length; i++) labelled[i]!.ly = Math.max(labelled[i]!.ly, labelled[i - 1]!.ly + 12);
  const lines = labelled.map((l) => {
    const s = LINE_STYLE[l.kind];
    return html`<g class="thr thr-${l.kind}"><line class="thr-line" data-level="${l.kind}" data-value="${l.value}" x1="${g.left}" x2="${right}" y1="${r1(l.y)}" y2="${r1(l.y)}" stroke="${s.stroke}" stroke-width="1.5" stroke-dasharray="${s.dash}"/><text x="${right + 6}" y="${r1(l.ly)}" class="thr-label" fill="${l.kind === 'baseline' ? '#4b5563' : STATUS_STYLE[l.kind].text}">${l.label}</text></g>`;
  });

  // One polyline per run of finite values, so a NaN day shows as a gap.
  const segments: string[] = [];
  let current: string[] = [];
  o.points.forEach((p, i) => {
    if (Number.isFinite(p.value)) current.push(`${r1(x(i))},${r1(y(p.value))}`);
    else if (current.length > 0) {
      segments.push(current.join(' '));
      current = [];
    }
  });
  if (current.length > 0) segments.push(current.join(' '));
  const paths = segments.map((pts) => html`<polyline class="series" points="${pts}" fill="none" stroke="#34495e" stroke-width="1.75" stroke-linejoin="round"/>`);

  const markers = o.points.map((p, i) =>
    Number.isFinite(p.value) ? marker(x(i), y(p.value), isStatus(p.status) ? p.status : 'ok', `${p.date}: ${o.format(p.value)} (${p.status})`) : null,
  );

  const step = n <= 6 ? 1 : (n - 1) / 5;
  const tickIdx = [...new Set(Array.from({ length: Math.min(n, 6) }, (_, j) => Math.round(j * step)))];
  const xLabels = tickIdx.map((i) => html`<text x="${r1(x(i))}" y="${bottom + 18}" text-anchor="middle" class="tick">${o.points[i]!.date.slice(5)}</text>`);

  const hi = o.highlight === undefined ? -1 : o.points.findIndex((p) => p.date === o.highlight);
  const cursor = hi >= 0 && hi < n - 1 ? html`<line class="cursor" x1="${r1(x(hi))}" x2="${r1(x(hi))}" y1="${g.top}" y2="${bottom}" stroke="#6b7785" stroke-width="1" stroke-dasharray="2 2"/>` : null;

  const last = finite[finite.length - 1]!;
  const thresholdsText = o.lines.map((l) => `${l.label}`).join('; ');
  const desc = `${finite.length} value${finite.length === 1 ? '' : 's'} from ${o.points[0]!.date} to ${o.points[n - 1]!.date}; newest ${o.format(last.value)} (${last.status}) on ${last.date}.${thresholdsText === '' ? '' : ` Lines: ${thresholdsText}.`}`;
  return html`<svg class="chart line-chart" viewBox="0 0 ${g.width} ${g.height}" role="img" aria-labelledby="${o.id}-t ${o.id}-d" data-ymax="${yMax}"><title id="${o.id}-t">${o.title}</title><desc id="${o.id}-d">${desc}</desc>${grid}${cursor}${lines}${paths}${markers}${xLabels}</svg>`;
}

export interface Bin {
  bin: string;
  baselineShare: number;
  currentShare: number;
  contribution: number;
}

/**
 * Paired bars geometry: one row of `row` units per bin, the baseline bar above the current
 * bar, both scaled so the largest share among the shown bins spans `width - label - right`.
 */
export const BIN_CHART = { width: 560, label: 170, right: 64, top: 30, row: 40, bar: 13, bottom: 6 } as const;

const BASELINE_FILL = '#b8c2cc';
const CURRENT_FILL = '#33517a';

function shorten(label: string, max: number): string {
  return label.length <= max ? label : `${label.slice(0, max - 1)}…`;
}

/** Baseline vs current shares of the bins that moved most, on the same bins. */
export function binChart(id: string, title: string, bins: readonly Bin[]): SafeHtml {
  const g = BIN_CHART;
  if (bins.length === 0) return html`<p class="muted">No bin evidence for this date.</p>`;
  const height = g.top + bins.length * g.row + g.bottom;
  const barMax = g.width - g.label - g.right;
  const maxShare = Math.max(...bins.flatMap((b) => [b.baselineShare, b.currentShare]).filter(Number.isFinite), 0) || 1;
  const len = (s: number): number => (Number.isFinite(s) ? Math.max(0, (barMax * s) / maxShare) : 0);
  const rows = bins.map((b, i) => {
    const y0 = g.top + i * g.row + 6;
    const yb = y0;
    const yc = y0 + g.bar + 2;
    return html`<g class="bin"><text x="${g.label - 8}" y="${r1(y0 + g.bar + 5)}" text-anchor="end" class="bin-label">${shorten(b.bin, 24)}<title>${b.bin}</title></text><rect class="bar-baseline" x="${g.label}" y="${yb}" width="${r1(len(b.baselineShare))}" height="${g.bar}" fill="${BASELINE_FILL}"><title>${b.bin}: baseline ${pct(b.baselineShare)}</title></rect><text x="${r1(g.label + len(b.baselineShare) + 4)}" y="${yb + 10}" class="bar-value">${pct(b.baselineShare)}</text><rect class="bar-current" x="${g.label}" y="${yc}" width="${r1(len(b.currentShare))}" height="${g.bar}" fill="${CURRENT_FILL}"><title>${b.bin}: current ${pct(b.currentShare)}</title></rect><text x="${r1(g.label + len(b.currentShare) + 4)}" y="${yc + 10}" class="bar-value">${pct(b.currentShare)}</text></g>`;
  });
  const legend = html`<g class="legend"><rect x="${g.label}" y="6" width="12" height="12" fill="${BASELINE_FILL}"/><text x="${g.label + 17}" y="16">baseline</text><rect x="${g.label + 90}" y="6" width="12" height="12" fill="${CURRENT_FILL}"/><text x="${g.label + 107}" y="16">current</text></g>`;
  const desc = bins.map((b) => `${b.bin}: baseline ${pct(b.baselineShare)}, current ${pct(b.currentShare)}`).join('; ');
  return html`<svg class="chart bin-chart" viewBox="0 0 ${g.width} ${height}" role="img" aria-labelledby="${id}-t ${id}-d"><title id="${id}-t">${title}</title><desc id="${id}-d">${desc}</desc>${legend}${join(rows)}</svg>`;
}

/**
 * Bins in their natural order when every label is an interval, "missing", or a list size
 * (as the checks write them); otherwise (categories) in the order given, largest move first.
 */
export function orderBins<T extends { bin: string }>(bins: readonly T[]): T[] {
  const keyed = bins.map((b) => ({ b, key: binKey(b.bin) }));
  if (keyed.some((k) => k.key === null)) return [...bins];
  return keyed.sort((a, b) => a.key![0] - b.key![0] || a.key![1] - b.key![1]).map((k) => k.b);
}

const NUMBER = String.raw`[-+]?(?:inf|\d+(?:\.\d+)?(?:e[-+]?\d+)?)`;
const INTERVAL = new RegExp(String.raw`^[\(\[](${NUMBER}), (${NUMBER})([\)\]])$`, 'i');

function toNumber(s: string): number {
  const t = s.toLowerCase();
  if (t === '-inf') return -Infinity;
  if (t === '+inf' || t === 'inf') return Infinity;
  return Number(s);
}

/** Sort key: upper bound, then open (0) before closed (1). */
function binKey(label: string): [number, number] | null {
  if (label === 'missing' || label === 'null') return [Infinity, 2];
  const m = INTERVAL.exec(label);
  if (m !== null) return [toNumber(m[2]!), m[3] === ']' ? 1 : 0];
  const size = /^size (>= )?(\d+)$/.exec(label);
  if (size !== null) return [Number(size[2]), size[1] === undefined ? 0 : 1];
  return null;
}
