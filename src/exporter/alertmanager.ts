/**
 * Direct push of alerting findings to Alertmanager (API v2, `POST /api/v2/alerts`), for
 * setups that want alerts without waiting for Prometheus rule evaluation, or have no
 * Prometheus. Labels match the shipped rules (alertname, severity, feature, check, rule), so
 * Alertmanager routes, groups and silences both the same way. Use one path or the other for
 * the same findings: alerts from Prometheus also carry its target labels (job, instance), so
 * Alertmanager would count them as different alerts.
 *
 * Alertmanager treats an alert as resolved once its `endsAt` has passed. Every push sets
 * `endsAt` a little past the next expected push, so an alert that is not sent again resolves
 * by itself (e.g. the monitor died); a finding that stopped alerting since the previous push
 * is sent once more with `endsAt` = now, which resolves it at once.
 *
 * Never throws: network errors, timeouts and non-2xx answers come back in the result, so a
 * push can never fail a run.
 *
 * Credentials: `user:password@` in the URL is sent as HTTP basic auth (fetch refuses URLs
 * with credentials), a bearer token (PLUMBLINE_ALERTMANAGER_TOKEN) as `Authorization: Bearer`.
 * Neither ever appears in an error message: URLs are shown by origin, other text is redacted.
 */
import { redactUrls } from '../config/index.ts';
import { sliceOf, type Finding, type Report } from '../report/index.ts';
import { alertNameFor, DEFAULT_RUNBOOK_URL, runbookUrl, severityFor } from './alerts.ts';

/** The identifying labels of one pushed alert. */
export interface AlertLabels {
  alertname: string;
  severity: 'page' | 'ticket';
  check: string;
  feature?: string;
  rule?: string;
  /** Slice of the day (config `slices`), on PlumblineSliceBroken only. */
  slice?: string;
  [name: string]: string | undefined;
}

/** One alert as Alertmanager's API v2 (`postableAlert`) takes it. */
export interface PostableAlert {
  labels: Record<string, string>;
  annotations: Record<string, string>;
  startsAt: string;
  endsAt: string;
  generatorURL?: string;
}

export interface PushOptions {
  /**
   * What the previous push sent (its result's `active`), or the previous report. Alerts in it
   * that are not alerting now are sent as resolved. Omit on the first push.
   */
  previous?: readonly AlertLabels[] | Report | null;
  /** Seconds until the next push is expected (a daily run: 86400). Default 86400. */
  resendEverySeconds?: number;
  /** Extra seconds on top of resendEverySeconds before an alert that was not resent resolves. Default 3600. */
  graceSeconds?: number;
  /** Request timeout. Default 10 s. */
  timeoutMs?: number;
  /** Where the runbook is published (its section anchors are appended). */
  runbookBaseUrl?: string;
  /** Link back to Plumbline (e.g. the status page of the run). */
  generatorUrl?: string;
  /** The clock, for tests. */
  now?: () => Date;
  /** Sent as `Authorization: Bearer <token>` (wins over user:password in the URL). */
  bearerToken?: string;
}

/**
 * The request target without userinfo, and the Authorization header that carries it instead
 * (basic auth from `user:password@`, or the bearer token).
 */
export function alertmanagerTarget(baseUrl: string, bearerToken?: string): { url: URL; headers: Record<string, string> } {
  const url = new URL(`${baseUrl.replace(/\/+$/, '')}/api/v2/alerts`);
  if (url.protocol !== 'http:' && url.protocol !== 'https:') throw new Error(`unsupported scheme ${url.protocol}`);
  const headers: Record<string, string> = {};
  if (url.username !== '' || url.password !== '') {
    const user = decodeURIComponent(url.username);
    const password = decodeURIComponent(url.password);
    headers['authorization'] = `Basic ${Buffer.from(`${user}:${password}`, 'utf8').toString('base64')}`;
    url.username = '';
    url.password = '';
  }
  if (bearerToken !== undefined) headers['authorization'] = `Bearer ${bearerToken}`;
  return { url, headers };
}

