/**
 * Spearman's rank correlation with ties by average ranks. Expected values were computed
 * once with Debian's python3-scipy 1.10.1 (`scipy.stats.spearmanr(x, y).correlation`,
 * `scipy.stats.rankdata(x)`) and pasted; the call is beside each value.
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { RankScratch, StatsInputError, averageRanksInto, spearmanInto, spearmanRho } from '../../../src/stats/index.ts';

describe('averageRanksInto', () => {
  it('gives tied values the mean of their ranks', () => {
    const x = [3.5, 1, 3.5, 3.5, -2, 7];
    const out = new Float64Array(6);
    averageRanksInto(x, 6, new RankScratch(), out);
    // scipy.stats.rankdata([3.5, 1, 3.5, 3.5, -2, 7]) -> [4, 2, 4, 4, 1, 6] (SciPy 1.10.1)
    expect(Array.from(out)).toEqual([4, 2, 4, 4, 1, 6]);
  });

  it('is the definition, #less + (#equal + 1) / 2, for short lists (insertion sort) and long ones (merge sort)', () => {
    const scratch = new RankScratch();
    fc.assert(
      fc.property(fc.array(fc.integer({ min: -20, max: 20 }), { minLength: 1, maxLength: 300 }), (x) => {
        const out = new Float64Array(x.length);
        averageRanksInto(x, x.length, scratch, out);
        x.forEach((v, i) => {
          const less = x.filter((w) => w < v).length;
          const equal = x.filter((w) => w === v).length;
          expect(out[i]).toBe(less + (equal + 1) / 2);
        });
      }),
      { numRuns: 300 },
    );
  });
});

describe('spearmanRho', () => {
  it('matches SciPy without ties, with ties on one side and with ties on both', () => {
    // spearmanr([1,2,3,4,5], [5,6,7,8,7]).correlation (SciPy 1.10.1)
    expect(spearmanRho([1, 2, 3, 4, 5], [5, 6, 7, 8, 7])).toBeCloseTo(0.8207826816681233, 14);
    // spearmanr([0.3,1.2,0.7,0.7,2.5,-1.0,0.7,4.0], [8,7,6,5,4,3,2,1]).correlation (SciPy 1.10.1)
    expect(spearmanRho([0.3, 1.2, 0.7, 0.7, 2.5, -1.0, 0.7, 4.0], [8, 7, 6, 5, 4, 3, 2, 1])).toBeCloseTo(-0.31716752370827334, 14);
    // spearmanr([1,2,2,3,3,3,4], [7,7,1,2,2,9,0]).correlation (SciPy 1.10.1)
    expect(spearmanRho([1, 2, 2, 3, 3, 3, 4], [7, 7, 1, 2, 2, 9, 0])).toBeCloseTo(-0.4096910645071044, 14);
    // spearmanr([0.5,0.5,0.5,0.2,0.9,0.1], [1,2,3,4,5,6]).correlation (SciPy 1.10.1)
    expect(spearmanRho([0.5, 0.5, 0.5, 0.2, 0.9, 0.1], [1, 2, 3, 4, 5, 6])).toBeCloseTo(-0.33394720739540396, 14);
    // spearmanr([1,1,2,2,3,3], [1,2,1,2,1,2]).correlation -> 0.0; spearmanr([10,20,30,40], [1,2,3,4]) -> 1.0 (SciPy 1.10.1)
    expect(spearmanRho([1, 1, 2, 2, 3, 3], [1, 2, 1, 2, 1, 2])).toBe(0);
    expect(spearmanRho([10, 20, 30, 40], [1, 2, 3, 4])).toBe(1);
  });

  it('is undefined (null) for fewer than 3 pairs or a constant side, where SciPy returns nan', () => {
    expect(spearmanRho([1, 2], [2, 1])).toBeNull();
    expect(spearmanRho([4, 4, 4, 4], [1, 2, 3, 4])).toBeNull();
  });

  it('rejects non-finite values and unequal lengths', () => {
    expect(() => spearmanRho([1, Number.NaN, 3], [1, 2, 3])).toThrow(StatsInputError);
    expect(() => spearmanRho([1, 2, 3], [1, 2])).toThrow(/equal length/);
  });

  it('is the same with reused scratch, odd under reversal, and blind to monotone transforms (property)', () => {
    const scratch = new RankScratch();
    fc.assert(
      fc.property(fc.array(fc.integer({ min: -5, max: 5 }), { minLength: 3, maxLength: 40 }), fc.array(fc.integer({ min: -5, max: 5 }), { minLength: 3, maxLength: 40 }), (a, b) => {
        const n = Math.min(a.length, b.length);
        const x = a.slice(0, n);
        const y = b.slice(0, n);
        const rho = spearmanRho(x, y);
        expect(spearmanInto(x, y, n, scratch)).toBe(rho);
        if (rho === null) return;
        expect(spearmanRho(x.map((v) => -v), y)).toBeCloseTo(-rho, 12);
        expect(spearmanRho(x.map((v) => Math.exp(v)), y)).toBeCloseTo(rho, 12);
        expect(Math.abs(rho)).toBeLessThanOrEqual(1);
      }),
    );
  });
});
