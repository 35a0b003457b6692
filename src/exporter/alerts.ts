/**
 * The alert catalogue shared by the shipped Prometheus rules (deploy/prometheus/plumbline.rules.yml)
 * and the direct Alertmanager push (alertmanager.ts). Both must produce the same `alertname`,
 * `severity` and runbook link for a finding, so the mapping lives here once; the deploy tests
 * check that the rule file agrees with it.
 */
import { CHECK_KIND, type CheckKind, type CheckName, type Status } from '../report/index.ts';

/** Alerts raised from findings, by kind of check. `snapshot_missing` has its own alert. */
export const FINDING_ALERT_OF_KIND: Readonly<Record<CheckKind, string>> = {
  drift: 'PlumblineFeatureDrifted',
  quality: 'PlumblineFeatureDataBroken',
  within_list: 'PlumblineWithinListRuleBroken',
  dataset: 'PlumblineDatasetBroken',
  ranking: 'PlumblineRankingAssociationChanged',
  outcome: 'PlumblineRankingOutcomeChanged',
};

export const SNAPSHOT_MISSING_ALERT = 'PlumblineSnapshotMissing';

/** Any per-feature finding of a slice of the day (config `slices`), whatever its check. */
export const SLICE_ALERT = 'PlumblineSliceBroken';

/** Alerts on the monitor's own health and on upstream freshness (rules only, never pushed). */
export const HEALTH_ALERTS = [
  'PlumblineSnapshotStale',
  'PlumblineNoRecentSuccess',
  'PlumblineMonitorAbsent',
  'PlumblineRunsFailing',
  'PlumblineSourceDown',
  'PlumblineStoreDown',
] as const;

/** Every alert name the shipped rules define. */
export const ALL_ALERTS: readonly string[] = [...Object.values(FINDING_ALERT_OF_KIND), SLICE_ALERT, SNAPSHOT_MISSING_ALERT, ...HEALTH_ALERTS];

/** The alert a finding of this check (on this slice; default the whole day) raises when it is alerting. */
export function alertNameFor(check: CheckName, slice = 'all'): string {
  if (slice !== 'all') return SLICE_ALERT;
  if (check === 'snapshot_missing') return SNAPSHOT_MISSING_ALERT;
  return FINDING_ALERT_OF_KIND[CHECK_KIND[check]];
}

/** `page` wakes someone up (critical); `ticket` is handled in working hours (warn). */
export type Severity = 'page' | 'ticket';

export function severityFor(level: Exclude<Status, 'ok'>): Severity {
  return level === 'critical' ? 'page' : 'ticket';
}

/**
 * Where deploy/RUNBOOK.md is published. A placeholder on a reserved example domain: replace
 * it in the rule file (and pass `runbookBaseUrl` to pushAlerts) with the address where you
 * host the runbook.
 */
export const DEFAULT_RUNBOOK_URL = 'https://runbooks.example.org/plumbline/RUNBOOK.md';

/** The runbook's section anchor for an alert: its heading is the alert name, so the anchor is it in lower case. */
export function runbookAnchor(alertname: string): string {
  return alertname.toLowerCase();
}

export function runbookUrl(alertname: string, base: string = DEFAULT_RUNBOOK_URL): string {
  return `${base}#${runbookAnchor(alertname)}`;
}
