/**
 * Consecutive-run hysteresis, with an exception for big breaks. A finding alerts at a level
 * once it has been at that level or worse for N consecutive runs (N by kind of check, config
 * alerting.consecutiveRuns), and clears on the first run below it. A critical finding far
 * beyond its critical threshold (alerting.immediateMultiple times it), or a raised flag,
 * alerts on its first run: waiting a day is right for a borderline warning and wrong for a
 * category that appeared overnight with a quarter of the rows. The state is derived from the
 * previous evaluated date's findings, which live in the store, so restarts, re-runs and
 * back-fills agree.
 */
import type { Config } from '../config/index.ts';
import { CHECK_KIND, type AlertRule, type Finding } from '../report/index.ts';

export function findingKey(f: Pick<Finding, 'feature' | 'check' | 'rule' | 'slice'>): string {
  return `${f.feature ?? ''}\u0000${f.check}\u0000${f.rule ?? ''}\u0000${f.slice ?? 'all'}`;
}

/**
 * True when a critical finding is far beyond its critical threshold: its score at least
 * `multiple` times the critical threshold (above), outside the critical band stretched by
 * `multiple` (band), or a raised flag.
 */
export function farBeyondCritical(d: Pick<Finding, 'status' | 'score' | 'thresholds'>, multiple: number | null): boolean {
  if (d.status !== 'critical' || multiple === null) return false;
  const t = d.thresholds;
  switch (t.type) {
    case 'flag':
      return true;
    case 'above':
      // A relative hair of slack, so that 3 x 0.05 written by hand (0.15) counts as 3 x 0.05.
      return t.critical > 0 ? d.score >= multiple * t.critical * (1 - 1e-12) : d.score > 0;
    case 'band':
      return d.score > t.criticalAbove * multiple || d.score < t.criticalBelow / multiple;
  }
}

export function applyAlertState(config: Config, runDate: string, drafts: readonly Omit<Finding, 'alert'>[], previous: readonly Finding[] | null): Finding[] {
  const prev = new Map((previous ?? []).map((f) => [findingKey(f), f]));
  return drafts.map((d) => {
    const before = prev.get(findingKey(d))?.alert;
    const atWarn = d.status !== 'ok';
    const atCritical = d.status === 'critical';
    const consecutiveRuns = atWarn ? (before?.consecutiveRuns ?? 0) + 1 : 0;
    const consecutiveCritical = atCritical ? (before?.consecutiveCritical ?? 0) + 1 : 0;
    const needed = config.alerting.consecutiveRuns[CHECK_KIND[d.check]];
    const held = consecutiveCritical >= needed ? 'critical' : consecutiveRuns >= needed ? 'warn' : null;
    const immediate = held !== 'critical' && farBeyondCritical(d, config.alerting.immediateMultiple);
    const level = immediate ? 'critical' : held;
    const since = level === null ? null : before?.level === level && before.since !== null ? before.since : runDate;
    if (level === null) return { ...d, alert: { consecutiveRuns, consecutiveCritical, alerting: false, level, since } };
    const rule: AlertRule = immediate ? 'immediate' : 'consecutive_runs';
    return { ...d, evidence: { ...d.evidence, alertRule: rule }, alert: { consecutiveRuns, consecutiveCritical, alerting: true, level, since, rule } };
  });
}
