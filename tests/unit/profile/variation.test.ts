/**
 * Day-to-day variation kept with a baseline (src/profile/variation.ts): per-day distinct
 * counts at a ladder of sample sizes, leave-one-out PSI and KS D of each baseline day.
 */
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { DISTINCT_LADDER, distinctLadder, mergeBaseline, type CategoricalProfile, type DayProfile, type NumericProfile } from '../../../src/profile/index.ts';
import { categoricalVariation } from '../../../src/profile/variation.ts';
import { ks2Sorted, qualityCounts, radixSortedCopy, thinSorted } from '../../../src/stats/index.ts';
import { normalSample } from '../stats/prng.ts';

function numericDay(values: Float64Array): NumericProfile {
  const sorted = radixSortedCopy(values);
  return { kind: 'numeric', quality: qualityCounts(values, null, undefined), binCounts: [], sortedSample: sorted, distinct: new Set(values).size, mean: 0, withinList: null };
}

function categoricalDay(categories: Record<string, number>): CategoricalProfile {
  const rows = Object.values(categories).reduce((a, b) => a + b, 0);
  return { kind: 'categorical', quality: { rows, nulls: 0, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, finite: rows }, categories: new Map(Object.entries(categories)), otherRows: 0, distinct: Object.keys(categories).length, withinList: null };
}

function day(date: string, features: DayProfile['features']): DayProfile {
  const ds = { rows: 0, lists: 0, nullListIdRows: 0, nullItemIdRows: 0, listSizeCounts: [], singletonLists: 0, listsWithDuplicateItems: 0, listsWithPositionGaps: 0, labelRows: 0, labelPositives: 0, listsWithoutPositive: 0 };
  return { date, dataset: ds, totalRows: 1, totalLists: 1, sampled: false, features };
}

describe('distinctLadder', () => {
  it('counts distinct values of the sample thinned to each ladder size it reaches', () => {
    // 100 values, 25 distinct (each four times): thinned to 10, 20, 50 and 100 values.
    const x = Float64Array.from({ length: 100 }, (_, i) => Math.floor(i / 4));
    expect(DISTINCT_LADDER.slice(0, 4)).toEqual([10, 20, 50, 100]);
    expect(distinctLadder(x)).toEqual([10, 20, 25, 25]);
    expect(distinctLadder(x.subarray(0, 9))).toEqual([]);
  });
});

describe('leave-one-out PSI of a categorical feature', () => {
  it('compares each day with the sum of the others (worked by hand)', () => {
    const v = categoricalVariation([
      { date: 'd1', profile: categoricalDay({ a: 60, b: 40 }) },
      { date: 'd2', profile: categoricalDay({ a: 50, b: 50 }) },
      { date: 'd3', profile: categoricalDay({ a: 40, b: 60 }) },
    ]);
    expect(v.looDays).toEqual(['d1', 'd2', 'd3']);
    // sum over categories of (c - r) ln(c / r) on shares; d1 against {a: 90, b: 110}:
    // (0.6 - 0.45) ln(0.6 / 0.45) + (0.4 - 0.55) ln(0.4 / 0.55) = 0.0909203705355473 (computed in Python 3.11, math.log).
    expect(v.psi[0]).toBeCloseTo(0.0909203705355473, 12);
    expect(v.psi[1]).toBeCloseTo(0, 12);
    expect(v.psi[2]).toBeCloseTo(0.0909203705355473, 12);
  });
});

describe('leave-one-out KS D of a numeric feature', () => {
  const config = parseConfig({ source: { table: 't' }, features: [{ name: 'x' }], baseline: { sampleSize: 20_000 } });
  const days = Array.from({ length: 7 }, (_, i) => day(`2025-03-0${i + 1}`, { x: numericDay(normalSample(100 + i, 3000, { shift: i === 3 ? 0.5 : 0 })) }));
  const baseline = mergeBaseline(days, config, { fingerprint: 'fp', window: { type: 'trailing', from: '2025-03-01', to: '2025-03-07' }, createdAt: 'now' });
  const variation = baseline.variation!['x']!;

  it('is the binned D of the day against the pooled sample without its piece: at most the exact D, short of it by less than the largest bin share', () => {
    expect(variation.looDays).toHaveLength(7);
    const merged = (baseline.features['x'] as NumericProfile).sortedSample;
    // The rest, built the slow way: the pooled sample without day 4's thinned piece.
    const d4 = (days[3]!.features['x'] as NumericProfile).sortedSample;
    const piece = thinSorted(d4, Math.round((20_000 * 3000) / 21_000));
    const rest: number[] = [];
    let j = 0;
    for (const v of merged) {
      if (j < piece.length && v === piece[j]) j++;
      else rest.push(v);
    }
    expect(j).toBe(piece.length);
    const exact = ks2Sorted(d4, Float64Array.from(rest)).d;
    expect(variation.ks![3]!).toBeLessThanOrEqual(exact + 1e-12);
    expect(exact - variation.ks![3]!).toBeLessThan(0.005);
  });

  it('stands out for the one shifted day (0.5 sd): D about 2 Phi(0.25) - 1 = 0.197 against the others', () => {
    // Normal shift of 0.5 sd: sup |Phi(x) - Phi(x - 0.5)| = 2 Phi(0.25) - 1 = 0.1974 (A&S table 26.1, Phi(0.25) = 0.5987);
    // the rest also holds one sixth of nothing shifted, so the day against the rest sits near it.
    expect(variation.ks![3]!).toBeGreaterThan(0.15);
    const others = variation.ks!.filter((_, i) => i !== 3);
    for (const d of others) expect(d).toBeLessThan(0.1);
    expect(variation.psi[3]!).toBeGreaterThan(Math.max(...variation.psi.filter((_, i) => i !== 3)));
  });

  it('keeps per-day distinct counts at each ladder size the stored samples reach', () => {
    expect(variation.distinct!.perDay).toHaveLength(7);
    // 3000 continuous values: every ladder size up to 2000 is all distinct.
    expect(variation.distinct!.perDay[0]).toEqual([10, 20, 50, 100, 200, 500, 1000, 2000]);
  });

  it('is 0 for a day against a rest that holds the same values', () => {
    const x = radixSortedCopy(normalSample(5, 500));
    const b = mergeBaseline([day('a', { x: numericDay(x) }), day('b', { x: numericDay(x) })], config, { fingerprint: 'f', window: { type: 't', from: 'a', to: 'b' }, createdAt: 'now' });
    expect(b.variation!['x']!.ks).toEqual([0, 0]);
    expect(b.variation!['x']!.psi).toEqual([0, 0]);
  });
});
