/**
 * The status page: server-rendered HTML of the stored reports (an overview per run and a
 * page per feature), plugged into the exporter's HTTP server as its `page` handler.
 */
export { createStatusPage, HISTORY_LIMIT, DATE_WINDOW_DAYS, type StatusPageDeps, type StatusPageHandler, type StatusPageHistoryQuery } from './page.ts';
export { CONTENT_SECURITY_POLICY, HTML_TYPE, type StatusPageResult } from './layout.ts';
export { LINE_CHART, BIN_CHART, niceCeiling, lineChart, binChart, orderBins, type ChartLine, type ChartPoint, type LineChartOptions } from './charts.ts';
export { STATUS_STYLE, NOT_APPLICABLE, CHECK_INFO, num, pct, type StatusStyle } from './format.ts';
export { html, escapeHtml, type SafeHtml } from './html.ts';