export interface PushResult {
  ok: boolean;
  /** HTTP status of Alertmanager's answer, when there was one. */
  status?: number;
  /** Why the push failed, in one line. */
  error?: string;
  /** Alerts sent as firing. */
  firing: number;
  /** Alerts sent as resolved. */
  resolved: number;
  /**
   * Labels Alertmanager may hold as firing after this push: pass them as `previous` next time,
   * whether this push worked or not (after a failure they include the previous ones, so their
   * resolutions are not lost).
   */
  active: AlertLabels[];
}

function labelsOf(f: Finding): AlertLabels | null {
  if (!f.alert?.alerting) return null;
  const level = f.alert.level ?? (f.status === 'critical' ? 'critical' : 'warn');
  const slice = sliceOf(f);
  const labels: AlertLabels = { alertname: alertNameFor(f.check, slice), severity: severityFor(level), check: f.check };
  if (slice !== 'all') labels.slice = slice;
  if (f.feature !== null) labels.feature = f.feature;
  if (f.rule !== null && f.rule !== undefined) labels.rule = f.rule;
  return labels;
}

/** The labels of the findings of a report that are alerting now. */
export function alertingLabels(report: Report): AlertLabels[] {
  const out: AlertLabels[] = [];
  for (const f of report.findings) {
    const l = labelsOf(f);
    if (l !== null) out.push(l);
  }
  return out;
}

/** Alertmanager identifies an alert by its full label set. */
function keyOf(labels: AlertLabels): string {
  return JSON.stringify(
    Object.keys(labels)
      .filter((k) => labels[k] !== undefined)
      .sort()
      .map((k) => [k, labels[k]]),
  );
}

function plainLabels(labels: AlertLabels): Record<string, string> {
  const out: Record<string, string> = {};
  for (const [k, v] of Object.entries(labels)) if (v !== undefined) out[k] = v;
  return out;
}

function formatValue(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  return Number(v.toPrecision(4)).toString();
}

function annotationsFor(f: Finding, labels: AlertLabels, runbookBase: string, runDate: string): Record<string, string> {
  const where = labels.slice !== undefined ? `slice ${labels.slice}, ` : '';
  const what = f.feature === null ? `dataset check ${f.check}` : `${where}feature ${f.feature}, check ${f.check}${labels.rule ? ` (rule ${labels.rule})` : ''}`;
  const level = labels.severity === 'page' ? 'critical' : 'warn';
  const summary =
    labels.alertname === 'PlumblineSnapshotMissing'
      ? `Snapshot ${runDate} is missing`
      : f.feature === null
        ? `Ranking dataset broken: ${f.check}`
        : `Ranking feature ${f.feature}${labels.slice !== undefined ? ` in slice ${labels.slice}` : ''}: ${f.check} alerting at ${level}`;
  const description =
    `Plumbline run for ${runDate}: ${what} is ${formatValue(f.value)}, alerting at ${level} ` +
    `after ${f.alert.consecutiveRuns} consecutive run(s) since ${f.alert.since ?? runDate}. ${f.summary}`.trim();
  return { summary, description, runbook_url: runbookUrl(labels.alertname, runbookBase) };
}

/** `since` is a snapshot date (YYYY-MM-DD) or a timestamp; Alertmanager wants RFC 3339. */
function startOf(since: string | null, fallback: Date): string {
  if (since === null) return fallback.toISOString();
  const iso = /^\d{4}-\d{2}-\d{2}$/.test(since) ? `${since}T00:00:00Z` : since;
  const ms = Date.parse(iso);
  return Number.isFinite(ms) && ms <= fallback.getTime() ? new Date(ms).toISOString() : fallback.toISOString();
}

