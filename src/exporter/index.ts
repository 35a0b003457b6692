/**
 * The exporter unit: Prometheus metrics of the latest run and of the monitor's health, the
 * HTTP server (metrics, health, readiness, report API, manual runs, status page hook), the
 * direct Alertmanager push, and the alert catalogue the shipped rules follow.
 */
export { PlumblineMetrics, snapshotDateSeconds, type MonitorHealth, type RunOutcome, type ExpositionFormat, type PlumblineMetricsOptions } from './metrics.ts';
export { startHttpServer, preferredFormat, isSnapshotDate, hostAllowed, tokenMatches, type HttpDeps, type HttpServerOptions, type RunningHttpServer, type PageResult } from './http.ts';
export { pushAlerts, buildAlerts, alertingLabels, alertmanagerTarget, type AlertLabels, type PostableAlert, type PushOptions, type PushResult } from './alertmanager.ts';
export {
  alertNameFor,
  severityFor,
  runbookUrl,
  runbookAnchor,
  DEFAULT_RUNBOOK_URL,
  FINDING_ALERT_OF_KIND,
  SNAPSHOT_MISSING_ALERT,
  HEALTH_ALERTS,
  ALL_ALERTS,
  type Severity,
} from './alerts.ts';
