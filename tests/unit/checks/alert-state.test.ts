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

function draft(check: CheckName, status: Status, feature: string | null = 'price', rule: Finding['rule'] = null): Omit<Finding, 'alert'> {
  return { feature, check, rule, value: 1, score: 1, status, thresholds: { type: 'flag' }, summary: '', evidence: {} };
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
      { consecutiveRuns: 2, consecutiveCritical: 2, alerting: true, level: 'critical', since: '2025-04-02' },
      { consecutiveRuns: 3, consecutiveCritical: 3, alerting: true, level: 'critical', since: '2025-04-02' },
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
      { consecutiveRuns: 2, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-02' },
      // Critical once: still a warn alert (at warn or worse for 3 runs), since unchanged.
      { consecutiveRuns: 3, consecutiveCritical: 1, alerting: true, level: 'warn', since: '2025-04-02' },
      { consecutiveRuns: 4, consecutiveCritical: 2, alerting: true, level: 'critical', since: '2025-04-04' },
      // Back to warn: the warn level starts anew.
      { consecutiveRuns: 5, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-05' },
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
      { consecutiveRuns: 1, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-01' },
      { consecutiveRuns: 2, consecutiveCritical: 1, alerting: true, level: 'critical', since: '2025-04-02' },
      { consecutiveRuns: 3, consecutiveCritical: 0, alerting: true, level: 'warn', since: '2025-04-03' },
      QUIET,
    ]);
  });

  it('dataset checks alert on the first run', () => {
    expect(sequence('snapshot_missing', ['critical'], CONFIG, null)[0]).toEqual({ consecutiveRuns: 1, consecutiveCritical: 1, alerting: true, level: 'critical', since: '2025-04-01' });
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