/** Builds the request body: firing alerts of `report`, then resolutions of those in `previous` that stopped. */
export function buildAlerts(
  report: Report,
  opts: PushOptions = {},
): { alerts: PostableAlert[]; active: AlertLabels[]; resolved: number; previous: AlertLabels[] } {
  const now = (opts.now ?? (() => new Date()))();
  const resend = opts.resendEverySeconds ?? 86_400;
  const grace = opts.graceSeconds ?? 3_600;
  const endsAt = new Date(now.getTime() + (resend + grace) * 1000).toISOString();
  const base = opts.runbookBaseUrl ?? DEFAULT_RUNBOOK_URL;
  const alerts: PostableAlert[] = [];
  const active: AlertLabels[] = [];
  const activeKeys = new Set<string>();
  for (const f of report.findings) {
    const labels = labelsOf(f);
    if (labels === null) continue;
    const key = keyOf(labels);
    if (activeKeys.has(key)) continue;
    activeKeys.add(key);
    active.push(labels);
    const alert: PostableAlert = {
      labels: plainLabels(labels),
      annotations: annotationsFor(f, labels, base, report.runDate),
      startsAt: startOf(f.alert.since, now),
      endsAt,
    };
    if (opts.generatorUrl !== undefined) alert.generatorURL = opts.generatorUrl;
    alerts.push(alert);
  }
  const previous = opts.previous ?? null;
  const before = previous === null ? [] : Array.isArray(previous) ? (previous as readonly AlertLabels[]) : alertingLabels(previous as Report);
  let resolved = 0;
  const nowIso = now.toISOString();
  const resolvedKeys = new Set<string>();
  for (const labels of before) {
    const key = keyOf(labels);
    if (activeKeys.has(key) || resolvedKeys.has(key)) continue;
    resolvedKeys.add(key);
    resolved += 1;
    const alert: PostableAlert = {
      labels: plainLabels(labels),
      annotations: {
        summary: `Resolved: ${labels.alertname} ${labels.feature ?? ''} ${labels.check}`.replace(/\s+/g, ' ').trim(),
        description: `Plumbline run for ${report.runDate}: no longer alerting.`,
        runbook_url: runbookUrl(labels.alertname, base),
      },
      startsAt: nowIso,
      endsAt: nowIso,
    };
    if (opts.generatorUrl !== undefined) alert.generatorURL = opts.generatorUrl;
    alerts.push(alert);
  }
  return { alerts, active, resolved, previous: [...before] };
}

/**
 * POSTs the report's alerting findings (and the resolutions of those that stopped) to
 * `${baseUrl}/api/v2/alerts`. Sends nothing when there is nothing to say.
 */
export async function pushAlerts(baseUrl: string, report: Report, opts: PushOptions = {}): Promise<PushResult> {
  let built: ReturnType<typeof buildAlerts>;
  try {
    built = buildAlerts(report, opts);
  } catch (err) {
    return { ok: false, error: `cannot build the alerts: ${(err as Error).message}`, firing: 0, resolved: 0, active: [] };
  }
  // After a failure Alertmanager may still hold what it held before, plus what we tried to send.
  const stillHeld = (): AlertLabels[] => {
    const seen = new Set(built.active.map(keyOf));
    return [...built.active, ...built.previous.filter((l) => !seen.has(keyOf(l)))];
  };
  let url: URL;
  let auth: Record<string, string>;
  try {
    ({ url, headers: auth } = alertmanagerTarget(baseUrl, opts.bearerToken));
  } catch (err) {
    return { ok: false, error: `bad Alertmanager URL: ${redactUrls((err as Error).message)}`, firing: 0, resolved: 0, active: stillHeld() };
  }
  const firing = built.alerts.length - built.resolved;
  if (built.alerts.length === 0) return { ok: true, firing: 0, resolved: 0, active: [] };
  try {
    const res = await fetch(url, {
      method: 'POST',
      headers: { 'content-type': 'application/json', ...auth },
      body: JSON.stringify(built.alerts),
      signal: AbortSignal.timeout(opts.timeoutMs ?? 10_000),
    });
    const text = await res.text().catch(() => '');
    if (!res.ok) {
      const detail = redactUrls(text.replace(/\s+/g, ' ').trim().slice(0, 200));
      return { ok: false, status: res.status, error: `Alertmanager answered ${res.status}${detail ? `: ${detail}` : ''}`, firing: 0, resolved: 0, active: stillHeld() };
    }
    return { ok: true, status: res.status, firing, resolved: built.resolved, active: built.active };
  } catch (err) {
    const e = err as Error & { cause?: { code?: string } };
    const why = e.name === 'TimeoutError' ? `no answer within ${opts.timeoutMs ?? 10_000} ms` : redactUrls(e.cause?.code ?? e.message);
    return { ok: false, error: `cannot reach Alertmanager at ${url.origin}: ${why}`, firing: 0, resolved: 0, active: stillHeld() };
  }
}
