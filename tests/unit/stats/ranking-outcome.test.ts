/**
 * Reciprocal rank, NDCG@k and the click-curve buckets. NDCG values were computed once with
 * Debian's python3-sklearn 1.2.1, `sklearn.metrics.ndcg_score(y_true, y_score, k=k)` with
 * y_score = -(1..n) (served order, no ties), and pasted beside the call; one is also worked
 * out by hand from Jarvelin & Kekalainen (2002) with linear gain and 1 / log2(1 + rank).
 */
import { describe, expect, it } from 'vitest';
import { StatsInputError, ndcgAtK, positionBucket, reciprocalRank } from '../../../src/stats/index.ts';

describe('reciprocalRank', () => {
  it('is 1 / the rank of the first positive, null without one', () => {
    expect(reciprocalRank([0, 0, 1, 1])).toBeCloseTo(1 / 3, 15);
    expect(reciprocalRank([1, 0])).toBe(1);
    expect(reciprocalRank([0, Number.NaN, 0])).toBeNull();
    // Ranks as served: rows tied on position share the better rank.
    expect(reciprocalRank([0, 0, 1], [1, 2, 2])).toBe(0.5);
  });
});

describe('ndcgAtK', () => {
  it('matches scikit-learn ndcg_score for served order', () => {
    // ndcg_score([[0,1,0,2,0,1]], [[-1,-2,-3,-4,-5,-6]], k=10) (sklearn 1.2.1)
    expect(ndcgAtK([0, 1, 0, 2, 0, 1], 10)).toBeCloseTo(0.5903965282893011, 14);
    // same, k=3 (sklearn 1.2.1)
    expect(ndcgAtK([0, 1, 0, 2, 0, 1], 3)).toBeCloseTo(0.20151514190050246, 14);
    // ndcg_score([[3,2,3,0,1,2]], [[-1,...,-6]], k=6) (sklearn 1.2.1): graded labels, linear gain
    expect(ndcgAtK([3, 2, 3, 0, 1, 2], 6)).toBeCloseTo(0.9608081943360618, 14);
    // ndcg_score([[0]*11 + [1]], ..., k=10) -> 0.0: the only positive is below k (sklearn 1.2.1)
    expect(ndcgAtK([0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1], 10)).toBe(0);
    // ndcg_score([[0,0,1,0,0,0,0,0,0,0,0,1]], ..., k=10) (sklearn 1.2.1)
    expect(ndcgAtK([0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 1], 10)).toBeCloseTo(0.30657359638272935, 14);
  });

  it('matches the hand computation of DCG / ideal DCG', () => {
    // Labels 0,1,0,2,0,1 in served order: DCG = 1/log2(3) + 2/log2(5) + 1/log2(7);
    // the ideal order 2,1,1,0,0,0: 2/log2(2) + 1/log2(3) + 1/log2(4).
    const dcg = 1 / Math.log2(3) + 2 / Math.log2(5) + 1 / Math.log2(7);
    const ideal = 2 + 1 / Math.log2(3) + 0.5;
    expect(ndcgAtK([0, 1, 0, 2, 0, 1], 10)).toBeCloseTo(dcg / ideal, 15);
  });

  it('is null without a positive; tied positions take their average rank; k must be a whole number >= 1', () => {
    expect(ndcgAtK([0, 0, Number.NaN], 10)).toBeNull();
    // Two positives tied on the top position of a list of 3 share the average rank 1.5:
    // DCG 2 / log2(2.5), ideal 1 + 1 / log2(3); below 1, as it must be.
    expect(ndcgAtK([1, 1, 0], 10, [1.5, 1.5, 3])).toBeCloseTo(2 / Math.log2(2.5) / (1 + 1 / Math.log2(3)), 15);
    expect(() => ndcgAtK([1], 0)).toThrow(StatsInputError);
  });
});

describe('positionBucket', () => {
  it('buckets 1, 2, 3, 4-5, 6-10, 11-20, 21+', () => {
    expect([1, 2, 3, 4, 5, 6, 10, 11, 20, 21, 500].map(positionBucket)).toEqual([0, 1, 2, 3, 3, 4, 4, 5, 5, 6, 6]);
    expect(() => positionBucket(0)).toThrow(StatsInputError);
  });
});
