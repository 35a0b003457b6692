/**
 * Day profiles -> a baseline profile: counts add, value samples are pooled in proportion to
 * each day's finite values, bins come from the pooled sample; thinning keeps quantiles.
 */
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { capDayProfile, mergeBaseline, type CategoricalProfile, type DayProfile, type NumericProfile } from '../../../src/profile/index.ts';
import { binEdgesFromSorted, thinSorted } from '../../../src/stats/index.ts';

const config = parseConfig({
  source: { table: 'shop.results' },
  features: [{ name: 'x' }, { name: 'colour', kind: 'categorical' }],
  baseline: { sampleSize: 1000, bins: 4 },
});

const OPTIONS = { fingerprint: 'fp', window: { type: 'trailing', from: '2025-03-01', to: '2025-03-02' }, createdAt: '2025-03-03T06:30:00.000Z' };

/** `n` evenly spaced sorted values in [from, from + 1). */
function spread(n: number, from: number): Float64Array {
  return Float64Array.from({ length: n }, (_, i) => from + i / n);
}

function numericDay(sample: Float64Array, finite: number, nulls: number, withinList: NumericProfile['withinList']): NumericProfile {
  let sum = 0;
  for (const v of sample) sum += v;
  return {
    kind: 'numeric',
    quality: { rows: finite + nulls, nulls, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 1, finite },
    binCounts: [],
    sortedSample: sample,
    distinct: sample.length,
    mean: sum / sample.length,
    withinList,
  };
}

function categoricalDay(categories: Record<string, number>): CategoricalProfile {
  const rows = Object.values(categories).reduce((a, b) => a + b, 0);
  return { kind: 'categorical', quality: { rows, nulls: 0, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, finite: rows }, categories: new Map(Object.entries(categories)), otherRows: 0, distinct: Object.keys(categories).length, withinList: null };
}

// Day A: 3000 finite values in [0, 1); day B: 1000 finite values in [10, 11).
const dayA: DayProfile = {
  date: '2025-03-01',
  dataset: { rows: 3010, lists: 300, nullListIdRows: 10, nullItemIdRows: 4, listSizeCounts: [0, 0, 0, 0, 0, 0, 0, 0, 0, 300], singletonLists: 0, listsWithDuplicateItems: 2, listsWithPositionGaps: 1, labelRows: 3000, labelPositives: 150, listsWithoutPositive: 40 },
  totalRows: 3010,
  totalLists: 300,
  sampled: false,
  features: { x: numericDay(spread(3000, 0), 3000, 10, { listsJudged: 300, flatLists: 3, ruleViolations: 0 }), colour: categoricalDay({ red: 2000, blue: 1010 }) },
};
const dayB: DayProfile = {
  date: '2025-03-02',
  dataset: { rows: 1000, lists: 200, nullListIdRows: 0, nullItemIdRows: 1, listSizeCounts: [0, 0, 0, 0, 200], singletonLists: 0, listsWithDuplicateItems: 0, listsWithPositionGaps: 3, labelRows: 1000, labelPositives: 20, listsWithoutPositive: 150 },
  totalRows: 2000,
  totalLists: 400,
  sampled: true,
  features: { x: numericDay(spread(1000, 10), 1000, 0, { listsJudged: 200, flatLists: 1, ruleViolations: 5 }), colour: categoricalDay({ red: 500, green: 500 }) },
};

