/**
 * Checks per slice: the whole day's findings are those of evaluateDay, unchanged by slices;
 * a slice's findings carry its name; a slice's KS and PSI tests count lists, not rows, and
 * are gated by Benjamini-Hochberg across the slices of the day.
 */
import { describe, expect, it } from 'vitest';
import { evaluateDay, evaluateSlices } from '../../../src/checks/index.ts';
import { parseConfig } from '../../../src/config/index.ts';
import { baseline, dataset, day, numeric } from './profiles.ts';

const config = parseConfig({ source: { table: 'impressions' }, features: [{ name: 'x' }], slices: { topK: [10] } }, 'test');
const range = <T,>(n: number, f: (k: number) => T): T[] => Array.from({ length: n }, (_, k) => f(k));

// Baseline: 0..999 in 50 lists of 20 rows. The day: 250, 255, ..., 1245 in 20 lists of 10 rows.
// D = 0.25 (at 249 and at 999).
const BASE = baseline(dataset(50, 20), { x: numeric(range(1000, (k) => k)) });
const DAY = day('2025-03-04', dataset(20, 10), { x: numeric(range(200, (k) => 250 + 5 * k)) });

describe('evaluateSlices', () => {
  it('gives the whole day the findings of evaluateDay, marked "all", and slices their own', () => {
    const out = evaluateSlices(config, BASE, DAY, [{ slice: 'top10', baseline: BASE, current: DAY }]);
    const whole = evaluateDay(config, BASE, DAY);
    expect(out.slice(0, whole.length)).toEqual(whole.map((d) => ({ slice: 'all', ...d })));
    const sliced = out.slice(whole.length);
    expect(sliced.length).toBeGreaterThan(0);
    expect(sliced.every((d) => d.slice === 'top10' && d.feature === 'x')).toBe(true);
  });

  it('counts each list of a slice as one observation in its KS test', () => {
    const out = evaluateSlices(config, BASE, DAY, [{ slice: 'top10', baseline: BASE, current: DAY }]);
    const whole = out.find((d) => d.slice === 'all' && d.check === 'ks')!;
    const slice = out.find((d) => d.slice === 'top10' && d.check === 'ks')!;
    expect(whole.value).toBeCloseTo(0.25, 12);
    expect(slice.value).toBeCloseTo(0.25, 12);
    // By rows (1000 against 200) the shift is beyond doubt: critical.
    expect(whole.status).toBe('critical');
    // By lists (50 against 20) it is not: exact two-sample p-value of D = 0.25 at n = 50, m = 20 is
    // 0.29449912551945945 (SciPy 1.17.1: scipy.stats.ks_2samp(np.arange(50.0), 11.6 + np.arange(20) * 2.5, method='exact').pvalue, a pair with D = 0.25).
    expect(slice.evidence['effectiveN']).toBe(50);
    expect(slice.evidence['effectiveM']).toBe(20);
    expect(slice.evidence.pValue).toBeCloseTo(0.29449912551945945, 10);
    expect(slice.status).toBe('ok');
  });

  it('adjusts the p-values of every slice of the day together (Benjamini-Hochberg)', () => {
    // The same shift in a slice of 400 lists is clear; next to 19 slices without a shift its adjusted p grows by their number.
    const big = day('2025-03-04', dataset(400, 10), { x: numeric(range(4000, (k) => 250 + k / 4)) });
    const bigBase = baseline(dataset(1000, 20), { x: numeric(range(20000, (k) => k / 20)) });
    const quiet = day('2025-03-04', dataset(400, 10), { x: numeric(range(4000, (k) => k / 4)) });
    const alone = evaluateSlices(config, BASE, DAY, [{ slice: 'top10', baseline: bigBase, current: big }]).find((d) => d.slice === 'top10' && d.check === 'ks')!;
    const many = evaluateSlices(config, BASE, DAY, [
      { slice: 'top10', baseline: bigBase, current: big },
      ...range(19, (i) => ({ slice: `segment:market=m${i}`, baseline: bigBase, current: quiet })),
    ]);
    const together = many.find((d) => d.slice === 'top10' && d.check === 'ks')!;
    expect(together.evidence.pValue).toBe(alone.evidence.pValue);
    // Smallest of 20 p-values: adjusted = 20 p (the others are near 1).
    expect(together.evidence.adjustedPValue).toBeCloseTo(Math.min(1, 20 * (alone.evidence.pValue as number)), 12);
    expect(alone.status).toBe('critical');
  });
});
