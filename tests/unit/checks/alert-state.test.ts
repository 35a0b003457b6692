/**
 * Consecutive-run hysteresis: a finding alerts once it has been at its level or worse for
 * alerting.consecutiveRuns[kind] runs in a row, keeps the date it started alerting at that
 * level, and clears on the first run below it.
 */
import { describe, expect, it } from 'vitest';
import { applyAlertState, findingKey } from '../../../src/checks/index.ts';
import { parseConfig, type Config } from '../../../src/config/index.ts';
import type { CheckName, Finding, Status } from '../../../src/report/index.ts';

const CONFIG: Config = parseConfig({ source: { table: 'shop.results' }, features: [{ name: 'price' }] });

/** A borderline draft: at warn 0.15, critical 0.3 against thresholds 0.1 / 0.25 (far from 3 x critical); flags for snapshot_missing. */
function draft(check: CheckName, status: Status, feature: string | null = 'price', rule: Finding['rule'] = null): Omit<Finding, 'alert'> {
  if (check === 'snapshot_missing') return { feature, check, rule, value: 1, score: 1, status, thresholds: { type: 'flag' }, summary: '', evidence: {} };
  const score = status === 'critical' ? 0.3 : status === 'warn' ? 0.15 : 0.01;
  return { feature, check, rule, value: score, score, status, thresholds: { type: 'above', warn: 0.1, critical: 0.25 }, summary: '', evidence: {} };
}

/** Runs one finding through a sequence of daily statuses; returns its alert state after each day. */
function sequence(check: CheckName, statuses: Status[], config: Config = CONFIG, feature: string | null = 'price'): Finding['alert'][] {
  let previous: Finding[] | null = null;
  return statuses.map((status, i) => {
    const date = `2025-04-${String(i + 1).padStart(2, '0')}`;
    const findings = applyAlertState(config, date, [draft(check, status, feature)], previous);
    previous = findings;
    return findings[0]!.alert;
  });
}

const QUIET = { consecutiveRuns: 0, consecutiveCritical: 0, alerting: false, level: null, since: null };

