/**
 * The checks of issue "pages an on-call engineer trusts", on small hand-built profiles:
 * distinct counts against the baseline days, values beyond the baseline's extremes, and
 * drift thresholds learned from the baseline's own day-to-day variation.
 */
import { describe, expect, it } from 'vitest';
import { evaluateDay, learnThreshold } from '../../../src/checks/index.ts';
import { parseConfig, type Config, type ConfigInput } from '../../../src/config/index.ts';
import type { FeatureVariation } from '../../../src/profile/index.ts';
import type { Finding } from '../../../src/report/index.ts';
import { baseline, dataset, day, numeric } from './profiles.ts';

type Draft = Omit<Finding, 'alert'>;

function config(features: ConfigInput['features'], extra: Partial<ConfigInput> = {}): Config {
  return parseConfig({ source: { table: 'shop.results' }, features, ...extra });
}

function one(findings: Draft[], feature: string, check: string): Draft {
  const hits = findings.filter((f) => f.feature === feature && f.check === check);
  expect(hits, `${feature} ${check}`).toHaveLength(1);
  return hits[0]!;
}

const DS = dataset(10, 10);
const range = (from: number, to: number): number[] => Array.from({ length: to - from + 1 }, (_, i) => from + i);

describe('distinct_ratio_drop against the baseline days', () => {
  // The pooled baseline holds 1000 distinct values; each baseline day had about 100 at size 100.
  const perDay = (counts: number[]): FeatureVariation => ({
    looDays: [],
    psi: [],
    distinct: { sizes: [10, 20, 50, 100], perDay: counts.map((c) => [10, 20, 50, c]) },
  });
  const base = numeric(range(1, 1000));

  it('is quiet for a day as varied as the baseline days, where the pooled comparison saw a 90 % drop', () => {
    const b = { ...baseline(DS, { x: base }), variation: { x: perDay([100, 98, 100, 99]) } };
    const f = one(evaluateDay(config([{ name: 'x' }]), b, day('2025-03-03', DS, { x: numeric(range(2001, 2100)) })), 'x', 'distinct_ratio_drop');
    expect(f.status).toBe('ok');
    expect(f.value).toBe(0);
    expect(f.evidence).toMatchObject({ method: 'per_day', baseline: 99.5, current: 100, comparedValues: 100, baselineLowest: 98, baselineDays: 4 });
    // Without per-day counts (a baseline stored before them), the pooled comparison: 100 of 100 values in both -> 0 too,
    // so check the standing warning main gave with main's thresholds on a larger day instead.
    const pooled = one(evaluateDay(config([{ name: 'x' }], { thresholds: { distinct_ratio_drop: { warn: 0.5, critical: 0.9 } } }), baseline(DS, { x: base }), day('2025-03-03', DS, { x: numeric([...range(1, 100), ...range(1, 100), ...range(1, 100)]) })), 'x', 'distinct_ratio_drop');
    expect(pooled.evidence['method']).toBe('pooled');
    // 100 distinct in 300 values against 300 distinct in 300 pooled values thinned: drop 2/3.
    expect(pooled.value).toBeCloseTo(2 / 3, 12);
    expect(pooled.status).toBe('warn');
  });

  it('fires when the day falls below every baseline day by the threshold: 70 of 100 is a 30 % drop (warn at 20 %)', () => {
    const b = { ...baseline(DS, { x: base }), variation: { x: perDay([100, 98, 100, 99]) } };
    const stuck = [...range(1, 70), ...new Array<number>(30).fill(0)];
    const f = one(evaluateDay(config([{ name: 'x' }]), b, day('2025-03-03', DS, { x: numeric(stuck) })), 'x', 'distinct_ratio_drop');
    // 71 distinct (70 values and the stuck 0) against the median 99.5: 1 - 71 / 99.5.
    expect(f.value).toBeCloseTo(1 - 71 / 99.5, 12);
    expect(f.status).toBe('warn');
  });

  it('stays quiet for a drop the baseline has seen on a normal day', () => {
    const b = { ...baseline(DS, { x: base }), variation: { x: perDay([100, 60, 100, 99]) } };
    const f = one(evaluateDay(config([{ name: 'x' }]), b, day('2025-03-03', DS, { x: numeric([...range(1, 70), ...new Array<number>(30).fill(0)]) })), 'x', 'distinct_ratio_drop');
    expect(f.value).toBeGreaterThan(0.2);
    expect(f.status).toBe('ok');
  });
});

