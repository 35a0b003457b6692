/** Snapshot dates are `YYYY-MM-DD` strings end to end; arithmetic happens in UTC. */
import type { BaselineWindow } from '../config/index.ts';

const DAY_MS = 86_400_000;

export function isIsoDate(s: string): boolean {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(s)) return false;
  const t = Date.parse(`${s}T00:00:00Z`);
  return !Number.isNaN(t) && new Date(t).toISOString().slice(0, 10) === s;
}

export function addDays(date: string, days: number): string {
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
  return `${get('year')}-${get('month')}-${get('day')}`;
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
