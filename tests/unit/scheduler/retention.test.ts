/**
 * The retention policy from the config: how long day profiles must live for the windows a run
 * may still build (span + lagDays + catchUpMaxDays, at least dayProfileMinDays; a fixed
 * window's days always), and that `enabled: false` keeps everything.
 */
import { describe, expect, it } from 'vitest';
import { parseConfig, type ConfigInput } from '../../../src/config/index.ts';
import { retentionPolicy } from '../../../src/scheduler/index.ts';

const cfg = (extra: Partial<ConfigInput>) => parseConfig({ source: { table: 'shop.results' }, features: [{ name: 'price' }], ...extra });

describe('retentionPolicy', () => {
  it('defaults: reports 400 days; day profiles for 28 + 1 + 7 days (more than the floor of 35); 3 baselines', () => {
    expect(retentionPolicy(cfg({}))).toEqual({ reportDays: 400, dayProfileDays: 36, keepDayProfiles: null, baselinesKept: 3 });
  });

  it('day profiles: window span + lagDays + catchUpMaxDays, at least dayProfileMinDays', () => {
    const short = cfg({ baseline: { window: { type: 'trailing', days: 3 } }, schedule: { catchUpMaxDays: 0 }, store: { retention: { dayProfileMinDays: 1 } } });
    expect(retentionPolicy(short)!.dayProfileDays).toBe(3 + 1 + 0);
    expect(retentionPolicy(cfg({ baseline: { window: { type: 'trailing', days: 3 } } }))!.dayProfileDays).toBe(35);
    const weekly = cfg({ baseline: { window: { type: 'same_weekday', weeks: 8 } }, schedule: { catchUpMaxDays: 7, lagDays: 2 } });
    expect(retentionPolicy(weekly)!.dayProfileDays).toBe(8 * 7 + 2 + 7);
  });

  it("a fixed window's days are kept whatever their age", () => {
    const fixed = cfg({ baseline: { window: { type: 'fixed', from: '2024-01-01', to: '2024-01-31' } }, store: { retention: { reportDays: 90, baselinesKept: 1 } } });
    expect(retentionPolicy(fixed)).toEqual({ reportDays: 90, dayProfileDays: 35, keepDayProfiles: { from: '2024-01-01', to: '2024-01-31' }, baselinesKept: 1 });
  });

  it('enabled: false keeps everything', () => {
    expect(retentionPolicy(cfg({ store: { retention: { enabled: false } } }))).toBeNull();
  });
});
