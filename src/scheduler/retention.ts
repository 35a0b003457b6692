/**
 * The store's retention policy from the config: how long each kind of record is kept
 * (src/store/retention.ts does the deleting). Day profiles must outlive every baseline window
 * a run may still build: the target day's window reaches back lagDays + the window's span, and
 * a catch-up run of the oldest missed day catchUpMaxDays further.
 */
import type { Config } from '../config/index.ts';
import type { RetentionPolicy } from '../store/index.ts';

/** Days between the oldest baseline day and the run date, for a rolling window; 0 for a fixed one. */
function windowSpanDays(config: Config): number {
  const w = config.baseline.window;
  if (w.type === 'trailing') return w.days;
  if (w.type === 'same_weekday') return 7 * w.weeks;
  return 0;
}

/** The policy, or null when retention is turned off (`store.retention.enabled: false`). */
export function retentionPolicy(config: Config): RetentionPolicy | null {
  const r = config.store.retention;
  if (!r.enabled) return null;
  const s = config.schedule;
  const needed = windowSpanDays(config) + s.lagDays + s.catchUpMaxDays;
  const w = config.baseline.window;
  return {
    reportDays: r.reportDays,
    dayProfileDays: Math.max(r.dayProfileMinDays, needed),
    keepDayProfiles: w.type === 'fixed' ? { from: w.from, to: w.to } : null,
    baselinesKept: r.baselinesKept,
  };
}
