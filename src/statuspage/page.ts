/**
 * Routing of the status page: `/` (overview, `?date=YYYY-MM-DD`, `?problems=1`) and
 * `/feature/{name}` (`?date=`). Everything is rendered on the server from stored reports;
 * the pages run no script and load nothing from elsewhere.
 */
import { sliceOf, type Report } from '../report/index.ts';
import type { ChartPoint } from './charts.ts';
import { CHARTED_CHECKS, renderFeature, type ChartedCheck } from './feature.ts';
import { addDays, isCalendarDate } from './format.ts';
import { html } from './html.ts';
import { errorPage, shell, type StatusPageResult } from './layout.ts';
import { featureHref, overviewHref } from './links.ts';
import { featureRows, renderOverview } from './overview.ts';

export interface StatusPageHistoryQuery {
  feature: string | null;
  check: string;
  /** undefined: any rule; null: findings without a rule. */
  rule?: string | null;
  limit: number;
}

/** What the status page reads. The store (`Store`) provides all of it. */
export interface StatusPageDeps {
  latestReport(): Promise<Report | null>;
  reportFor(date: string): Promise<Report | null>;
  /** The last `limit` values of one finding, oldest first. */
  history(q: StatusPageHistoryQuery): Promise<{ runDate: string; value: number; status: string }[]>;
  /** Dates in [from, to] with a stored run, ascending. Without it the page shows no date list. */
  storedDates?(from: string, to: string): Promise<string[]>;
  /** Name of this deployment, shown in the top bar and the window title. */
  title?: string;
}

export type StatusPageHandler = (path: string, query: URLSearchParams) => Promise<StatusPageResult | null>;

/** Stored days charted on a feature page. */
export const HISTORY_LIMIT = 90;
/** Days either side of the shown date searched for stored runs to navigate to. */
export const DATE_WINDOW_DAYS = 120;

const FEATURE_PREFIX = '/feature/';

export function createStatusPage(deps: StatusPageDeps): StatusPageHandler {
  const siteTitle = deps.title === undefined || deps.title.trim() === '' ? undefined : deps.title.trim();

  async function nearbyDates(date: string): Promise<string[] | null> {
    if (deps.storedDates === undefined) return null;
    return deps.storedDates(addDays(date, -DATE_WINDOW_DAYS), addDays(date, DATE_WINDOW_DAYS));
  }

  async function missingDate(date: string): Promise<StatusPageResult> {
    const dates = await nearbyDates(date);
    const near = dates === null ? [] : [...dates].reverse().slice(0, 12);
    const list = near.length === 0 ? null : html`<br>Stored runs near it: ${near.map((d, i) => html`${i > 0 ? ', ' : ''}<a href="${overviewHref(d)}">${d}</a>`)}.`;
    return errorPage(siteTitle, 404, `No run stored for ${date}`, html`Plumbline has no successful run for ${date}. It may not have run yet, or the run failed.${list}`);
  }

  return async (path, query) => {
    // API paths belong to the HTTP server; its JSON 404 answers those.
    if (path.startsWith('/api/')) return null;

    const rawDate = query.get('date');
    if (rawDate !== null && rawDate !== '' && !isCalendarDate(rawDate)) {
      return errorPage(siteTitle, 400, 'Not a date', 'The date must be a calendar date written YYYY-MM-DD.');
    }
    const date = rawDate === null || rawDate === '' ? null : rawDate;
    const problemsOnly = query.get('problems') === '1' || query.get('problems') === 'true';

    if (path === '/' || path === '/index.html') {
      const report = date === null ? await deps.latestReport() : await deps.reportFor(date);
      if (report === null) {
        if (date !== null) return missingDate(date);
        return shell({
          heading: 'No run yet',
          siteTitle,
          body: html`<section class="card"><h1>No run stored yet</h1><p>Plumbline has not finished a run against this store. The first scheduled run, a manual run or a back-fill will show up here.</p></section>`,
        });
      }
      // A slice the run did not evaluate shows the whole day (the default view).
      const wanted = query.get('slice');
      const slice = wanted !== null && (report.slices ?? []).some((s) => s.slice === wanted) ? wanted : 'all';
      return renderOverview({ report, dates: await nearbyDates(report.runDate), problemsOnly, siteTitle, slice });
    }

    if (path.startsWith(FEATURE_PREFIX)) {
      let feature: string;
      try {
        feature = decodeURIComponent(path.slice(FEATURE_PREFIX.length));
      } catch {
        return errorPage(siteTitle, 404, 'Feature not found', 'The feature name in the address is not valid.');
      }
      const report = date === null ? await deps.latestReport() : await deps.reportFor(date);
      if (report === null) return date === null ? errorPage(siteTitle, 404, 'No run yet', 'Plumbline has not finished a run yet.') : missingDate(date);
      if (feature === '' || !report.findings.some((f) => f.feature === feature)) {
        const names = featureRows(report).map((r) => r.name);
        const list = names.length === 0 ? null : html`<br>Features in that run: ${names.map((n, i) => html`${i > 0 ? ', ' : ''}<a href="${featureHref(n, report.runDate)}">${n}</a>`)}.`;
        return errorPage(siteTitle, 404, 'Feature not found', html`The run of ${report.runDate} has no finding for a feature of that name.${list}`);
      }
      const wanted = CHARTED_CHECKS.map((check) => ({ check, finding: report.findings.find((f) => f.feature === feature && f.check === check && sliceOf(f) === 'all') })).filter(
        (x) => x.finding !== undefined,
      );
      const loaded = await Promise.all(
        wanted.map(async ({ check, finding }) => {
          const points = await deps.history({ feature, check, rule: check === 'rule_violation_ratio' ? (finding!.rule ?? null) : undefined, limit: HISTORY_LIMIT });
          return [check, points.map((p): ChartPoint => ({ date: p.runDate, value: p.value, status: p.status }))] as const;
        }),
      );
      const history: Partial<Record<ChartedCheck, ChartPoint[]>> = Object.fromEntries(loaded);
      return renderFeature({ report, feature, history, siteTitle });
    }

    return errorPage(siteTitle, 404, 'Page not found', 'There is no page at this address.');
  };
}