describe('extreme_value_ratio', () => {
  it('sees 10 % of values set to 1e308 in a feature without a declared range, with the most extreme value', () => {
    const b = baseline(DS, { x: numeric(range(0, 999)) });
    const cur = numeric([...range(0, 899), ...new Array<number>(100).fill(1e308)]);
    const f = one(evaluateDay(config([{ name: 'x' }]), b, day('2025-03-03', DS, { x: cur })), 'x', 'extreme_value_ratio');
    // Bounds from numpy 2.4.6 on 0..999: np.quantile(x, 0.001) = 0.999, np.quantile(x, 0.999) = 998.001,
    // IQR 499.5; with k = 3: [-1497.501, 2496.501].
    expect(f.evidence['lowerBound']).toBeCloseTo(-1497.501, 9);
    expect(f.evidence['upperBound']).toBeCloseTo(2496.501, 9);
    expect(f.value).toBe(0.1);
    expect(f.evidence).toMatchObject({ above: 100, below: 0, finite: 1000, baseline: 0, mostExtreme: 1e308 });
    expect(f.status).toBe('critical');
    expect(f.summary).toContain('most extreme');
  });

  it('is quiet on a day like the baseline, and reports the lower side when it is the farther one', () => {
    const b = baseline(DS, { x: numeric(range(0, 999)) });
    expect(one(evaluateDay(config([{ name: 'x' }]), b, day('d', DS, { x: numeric(range(0, 999)) })), 'x', 'extreme_value_ratio').status).toBe('ok');
    const low = one(evaluateDay(config([{ name: 'x' }]), b, day('d', DS, { x: numeric([...range(0, 989), ...new Array<number>(10).fill(-1e9), 3000]) })), 'x', 'extreme_value_ratio');
    expect(low.evidence).toMatchObject({ below: 10, above: 1, mostExtreme: -1e9 });
  });
});

describe('adaptive drift thresholds', () => {
  const a = config([{ name: 'x' }], { thresholds: { adaptive: { enabled: true, quantile: 0.95 } } }).thresholds.adaptive;

  it('warn at margin x the quantile of the leave-one-out values, never below the floor; critical at criticalMultiple x warn', () => {
    // 20 values 0.01 .. 0.20: numpy 2.4.6 np.quantile(np.arange(1, 21) / 100, 0.95) = 0.1905.
    const loo = range(1, 20).map((i) => i / 100);
    const l = learnThreshold('ks', loo, { warn: 0.1, critical: 0.2 }, a)!;
    expect(l.evidence.quantileValue).toBeCloseTo(0.1905, 12);
    expect(l.threshold.warn).toBeCloseTo(1.5 * 0.1905, 12);
    expect(l.threshold.critical).toBeCloseTo(2 * 1.5 * 0.1905, 12);
    // A feature that hardly moves: the floor.
    expect(learnThreshold('psi', new Array<number>(10).fill(0.001), { warn: 0.1, critical: 0.25 }, a)!.threshold).toEqual({ warn: 0.02, critical: 0.04 });
    // Too few days: none learned.
    expect(learnThreshold('psi', [0.1, 0.2], { warn: 0.1, critical: 0.25 }, a)).toBeNull();
  });

  it('replace the fixed KS thresholds in the finding, marked learned, with how in the evidence; an explicit override wins', () => {
    const base = numeric(range(1, 10_000));
    const cur = numeric(range(501, 10_500));
    const variation = { x: { looDays: [], psi: new Array<number>(10).fill(0.001), ks: new Array<number>(10).fill(0.01) } };
    const b = { ...baseline(DS, { x: base }), variation };
    const ks = one(evaluateDay(config([{ name: 'x' }], { thresholds: { adaptive: { enabled: true } } }), b, day('d', DS, { x: cur })), 'x', 'ks');
    // D = 500 / 10000 = 0.05 exactly; floor 0.03 -> warn 0.03, critical 0.06.
    expect(ks.value).toBeCloseTo(0.05, 12);
    expect(ks.thresholds).toEqual({ type: 'above', warn: 0.03, critical: 0.06, learned: true });
    expect(ks.status).toBe('warn');
    expect(ks.summary).toContain('learned warn >= 0.03');
    expect(ks.evidence['learnedThreshold']).toMatchObject({ method: 'leave_one_out', statistic: 'ks', days: 10, floor: 0.03, fixed: { warn: 0.1, critical: 0.2 } });
    const fixed = one(evaluateDay(config([{ name: 'x' }]), b, day('d', DS, { x: cur })), 'x', 'ks');
    expect(fixed.status).toBe('ok');
    expect(fixed.thresholds).toEqual({ type: 'above', warn: 0.1, critical: 0.2 });
    const override = one(evaluateDay(config([{ name: 'x', thresholds: { ks: { warn: 0.2, critical: 0.3 } } }], { thresholds: { adaptive: { enabled: true } } }), b, day('d', DS, { x: cur })), 'x', 'ks');
    expect(override.thresholds).toEqual({ type: 'above', warn: 0.2, critical: 0.3 });
  });
});
