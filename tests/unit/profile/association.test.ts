/**
 * A day's ranking aggregates on a hand-made day of two lists, rows interleaved and out of
 * position order, with a missing feature value, a null position, a missing score and tied
 * feature values. Per-list values come from Debian's python3-scipy 1.10.1
 * (`scipy.stats.spearmanr(x, y).correlation`) and python3-sklearn 1.2.1
 * (`sklearn.metrics.ndcg_score(y_true, y_score, k=10)`, y_score = -(served rank)).
 */
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { buildDayProfile, mergeBaseline, type NumericProfile } from '../../../src/profile/index.ts';
import { NULL_POSITION, type DayColumns } from '../../../src/source/index.ts';
import { MISSING_NULL } from '../../../src/stats/index.ts';

/*
 * row list pos  label | x     score
 *  0   A    3    0    | 0.2   1
 *  1   B    1    0    | 1     0.5
 *  2   A    1    0    | 0.9   3
 *  3   A    2    1    | 0.5   2
 *  4   B   null  1    | 3     0.1
 *  5   A    4    0    | null  0.5
 *  6   B    2    1    | 1     null
 *  7   A    5    1    | 0.3   0.7
 *  8   B    3    0    | 2     0.2
 */
const config = parseConfig({
  source: { table: 'shop.results', columns: { label: 'clicked', score: 'score' } },
  features: [{ name: 'x' }, { name: 'query', scope: 'list' }],
});

function columns(): DayColumns {
  const nan = Number.NaN;
  return {
    date: '2025-03-10',
    rows: 9,
    totalRows: 9,
    sampled: false,
    listOf: Int32Array.of(0, 1, 0, 0, 1, 0, 1, 0, 1),
    lists: 2,
    itemHash: Float64Array.of(1, 2, 3, 4, 5, 6, 7, 8, 9),
    position: Int32Array.of(3, 1, 1, 2, NULL_POSITION, 4, 2, 5, 3),
    label: Float64Array.of(0, 0, 0, 1, 1, 0, 1, 1, 0),
    numeric: [Float64Array.of(0.2, 1, 0.9, 0.5, 3, nan, 1, 0.3, 2), Float64Array.of(1, 1, 1, 1, 1, 1, 2, 2, 2), Float64Array.of(1, 0.5, 3, 2, 0.1, 0.5, nan, 0.7, 0.2)],
    missing: [Uint8Array.of(0, 0, 0, 0, 0, MISSING_NULL, 0, 0, 0), null, Uint8Array.of(0, 0, 0, 0, 0, 0, MISSING_NULL, 0, 0)],
    categorical: [null, null, null],
  };
}

