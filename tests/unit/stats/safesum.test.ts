import { describe, expect, it } from 'vitest';
import { LARGE_MAGNITUDE, addToSplitSum, meanOfSplitSum, type SplitSum } from '../../../src/stats/index.ts';

const sumOf = (values: number[]): SplitSum => values.reduce((acc, x) => addToSplitSum(acc, x), { small: 0, largeScaled: 0 });

describe('split sums (regression: 1e308 + 1e308 overflowed the mean)', () => {
  it('means of values at the top of the float64 range stay finite and exact', () => {
    // Arithmetic: the mean of two equal values is the value; of x and -x it is 0.
    expect(meanOfSplitSum(sumOf([1e308, 1e308]), 2)).toBe(1e308);
    expect(meanOfSplitSum(sumOf([Number.MAX_VALUE, Number.MAX_VALUE]), 2)).toBe(Number.MAX_VALUE);
    expect(meanOfSplitSum(sumOf([1e308, -1e308, 3]), 3)).toBe(1);
    expect(meanOfSplitSum(sumOf([1e200, 1e200, 1e200, 1e200]), 4)).toBeCloseTo(1e200, -190);
  });

  it('ordinary values are summed as usual', () => {
    expect(sumOf([1, 2, 3.5])).toEqual({ small: 6.5, largeScaled: 0 });
    expect(meanOfSplitSum(sumOf([1, 2, 3.5]), 3)).toBeCloseTo(6.5 / 3, 15);
    expect(sumOf([LARGE_MAGNITUDE]).small).toBe(0);
    expect(() => meanOfSplitSum(sumOf([1]), 0)).toThrow(/integer >= 1/);
  });
});
