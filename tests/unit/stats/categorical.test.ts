import { describe, expect, it } from 'vitest';
import { StatsInputError, boundCategories, categoryPsi, psi, truncateCategory } from '../../../src/stats/index.ts';

describe('categoryPsi', () => {
  it('doc example: union of categories, unseen ones last, unseen share of current rows', () => {
    const r = categoryPsi({ a: 60, b: 40 }, { a: 50, b: 40, c: 10 });
    expect(r.categories).toEqual(['a', 'b', 'c']);
    expect(r.unseen).toEqual(['c']);
    expect(r.unseenShare).toBe(0.1);
    const same = psi([60, 40, 0], [50, 40, 10]);
    expect(r.psi).toBe(same.psi);
    expect(r.contributions).toEqual(same.contributions);
    // By hand with the empty-bin rule (baseline share of c = 0.5 / 100 = 0.005):
    //   (0.5 - 0.6) ln(0.5/0.6) + (0.4 - 0.4) ln 1 + (0.1 - 0.005) ln(0.1/0.005)
    //   = 0.1 ln 1.2 + 0.095 ln 20
    expect(Math.abs(r.psi - (0.1 * Math.log(1.2) + 0.095 * Math.log(20)))).toBeLessThanOrEqual(1e-14);
  });

  it('order: baseline categories by share (ties by name), then unseen by current count (ties by name)', () => {
    const r = categoryPsi({ tablet: 10, phone: 50, desktop: 10, tv: 0 }, { phone: 40, watch: 5, car: 5, kiosk: 9, desktop: 1 });
    expect(r.categories).toEqual(['phone', 'desktop', 'tablet', 'kiosk', 'car', 'watch']);
    expect(r.unseen).toEqual(['kiosk', 'car', 'watch']);
    expect(r.unseenShare).toBeCloseTo(19 / 60, 15);
    // tv is 0 on both sides: dropped.
    expect(r.baselineShares).toEqual([50 / 70, 10 / 70, 10 / 70, 0, 0, 0]);
  });

  it('a category that disappears counts with the empty-bin rule on the current side', () => {
    const r = categoryPsi({ x: 50, y: 50 }, { x: 100 });
    expect(r.unseen).toEqual([]);
    expect(r.unseenShare).toBe(0);
    expect(r.psi).toBe(psi([50, 50], [100, 0]).psi);
  });

  it('identical distributions give 0; throws on empty sides and bad counts', () => {
    expect(categoryPsi({ a: 3, b: 1 }, { a: 30, b: 10 }).psi).toBe(0);
    expect(() => categoryPsi({}, { a: 1 })).toThrow('categoryPsi requires at least one baseline row');
    expect(() => categoryPsi({ a: 1 }, { a: 0 })).toThrow(/at least one current row/);
    expect(() => categoryPsi({ a: -1 }, { a: 1 })).toThrow(StatsInputError);
    expect(() => categoryPsi({ a: 1 }, { a: Number.NaN })).toThrow(StatsInputError);
  });
});

describe('category values that are names of Object.prototype members (regression: counts lived in plain objects)', () => {
  it('counts constructor, toString and __proto__ like any category', () => {
    const base = new Map([
      ['constructor', 50],
      ['toString', 30],
      ['__proto__', 20],
    ]);
    const cur = new Map([
      ['constructor', 50],
      ['toString', 30],
      ['__proto__', 10],
      ['hasOwnProperty', 10],
    ]);
    const r = categoryPsi(base, cur);
    expect(r.categories).toEqual(['constructor', 'toString', '__proto__', 'hasOwnProperty']);
    expect(r.unseen).toEqual(['hasOwnProperty']);
    expect(r.unseenShare).toBe(0.1);
    // Same as psi over the aligned counts (computed by this project's psi, checked against SciPy in psi.test.ts).
    expect(r.psi).toBe(psi([50, 30, 20, 0], [50, 30, 10, 10]).psi);
  });
});

describe('truncateCategory', () => {
  it('keeps short values, cuts long ones to maxLength code points and marks them', () => {
    expect(truncateCategory('abc', 3)).toBe('abc');
    expect(truncateCategory('abcdef', 3)).toBe('abc\u2026');
    expect(truncateCategory('x'.repeat(10_000), 200)).toBe(`${'x'.repeat(200)}\u2026`);
    // Astral characters count once each, as PostgreSQL's length() and left() count them.
    expect(truncateCategory('\u{1F600}\u{1F600}', 2)).toBe('\u{1F600}\u{1F600}');
    expect(truncateCategory('\u{1F600}\u{1F600}\u{1F600}', 2)).toBe('\u{1F600}\u{1F600}\u2026');
  });
});

describe('boundCategories', () => {
  it('keeps the most frequent (ties by name) and counts the rest as other rows', () => {
    const counts = new Map([
      ['b', 3],
      ['a', 3],
      ['c', 5],
      ['d', 1],
    ]);
    expect(boundCategories(counts, 2)).toEqual({
      kept: new Map([
        ['c', 5],
        ['a', 3],
      ]),
      other: 4,
    });
    expect(boundCategories(counts, 4)).toEqual({ kept: counts, other: 0 });
    // Rows already outside the kept categories add up.
    expect(boundCategories(new Map([['x', 9], ['y', 2]]), 1, 7)).toEqual({ kept: new Map([['x', 9]]), other: 9 });
    expect(() => boundCategories(counts, 0)).toThrow(/limit that is an integer >= 1/);
  });
});