describe('ranking aggregates of a day (stream engine)', () => {
  it('averages per-list Spearman rho with the position and the score over the lists that have one', async () => {
    expect(config.features.map((f) => f.name)).toEqual(['x', 'query', 'score']);
    const p = await buildDayProfile(columns(), config, null);
    const x = (p.features['x'] as NumericProfile).association!;
    // List A, pairs with x present (row 5 is null): spearmanr([0.2, 0.9, 0.5, 0.3], [3, 1, 2, 5]) = -0.8 (SciPy 1.10.1).
    // List B, rows with a position (row 4 has none): spearmanr([1, 1, 2], [1, 2, 3]) = 0.8660254037844387 (SciPy 1.10.1).
    const rhoA = -0.7999999999999999;
    const rhoB = 0.8660254037844387;
    expect(x.position.count).toBe(2);
    expect(x.position.sum).toBeCloseTo(rhoA + rhoB, 14);
    expect(x.position.sumSq).toBeCloseTo(rhoA * rhoA + rhoB * rhoB, 14);
    expect([x.position.positive, x.position.negative]).toEqual([1, 1]);
    // Against the score: list A spearmanr([0.2, 0.9, 0.5, 0.3], [1, 3, 2, 0.7]) = 0.8 (SciPy 1.10.1);
    // list B has two complete pairs only (row 6's score is null), so it does not count.
    expect(x.score!.count).toBe(1);
    expect(x.score!.sum).toBeCloseTo(0.7999999999999999, 14);
    // The score against the position: list A spearmanr([1, 3, 2, 0.5, 0.7], [3, 1, 2, 4, 5]) = -0.9 (SciPy 1.10.1); not against itself.
    const s = (p.features['score'] as NumericProfile).association!;
    expect(s.position.count).toBe(1);
    expect(s.position.sum).toBeCloseTo(-0.8999999999999998, 14);
    expect(s.score).toBeNull();
    // A list-level feature has no association.
    expect((p.features['query'] as NumericProfile).association).toBeUndefined();
  });

  it('computes the outcome in served order: MRR, NDCG@10 and positives per rank bucket', async () => {
    const p = await buildDayProfile(columns(), config, null);
    const o = p.outcome!;
    // A in served order: labels 0, 1, 0, 0, 1 -> RR 1/2; ndcg_score([[0,1,0,0,1]], [[-1,-2,-3,-4,-5]], k=10) = 0.6240505200038379.
    // B (row 4 has no position): 0, 1, 0 -> RR 1/2; ndcg_score([[0,1,0]], [[-1,-2,-3]], k=10) = 0.6309297535714575 (sklearn 1.2.1).
    expect(o.k).toBe(10);
    expect(o.lists).toBe(2);
    expect(o.reciprocalRank).toEqual({ count: 2, sum: 1, sumSq: 0.5 });
    expect(o.ndcg.sum).toBeCloseTo(0.6240505200038379 + 0.6309297535714575, 14);
    // Positives at served ranks 2 and 5 (A) and 2 (B): buckets 1, 2, 3, 4-5, 6-10, 11-20, 21+.
    expect(o.positivesByBucket).toEqual([0, 2, 0, 1, 0, 0, 0]);
  });

  it('ranks tied positions together: in the association among complete pairs, and in the served rank of the outcome', async () => {
    // One list; rows by position 1, 1, 2, 2, 3 (rows 1 and 4, then 0 and 2, then 3); x is null at row 3.
    const nan = Number.NaN;
    const tied: DayColumns = {
      ...columns(),
      rows: 5,
      totalRows: 5,
      listOf: Int32Array.of(0, 0, 0, 0, 0),
      lists: 1,
      itemHash: Float64Array.of(1, 2, 3, 4, 5),
      position: Int32Array.of(2, 1, 2, 3, 1),
      label: Float64Array.of(0, 0, 1, 0, 0),
      numeric: [Float64Array.of(0.4, 0.1, 0.7, nan, 0.3), Float64Array.of(1, 1, 1, 1, 1), Float64Array.of(0.5, 0.9, 0.2, 0.1, 0.8)],
      missing: [Uint8Array.of(0, 0, 0, MISSING_NULL, 0), null, null],
    };
    const p = await buildDayProfile(tied, config, null);
    // Pairs with x present: spearmanr([0.4, 0.1, 0.7, 0.3], [2, 1, 2, 1]).correlation = 0.8944271909999159 (SciPy 1.17.1).
    const x = (p.features['x'] as NumericProfile).association!;
    expect(x.position.count).toBe(1);
    expect(x.position.sum).toBeCloseTo(0.8944271909999159, 14);
    // The positive (row 2) sits at position 2 behind two rows at position 1: served rank 3 (rank() in SQL), RR 1/3,
    // bucket "3"; NDCG@10 takes the tied rows' average rank 3.5: (1 / log2(1 + 3.5)) / (1 / log2(2)).
    const o = p.outcome!;
    expect(o.reciprocalRank).toEqual({ count: 1, sum: 1 / 3, sumSq: 1 / 9 });
    expect(o.positivesByBucket).toEqual([0, 0, 1, 0, 0, 0, 0]);
    expect(o.ndcg.sum).toBeCloseTo(1 / Math.log2(4.5), 14);
  });

  it('keeps each day apart in the baseline (for the spread over days)', async () => {
    const d1 = await buildDayProfile(columns(), config, null);
    const d2 = { ...(await buildDayProfile(columns(), config, null)), date: '2025-03-11' };
    const b = mergeBaseline([d1, d2], config, { fingerprint: 'f', window: { type: 'trailing', from: '2025-03-10', to: '2025-03-11' }, createdAt: '2025-03-12T00:00:00Z' });
    expect(b.rankingDays!.map((d) => d.date)).toEqual(['2025-03-10', '2025-03-11']);
    expect(b.rankingDays![1]!.association['x']).toEqual((d2.features['x'] as NumericProfile).association);
    expect(b.rankingDays![0]!.outcome).toEqual(d1.outcome);
  });
});
