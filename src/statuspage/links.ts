/** URLs of the status page. Every value in a URL is percent-encoded here and HTML-escaped by `html`. */

export function overviewHref(date: string | null, problemsOnly = false, slice = 'all'): string {
  const q = new URLSearchParams();
  if (date !== null) q.set('date', date);
  if (problemsOnly) q.set('problems', '1');
  if (slice !== 'all') q.set('slice', slice);
  const s = q.toString();
  return s === '' ? '/' : `/?${s}`;
}

export function featureHref(feature: string, date: string): string {
  return `/feature/${encodeURIComponent(feature)}?date=${encodeURIComponent(date)}`;
}

export function jsonHref(date: string): string {
  return `/api/v1/reports/${encodeURIComponent(date)}`;
}
