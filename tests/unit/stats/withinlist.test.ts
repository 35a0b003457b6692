import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import {
  StatsInputError,
  WITHIN_LIST_RULES,
  isFlatList,
  listAggregate,
  listSizeCounts,
  ruleViolated,
} from '../../../src/stats/index.ts';
import type { ListAggregate, WithinListRule } from '../../../src/stats/index.ts';

/** Aggregate of a plain list of values, every value present. */
function agg(values: number[]): ListAggregate {
  const v = Float64Array.from(values);
  return listAggregate(v, values.map((_, i) => i), 0, values.length, null, true);
}

const TOL = 1e-6;

describe('large finite values (regression: a square above about 1.3e154 overflowed and the rule check threw)', () => {
  const rules = ['minmax', 'zscore', 'rank', 'sum_to_one'] as const;
  for (const big of [1e154, 1e200, 1e308, -1e308]) {
    it(`${big}: counted apart, sums stay finite, and a non-flat list breaks every rule without throwing`, () => {
      const a = listAggregate(Float64Array.of(0, 0.5, big), [0, 1, 2], 0, 3, null, true);
      expect(a).toEqual({ count: 3, min: Math.min(0, big), max: Math.max(0.5, big), sum: 0.5, sumSq: 0.25, distinct: 3, large: 1 });
      for (const rule of rules) expect(ruleViolated(rule, a, 1e-6)).toBe(true);
      // Flat at a large value: the flat-list check's, not a rule violation.
      const flat = listAggregate(Float64Array.of(big, big), [0, 1], 0, 2, null, true);
      expect(isFlatList(flat)).toBe(true);
      for (const rule of rules) expect(ruleViolated(rule, flat, 1e-6)).toBe(false);
    });
  }

  it('values just below 1e100 are still summed and squared: a z-scored list of them is judged exactly', () => {
    // 9.9e99 and -9.9e99 have mean 0 and population sd 9.9e99: a zscore violation, decided by the arithmetic.
    const a = listAggregate(Float64Array.of(9.9e99, -9.9e99), [0, 1], 0, 2, null, false);
    expect(a.large).toBe(0);
    expect(Number.isFinite(a.sumSq)).toBe(true);
    expect(ruleViolated('zscore', a, 1e-6)).toBe(true);
  });
});

describe('listAggregate', () => {
  it('doc example and the empty list', () => {
    expect(listAggregate(Float64Array.of(0, 1, 0.5, 9), [0, 1, 2], 0, 3, null, true)).toEqual({
      count: 3, min: 0, max: 1, sum: 1.5, sumSq: 1.25, distinct: 3, large: 0,
    });
    expect(listAggregate(Float64Array.of(1), [0], 0, 0, null, true)).toEqual({
      count: 0, min: Infinity, max: -Infinity, sum: 0, sumSq: 0, distinct: 0, large: 0,
    });
  });

  it('uses only rows[start..end), skips missing and non-finite values, distinct -1 when not wanted', () => {
    const values = Float64Array.of(5, 2, Number.NaN, 2, Infinity, 7, 100);
    const missing = Uint8Array.of(0, 0, 0, 0, 0, 1, 0);
    // rows of two lists: list A = rows 0..4 in a shuffled order, list B = rows 5, 6
    const rows = [3, 0, 4, 2, 1, 5, 6];
    const a = listAggregate(values, rows, 0, 5, missing, true);
    expect(a).toEqual({ count: 3, min: 2, max: 5, sum: 9, sumSq: 33, distinct: 2, large: 0 });
    const b = listAggregate(values, rows, 5, 7, missing, false);
    expect(b).toEqual({ count: 1, min: 100, max: 100, sum: 100, sumSq: 10000, distinct: -1, large: 0 });
  });

  it('reuses a scratch buffer when it is long enough, and still works when it is too short', () => {
    const values = Float64Array.of(3, 1, 3, 2);
    const scratch = new Float64Array(8);
    expect(listAggregate(values, [0, 1, 2, 3], 0, 4, null, true, scratch).distinct).toBe(3);
    expect(listAggregate(values, [0, 1, 2, 3], 0, 4, null, true, new Float64Array(1)).distinct).toBe(3);
  });

  it('agrees with a direct computation on random lists (fast-check)', () => {
    const cell = fc.tuple(
      fc.oneof(fc.integer({ min: -5, max: 5 }).map((x) => x / 2), fc.constantFrom(Number.NaN, Infinity)),
      fc.constantFrom(0, 0, 0, 1, 2),
    );
    fc.assert(
      fc.property(fc.array(cell, { maxLength: 40 }), (cells) => {
        const values = Float64Array.from(cells.map((c) => c[0]));
        const missing = Uint8Array.from(cells.map((c) => c[1]));
        const rows = cells.map((_, i) => cells.length - 1 - i);
        const r = listAggregate(values, rows, 0, rows.length, missing, true);
        const kept = cells.filter((c) => c[1] === 0 && Number.isFinite(c[0])).map((c) => c[0]);
        expect(r.count).toBe(kept.length);
        expect(r.min).toBe(kept.length ? Math.min(...kept) : Infinity);
        expect(r.max).toBe(kept.length ? Math.max(...kept) : -Infinity);
        expect(r.sum).toBeCloseTo(kept.reduce((s, x) => s + x, 0), 12);
        expect(r.sumSq).toBeCloseTo(kept.reduce((s, x) => s + x * x, 0), 12);
        expect(r.distinct).toBe(new Set(kept).size);
      }),
      { numRuns: 300, seed: 23 },
    );
  });

  it('throws on invalid input', () => {
    const v = Float64Array.of(1, 2);
    expect(() => listAggregate(v, [0, 1], 1, 0, null, false)).toThrow(StatsInputError);
    expect(() => listAggregate(v, [0, 1], 0, 3, null, false)).toThrow(/start <= end <= rows.length/);
    expect(() => listAggregate(v, [0, 5], 0, 2, null, false)).toThrow(/row indexes/);
    expect(() => listAggregate(v, [0, 1], 0, 2, new Uint8Array(1), false)).toThrow(/missing codes/);
  });
});

