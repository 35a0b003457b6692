/**
 * Consecutive-run hysteresis. A finding alerts at a level once it has been at that level
 * or worse for N consecutive runs (N by kind of check, config alerting.consecutiveRuns),
 * and clears on the first run below it. The state is derived from the previous evaluated
 * date's findings, which live in the store, so restarts, re-runs and back-fills agree.
 */
import type { Config } from '../config/index.ts';
import { CHECK_KIND, type Finding } from '../report/index.ts';

export function findingKey(f: Pick<Finding, 'feature' | 'check' | 'rule'>): string {
  return `${f.feature ?? ''}\u0000${f.check}\u0000${f.rule ?? ''}`;
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
    const level = consecutiveCritical >= needed ? 'critical' : consecutiveRuns >= needed ? 'warn' : null;
    const since = level === null ? null : before?.level === level && before.since !== null ? before.since : runDate;
    return { ...d, alert: { consecutiveRuns, consecutiveCritical, alerting: level !== null, level, since } };
  });
}
