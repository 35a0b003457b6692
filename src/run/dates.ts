/** Snapshot dates are `YYYY-MM-DD` strings end to end; arithmetic happens in UTC. */
import type { BaselineWindow } from '../config/index.ts';

const DAY_MS = 86_400_000;

export function isIsoDate(s: string): boolean {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) return false;
  const t = Date.parse(`${s}T00:00:00Z`);
  return !Number.isNaN(t) && new Date(t).toISOString().slice(0, 10) === s;
}

/**
 * `date` plus a whole number of days, in UTC (no daylight-saving steps). Throws a RangeError
 * for a date that does not exist: Date.parse rolls 2025-02-30 over to March 2, which would
 * silently evaluate the wrong day.
 */
export function addDays(date: string, days: number): string {
  if (!isIsoDate(date)) throw new RangeError(`addDays requires a date written YYYY-MM-DD; got ${JSON.stringify(date)}`);
  if (!Number.isSafeInteger(days)) throw new RangeError(`addDays requires a whole number of days; got ${String(days)}`);
  return new Date(Date.parse(`${date}T00:00:00Z`) + days * DAY_MS).toISOString().slice(0, 10);
}

/** Dates from `from` to `to`, both included. */
export function dateRange(from: string, to: string): string[] {
  const out: string[] = [];
  for (let d = from; d <= to; d = addDays(d, 1)) out.push(d);
  return out;
}

/** The calendar date of an instant in an IANA time zone. */
export function dateInZone(instant: Date, timeZone: string): string {
  const parts = new Intl.DateTimeFormat('en-CA', { timeZone, year: 'numeric', month: '2-digit', day: '2-digit' }).formatToParts(instant);
  const get = (t: string): string => parts.find((p) => p.type === t)?.value ?? '';
  return `${get('year').padStart(4, '0')}-${get('month')}-${get('day')}`;
}

/** The baseline dates for a run date, oldest first. */
export function baselineDates(window: BaselineWindow, runDate: string): string[] {
  switch (window.type) {
    case 'trailing':
      return dateRange(addDays(runDate, -window.days), addDays(runDate, -1));
    case 'same_weekday':
      return Array.from({ length: window.weeks }, (_, i) => addDays(runDate, -7 * (window.weeks - i)));
    case 'fixed':
      return dateRange(window.from, window.to);
  }
}