describe('isFlatList', () => {
  it('flat means at least two values, all equal', () => {
    expect(isFlatList(agg([2, 2, 2]))).toBe(true);
    expect(isFlatList(agg([2, 2, 3]))).toBe(false);
    expect(isFlatList(agg([2]))).toBe(false);
    expect(isFlatList(agg([]))).toBe(false);
  });
});

describe('ruleViolated', () => {
  it('lists with fewer than two values are never judged', () => {
    for (const rule of WITHIN_LIST_RULES) {
      expect(ruleViolated(rule, agg([]), TOL)).toBe(false);
      expect(ruleViolated(rule, agg([42]), TOL)).toBe(false);
    }
  });

  it("minmax: spans [0, 1]; flat lists are left to the flat check", () => {
    expect(ruleViolated('minmax', agg([0, 0.3, 1]), TOL)).toBe(false);
    expect(ruleViolated('minmax', agg([1, 0]), TOL)).toBe(false);
    expect(ruleViolated('minmax', agg([0.1, 1]), TOL)).toBe(true);
    expect(ruleViolated('minmax', agg([0, 0.8]), TOL)).toBe(true);
    expect(ruleViolated('minmax', agg([0, 0.8]), 0.25)).toBe(false);
    expect(ruleViolated('minmax', agg([-3, 12]), TOL)).toBe(true);
    expect(ruleViolated('minmax', agg([0.5, 0.5]), TOL)).toBe(false);
  });

  it('zscore: mean 0 and sd 1 under either the population or the sample definition', () => {
    // [-1, 1]: mean 0, population sd 1 (sample sd sqrt 2).
    expect(ruleViolated('zscore', agg([-1, 1]), TOL)).toBe(false);
    // [-1, 0, 1]: population sd sqrt(2/3), sample sd 1.
    expect(ruleViolated('zscore', agg([-1, 0, 1]), TOL)).toBe(false);
    // Standardised with the population sd: [-sqrt(1.5), 0, sqrt(1.5)].
    expect(ruleViolated('zscore', agg([-Math.sqrt(1.5), 0, Math.sqrt(1.5)]), TOL)).toBe(false);
    expect(ruleViolated('zscore', agg([-2, 2]), TOL)).toBe(true); // sd 2 / 2.83
    expect(ruleViolated('zscore', agg([-0.5, 1.5]), TOL)).toBe(true); // mean 0.5
    expect(ruleViolated('zscore', agg([0, 0, 0]), TOL)).toBe(true); // flat: sd 0
    expect(ruleViolated('zscore', agg([-1.1, 1.1]), 0.2)).toBe(false);
  });

  it('rank: a permutation of 1..n', () => {
    expect(ruleViolated('rank', agg([3, 1, 2]), TOL)).toBe(false);
    expect(ruleViolated('rank', agg([1, 2, 2]), TOL)).toBe(true); // max != n
    expect(ruleViolated('rank', agg([1, 1, 3]), TOL)).toBe(true); // distinct != n
    expect(ruleViolated('rank', agg([0, 1, 2]), TOL)).toBe(true); // zero-based
    expect(ruleViolated('rank', agg([1, 2.5, 3]), TOL)).toBe(true); // sum 6.5 != 6
    const noDistinct = { ...agg([1, 2, 3]), distinct: -1 };
    expect(() => ruleViolated('rank', noDistinct, TOL)).toThrow(/requires the distinct count/);
  });

  it('sum_to_one: shares that sum to 1 and are not negative', () => {
    expect(ruleViolated('sum_to_one', agg([0.2, 0.3, 0.5]), TOL)).toBe(false);
    expect(ruleViolated('sum_to_one', agg([0.5, 0.6]), TOL)).toBe(true);
    expect(ruleViolated('sum_to_one', agg([1.2, -0.2]), TOL)).toBe(true);
    expect(ruleViolated('sum_to_one', agg([0.5, 0.5]), TOL)).toBe(false);
  });

  it('throws on a bad tolerance or an unknown rule', () => {
    expect(() => ruleViolated('minmax', agg([0, 1]), -1)).toThrow(/tolerance/);
    expect(() => ruleViolated('minmax', agg([0, 1]), Number.NaN)).toThrow(StatsInputError);
    expect(() => ruleViolated('median' as WithinListRule, agg([0, 1]), TOL)).toThrow(/does not know the rule/);
    // An aggregate from elsewhere (e.g. SQL) with a NaN in it is an error, not "not violated".
    expect(() => ruleViolated('zscore', { ...agg([0, 1]), sum: Number.NaN }, TOL)).toThrow(/finite min, max, sum and sumSq/);
  });

  it('a list built to satisfy its rule is never flagged (fast-check)', () => {
    fc.assert(
      fc.property(fc.array(fc.double({ min: -100, max: 100, noNaN: true }), { minLength: 2, maxLength: 50 }), (raw) => {
        const lo = Math.min(...raw);
        const hi = Math.max(...raw);
        fc.pre(hi - lo > 1e-3);
        const n = raw.length;
        const minmax = raw.map((x) => (x - lo) / (hi - lo));
        const mean = raw.reduce((s, x) => s + x, 0) / n;
        const sd = Math.sqrt(raw.reduce((s, x) => s + (x - mean) ** 2, 0) / (n - 1));
        const z = raw.map((x) => (x - mean) / sd);
        const shifted = raw.map((x) => x - lo + 1);
        const total = shifted.reduce((s, x) => s + x, 0);
        const shares = shifted.map((x) => x / total);
        const ranks = raw.map((_, i) => i + 1).reverse();
        expect(ruleViolated('minmax', agg(minmax), TOL)).toBe(false);
        expect(ruleViolated('zscore', agg(z), TOL)).toBe(false);
        expect(ruleViolated('sum_to_one', agg(shares), TOL)).toBe(false);
        expect(ruleViolated('rank', agg(ranks), TOL)).toBe(false);
      }),
      { numRuns: 300, seed: 29 },
    );
  });
});

describe('listSizeCounts', () => {
  it('counts per size with an overflow bin', () => {
    expect(Array.from(listSizeCounts([1, 3, 3, 12], 10))).toEqual([1, 0, 2, 0, 0, 0, 0, 0, 0, 1]);
    expect(Array.from(listSizeCounts([5, 1], 1))).toEqual([2]);
    expect(Array.from(listSizeCounts([], 3))).toEqual([0, 0, 0]);
  });

  it('throws on sizes below 1 or not integers, and on a bad maxSize', () => {
    expect(() => listSizeCounts([0], 5)).toThrow(/integers >= 1/);
    expect(() => listSizeCounts([2.5], 5)).toThrow(StatsInputError);
    expect(() => listSizeCounts([1], 0)).toThrow(/maxSize/);
  });
});
