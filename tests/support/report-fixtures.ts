/**
 * Builders for hand-made findings, shared by the fixtures of the exporter and status page
 * tests. They fill in what a test does not care about; every number stays the test's own.
 */
import type { Finding } from '../../src/report/index.ts';

export type FindingInput = Pick<Finding, 'feature' | 'check' | 'value' | 'status'> & Partial<Omit<Finding, 'alert'>> & { alert?: Partial<Finding['alert']> };

/**
 * A finding with the given fields; the rest defaults to: no rule, score = value, thresholds
 * warn 0.1 / critical 0.25 above, a plain summary, no evidence, and a quiet alert state
 * (the fields of `alert` that are given replace the quiet ones).
 */
export function finding(f: FindingInput): Finding {
  const { alert, ...rest } = f;
  return {
    rule: null,
    score: f.value,
    thresholds: { type: 'above', warn: 0.1, critical: 0.25 },
    summary: `${f.check} ${f.value}`,
    evidence: {},
    ...rest,
    alert: { consecutiveRuns: 0, consecutiveCritical: 0, alerting: false, level: null, since: null, ...alert },
  };
}

/** Alert state of a finding that has paged for `runs` runs. */
export function alerting(level: 'warn' | 'critical', since: string, runs = 2): Partial<Finding['alert']> {
  return { consecutiveRuns: runs, consecutiveCritical: level === 'critical' ? runs : 0, alerting: true, level, since };
}
