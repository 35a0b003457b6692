/**
 * Extreme-value bounds and counts beyond them (src/stats/extremes.ts).
 */
import { describe, expect, it } from 'vitest';
import { countBeyondSorted, extremeBoundsSorted, StatsInputError } from '../../../src/stats/index.ts';

const X = Float64Array.from([3.1, -0.4, 2.2, 9.7, 0.5, 1.5, 1.1, 4.8, -2.0, 0.9, 7.3, 2.6]).sort();

describe('extremeBoundsSorted', () => {
  it('widens the 0.1 % and 99.9 % quantiles by k IQR (quantiles as numpy computes them)', () => {
    const b = extremeBoundsSorted(X, { iqrMultiple: 3 });
    // numpy 2.4.6: np.quantile(x, 0.001) = -1.9824, np.quantile(x, 0.999) = 9.6736,
    // np.quantile(x, .75) - np.quantile(x, .25) = 2.7249999999999996 (default method 'linear', Hyndman-Fan 7);
    // lo - 3 * iqr = -10.157399999999999, hi + 3 * iqr = 17.848599999999998.
    expect(b.lowerQuantileValue).toBeCloseTo(-1.9824, 12);
    expect(b.upperQuantileValue).toBeCloseTo(9.6736, 12);
    expect(b.iqr).toBeCloseTo(2.7249999999999996, 12);
    expect(b.lower).toBeCloseTo(-10.157399999999999, 12);
    expect(b.upper).toBeCloseTo(17.848599999999998, 12);
  });

  it('uses the spread between the extreme quantiles when the IQR is 0 (a feature mostly at one value)', () => {
    // 90 zeros, then 1..10: quartiles are both 0; numpy 2.4.6: np.quantile(x, 0.001) = 0.0, np.quantile(x, 0.999) = 9.901.
    const x = Float64Array.from([...new Array<number>(90).fill(0), 1, 2, 3, 4, 5, 6, 7, 8, 9, 10]);
    const b = extremeBoundsSorted(x, { iqrMultiple: 1 });
    expect(b.iqr).toBe(0);
    expect(b.upper).toBeCloseTo(9.901 + 9.901, 12);
    expect(b.lower).toBeCloseTo(-9.901, 12);
  });

  it('refuses an empty sample and a negative multiple', () => {
    expect(() => extremeBoundsSorted(new Float64Array(0), { iqrMultiple: 3 })).toThrow(StatsInputError);
    expect(() => extremeBoundsSorted(X, { iqrMultiple: -1 })).toThrow(StatsInputError);
  });
});

describe('countBeyondSorted', () => {
  it('counts strictly below and strictly above, with the extremes (worked by hand)', () => {
    expect(countBeyondSorted(Float64Array.of(-5, 0, 1, 9), -1, 2)).toEqual({ below: 1, above: 1, min: -5, max: 9 });
    // Values on a bound are within.
    expect(countBeyondSorted(Float64Array.of(-1, -1, 2, 2), -1, 2)).toEqual({ below: 0, above: 0, min: -1, max: 2 });
    expect(countBeyondSorted(Float64Array.of(1, 1e308, 1e308), 0, 10)).toEqual({ below: 0, above: 2, min: 1, max: 1e308 });
    expect(countBeyondSorted(new Float64Array(0), 0, 1)).toEqual({ below: 0, above: 0, min: null, max: null });
  });
});