describe('drift checks (default: 2 consecutive runs)', () => {
  it('the first critical run does not alert, the second does, and `since` stays at the first alerting date', () => {
    expect(CONFIG.alerting.consecutiveRuns.drift).toBe(2);
    expect(sequence('psi', ['critical', 'critical', 'critical'])).toEqual([
      { consecutiveRuns: 1, consecutiveCritical: 1, alerting: false, level: null, since: null },
      { consecutiveRuns: 2, consecutiveCritical: 2, alerting: true, level: 'critical', since: '2025-04-02', rule: 'consecutive_runs' },
      { consecutiveRuns: 3, consecutiveCritical: 3, alerting: true, level: 'critical', since: '2025-04-02', rule: 'consecutive_runs' },
    ]);
  });

  it('clears on the first run below, and counts again from zero', () => {
    const s = sequence('ks', ['critical', 'critical', 'ok', 'critical', 'critical']);
    expect(s[2]).toEqual(QUIET);
    expect(s[3]).toMatchObject({ consecutiveRuns: 1, alerting: false, since: null });
    expect(s[4]).toMatchObject({ alerting: true, level: 'critical', since: '2025-04-05' });
  });

  it('one odd day between quiet days never alerts', () => {
    expect(sequence('psi', ['ok', 'critical', 'ok', 'warn', 'ok']).map((a) => a.alerting)).toEqual([false, false, false, false, false]);
  });

  it('warn then critical: alerts at warn first; critical needs its own two runs and resets `since`', () => {
    expect(sequence('psi', ['warn', 'warn', 'critical', 'critical', 'warn'])).toEqual([
      { consecutiveRuns: 1, consecutiveCritical: 0, alerting: false, level: null, since: null },
      { consecutiveRuns: 2, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-02', rule: 'consecutive_runs' },
      // Critical once: still a warn alert (at warn or worse for 3 runs), since unchanged.
      { consecutiveRuns: 3, consecutiveCritical: 1, alerting: true, level: 'warn', since: '2025-04-02', rule: 'consecutive_runs' },
      { consecutiveRuns: 4, consecutiveCritical: 2, alerting: true, level: 'critical', since: '2025-04-04', rule: 'consecutive_runs' },
      // Back to warn: the warn level starts anew.
      { consecutiveRuns: 5, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-05', rule: 'consecutive_runs' },
    ]);
  });

  it('follows the configured number of runs', () => {
    const three = parseConfig({ source: { table: 't' }, features: [{ name: 'price' }], alerting: { consecutiveRuns: { drift: 3 } } });
    expect(sequence('psi', ['critical', 'critical', 'critical'], three).map((a) => a.alerting)).toEqual([false, false, true]);
    // new_category_ratio is a drift check too.
    expect(sequence('new_category_ratio', ['critical', 'critical'], three).map((a) => a.alerting)).toEqual([false, false]);
  });
});

describe('checks that alert on the first run (default 1)', () => {
  it('quality: warn then critical changes the level and resets `since`', () => {
    expect(sequence('null_ratio', ['warn', 'critical', 'warn', 'ok'])).toEqual([
      { consecutiveRuns: 1, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-01', rule: 'consecutive_runs' },
      { consecutiveRuns: 2, consecutiveCritical: 1, alerting: true, level: 'critical', since: '2025-04-02', rule: 'consecutive_runs' },
      { consecutiveRuns: 3, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-03', rule: 'consecutive_runs' },
      QUIET,
    ]);
  });

  it('dataset checks alert on the first run', () => {
    expect(sequence('snapshot_missing', ['critical'], CONFIG, null)[0]).toEqual({ consecutiveRuns: 1, consecutiveCritical: 1, alerting: true, level: 'critical', since: '2025-04-01', rule: 'consecutive_runs' });
    expect(sequence('row_count_ratio', ['warn', 'warn'], CONFIG, null)[1]).toMatchObject({ alerting: true, level: 'warn', since: '2025-04-01' });
  });

  it('within-list checks alert on the first run', () => {
    expect(sequence('rule_violation_ratio', ['critical'])[0]).toMatchObject({ alerting: true, level: 'critical' });
  });
});

describe('state is carried per feature, check and rule', () => {
  it('a critical run of another feature or rule does not count', () => {
    const day1 = applyAlertState(CONFIG, '2025-04-01', [draft('psi', 'critical', 'price'), draft('rule_violation_ratio', 'critical', 'price', 'minmax')], null);
    const day2 = applyAlertState(CONFIG, '2025-04-02', [draft('psi', 'critical', 'rating'), draft('rule_violation_ratio', 'critical', 'price', 'zscore')], day1);
    expect(day2.map((f) => f.alert.consecutiveRuns)).toEqual([1, 1]);
    expect(day2[0]!.alert.alerting).toBe(false);
  });

  it('keys tell feature, check and rule apart, and the dataset level from a feature', () => {
    const keys = new Set([
      findingKey({ feature: 'price', check: 'psi', rule: null }),
      findingKey({ feature: 'price', check: 'ks', rule: null }),
      findingKey({ feature: null, check: 'psi', rule: null }),
      findingKey({ feature: 'price', check: 'rule_violation_ratio', rule: 'rank' }),
      findingKey({ feature: 'price', check: 'rule_violation_ratio', rule: 'minmax' }),
    ]);
    expect(keys.size).toBe(5);
  });

  it('keeps every other field of the draft', () => {
    const d = { ...draft('psi', 'warn'), value: 0.17, summary: 'PSI 0.17', evidence: { n: 3 } };
    const [f] = applyAlertState(CONFIG, '2025-04-01', [d], null);
    expect(f).toEqual({ ...d, alert: { consecutiveRuns: 1, consecutiveCritical: 0, alerting: false, level: null, since: null } });
  });
});

describe('big breaks alert on their first run (alerting.immediateMultiple, default 3)', () => {
  const far = (check: CheckName, score: number, thresholds: Finding['thresholds'] = { type: 'above', warn: 0.1, critical: 0.25 }): Omit<Finding, 'alert'> => ({
    feature: 'price',
    check,
    rule: null,
    value: score,
    score,
    status: 'critical',
    thresholds,
    summary: '',
    evidence: { n: 1 },
  });

  it('a drift finding at 3 x its critical threshold alerts on its first run, says so in its evidence, and keeps alerting by consecutive runs', () => {
    expect(CONFIG.alerting.immediateMultiple).toBe(3);
    const [day1] = applyAlertState(CONFIG, '2025-04-01', [far('psi', 3)], null);
    expect(day1!.alert).toEqual({ consecutiveRuns: 1, consecutiveCritical: 1, alerting: true, level: 'critical', since: '2025-04-01', rule: 'immediate' });
    expect(day1!.evidence).toEqual({ n: 1, alertRule: 'immediate' });
    // The next day, borderline critical: held by the consecutive-run rule, since unchanged.
    const [day2] = applyAlertState(CONFIG, '2025-04-02', [far('psi', 0.3)], [day1!]);
    expect(day2!.alert).toEqual({ consecutiveRuns: 2, consecutiveCritical: 2, alerting: true, level: 'critical', since: '2025-04-01', rule: 'consecutive_runs' });
    expect(day2!.evidence['alertRule']).toBe('consecutive_runs');
  });

  it('just below the multiple waits for the second run, as a borderline warning does', () => {
    expect(applyAlertState(CONFIG, '2025-04-01', [far('new_category_ratio', 0.149, { type: 'above', warn: 0.01, critical: 0.05 })], null)[0]!.alert.alerting).toBe(false);
    expect(applyAlertState(CONFIG, '2025-04-01', [far('new_category_ratio', 0.15, { type: 'above', warn: 0.01, critical: 0.05 })], null)[0]!.alert.rule).toBe('immediate');
    const [warn] = applyAlertState(CONFIG, '2025-04-01', [draft('ks', 'warn')], null);
    expect(warn!.alert.alerting).toBe(false);
    expect(warn!.evidence['alertRule']).toBeUndefined();
  });

  it('ratio bands stretch by the multiple on both sides; flags are immediate; null turns the rule off', () => {
    const band = { type: 'band' as const, warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 3 };
    const cfg = parseConfig({ source: { table: 't' }, features: [{ name: 'price' }], alerting: { consecutiveRuns: { dataset: 2, quality: 2 } } });
    expect(applyAlertState(cfg, '2025-04-01', [{ ...far('row_count_ratio', 9.5, band), feature: null }], null)[0]!.alert.rule).toBe('immediate');
    expect(applyAlertState(cfg, '2025-04-01', [{ ...far('row_count_ratio', 0.1, band), feature: null }], null)[0]!.alert.rule).toBe('immediate');
    expect(applyAlertState(cfg, '2025-04-01', [{ ...far('row_count_ratio', 0.2, band), feature: null }], null)[0]!.alert.alerting).toBe(false);
    expect(applyAlertState(cfg, '2025-04-01', [far('constant', 1, { type: 'flag' })], null)[0]!.alert.rule).toBe('immediate');
    const off = parseConfig({ source: { table: 't' }, features: [{ name: 'price' }], alerting: { immediateMultiple: null } });
    expect(applyAlertState(off, '2025-04-01', [far('psi', 30)], null)[0]!.alert.alerting).toBe(false);
  });
});