describe('mergeBaseline', () => {
  const b = mergeBaseline([dayA, dayB], config, OPTIONS);

  it('adds the dataset counts, list sizes of different lengths included', () => {
    const sizes = [0, 0, 0, 0, 200, 0, 0, 0, 0, 300];
    expect(b.dataset).toEqual({ rows: 4010, lists: 500, nullListIdRows: 10, nullItemIdRows: 5, listSizeCounts: sizes, singletonLists: 0, listsWithDuplicateItems: 2, listsWithPositionGaps: 4, labelRows: 4000, labelPositives: 170, listsWithoutPositive: 190 });
    expect(b.days).toEqual([
      { date: '2025-03-01', rows: 3010, lists: 300 },
      { date: '2025-03-02', rows: 2000, lists: 400 }, // before sampling
    ]);
    expect(b).toMatchObject({ fingerprint: 'fp', window: OPTIONS.window, sampleSize: 1000, createdAt: OPTIONS.createdAt });
  });

  it('adds quality and within-list counts and categories', () => {
    const x = b.features['x'] as NumericProfile;
    expect(x.quality).toEqual({ rows: 4010, nulls: 10, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 2, finite: 4000 });
    expect(x.withinList).toEqual({ listsJudged: 500, flatLists: 4, ruleViolations: 5 });
    const colour = b.features['colour'] as CategoricalProfile;
    expect(colour.categories).toEqual(new Map([['red', 2500], ['blue', 1010], ['green', 500]]));
    // Each day is bounded, so the union is unknown: the largest daily distinct count stands for it.
    expect(colour.distinct).toBe(2);
    expect(colour.quality.rows).toBe(4010);
  });

  it('pools the samples in proportion to each day\'s finite values (3000 : 1000 -> 750 : 250 of 1000)', () => {
    const x = b.features['x'] as NumericProfile;
    expect(x.sortedSample.length).toBe(1000);
    const fromA = x.sortedSample.filter((v) => v < 1).length;
    expect(fromA).toBe(750);
    // Sorted, as its name promises.
    for (let i = 1; i < x.sortedSample.length; i++) expect(x.sortedSample[i]!).toBeGreaterThanOrEqual(x.sortedSample[i - 1]!);
    // The mean weighs days by their finite values: (3000 * 0.49983 + 1000 * 10.4995) / 4000.
    const meanA = (3000 - 1) / 2 / 3000;
    const meanB = 10 + (1000 - 1) / 2 / 1000;
    expect(x.mean).toBeCloseTo((3000 * meanA + 1000 * meanB) / 4000, 12);
  });

  it('takes the bin edges from the pooled sample and counts it over them, scaled to the finite count', () => {
    const x = b.features['x'] as NumericProfile;
    expect(b.bins['x']).toEqual(binEdgesFromSorted(x.sortedSample, 4));
    // 4 quantile bins of the pooled sample (a quarter each) scaled to 4000, then the 10 nulls.
    expect(x.binCounts).toEqual([1000, 1000, 1000, 1000, 10]);
    expect(b.bins['colour']).toBeUndefined();
  });

  it('keeps every value when the samples together are smaller than sampleSize', () => {
    const small = mergeBaseline([{ ...dayA, features: { x: numericDay(spread(300, 0), 300, 0, null) } }, { ...dayB, features: { x: numericDay(spread(100, 10), 100, 0, null) } }], config, OPTIONS);
    expect((small.features['x'] as NumericProfile).sortedSample.length).toBe(400);
    expect((small.features['colour'] as CategoricalProfile).categories).toEqual(new Map());
  });

  it('gives an empty baseline for no days', () => {
    const empty = mergeBaseline([], config, OPTIONS);
    expect(empty.days).toEqual([]);
    expect(empty.dataset.rows).toBe(0);
    expect((empty.features['x'] as NumericProfile).sortedSample.length).toBe(0);
    expect((empty.features['x'] as NumericProfile).mean).toBeNull();
  });
});

describe('thinSorted', () => {
  it('keeps evenly spaced order statistics, so quantiles survive', () => {
    const sorted = Float64Array.from({ length: 1000 }, (_, i) => i);
    // Ranks (i + 0.5) * 1000 / 10 = 50, 150, ..., 950.
    expect(Array.from(thinSorted(sorted, 10))).toEqual([50, 150, 250, 350, 450, 550, 650, 750, 850, 950]);
    const thin = thinSorted(sorted, 100);
    // The q-quantile of the thinned sample is within one step (10) of the original's.
    for (const q of [0.1, 0.25, 0.5, 0.75, 0.9]) expect(Math.abs(thin[Math.floor(q * 100)]! - sorted[Math.floor(q * 1000)]!)).toBeLessThanOrEqual(10);
  });

  it('returns the input unchanged when it is not larger than k', () => {
    const sorted = Float64Array.of(1, 2, 3);
    expect(thinSorted(sorted, 3)).toBe(sorted);
    expect(thinSorted(sorted, 10)).toBe(sorted);
    expect(thinSorted(sorted, 1)).toEqual(Float64Array.of(2));
  });
});

describe('capDayProfile', () => {
  it('thins numeric samples to the cap, drops bin counts, keeps everything else', () => {
    const withBins: DayProfile = { ...dayA, features: { ...dayA.features, x: { ...(dayA.features['x'] as NumericProfile), binCounts: [1, 2, 3] } } };
    const capped = capDayProfile(withBins, 300);
    const x = capped.features['x'] as NumericProfile;
    expect(x.sortedSample.length).toBe(300);
    expect(x.binCounts).toEqual([]);
    expect(x.quality).toEqual((dayA.features['x'] as NumericProfile).quality);
    expect(capped.features['colour']).toBe(dayA.features['colour']);
    expect(capped.dataset).toBe(dayA.dataset);
  });
});
