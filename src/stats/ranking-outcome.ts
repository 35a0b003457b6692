/**
 * Outcome of a served list from its labels: reciprocal rank of the first positive, NDCG@k,
 * and the position buckets of the click curve. Per-list functions over labels already in
 * served order (index 0 = top); per-day sums of them merge by addition.
 */
import { StatsInputError } from './errors.ts';
import { requireInteger } from './validate.ts';

/**
 * Reciprocal rank of the first positive label (label > 0) in served order: 1 / its
 * 1-based rank, or null when the list has no positive (such lists are counted apart).
 * `ranks[i]` gives the rank of labels[i] when positions tie or skip (default i + 1).
 * Missing labels (NaN) are not positive. O(n).
 *
 * Example: reciprocalRank([0, 0, 1, 1]) => 1/3
 *
 * Source: Voorhees, E. (1999), The TREC-8 question answering track report (mean reciprocal
 * rank of the first relevant answer).
 */
export function reciprocalRank(labels: ArrayLike<number>, ranks?: ArrayLike<number>): number | null {
  let best = Infinity;
  for (let i = 0; i < labels.length; i++) {
    if (labels[i]! > 0) {
      const r = ranks === undefined ? i + 1 : ranks[i]!;
      if (r < best) best = r;
    }
  }
  return best === Infinity ? null : 1 / best;
}

/**
 * Normalised discounted cumulative gain at k of labels in served order.
 *
 * What: DCG@k = sum over the items at rank r <= k of gain / log2(1 + r), with gain = the
 * label itself (linear gain; labels <= 0 or missing gain 0), divided by the DCG@k of the
 * same labels sorted descending (the ideal order). Null when no label is positive (the
 * ideal DCG is 0). With `ranks`, an item's rank is ranks[i]: items tied on position should
 * get the average of the ranks they span, so that (the discount being convex) NDCG stays
 * <= 1; the ideal order always uses ranks 1..n.
 *
 * Why: the quality of the served order as the ranker's owners measure it offline; linear
 * gain and the 1 / log2(1 + r) discount are those of scikit-learn's ndcg_score, so the
 * value can be checked against it (for binary labels linear and 2^rel - 1 gains agree).
 *
 * Cost: O(n log n) (the ideal order sorts the labels in `scratch` when given).
 *
 * Example: ndcgAtK([0, 1, 0, 2, 0, 1], 10) => 0.5903965282893011
 * (sklearn.metrics.ndcg_score([[0,1,0,2,0,1]], [[-1,-2,-3,-4,-5,-6]], k=10), Debian
 * python3-sklearn 1.2.1)
 *
 * Source: Jarvelin, K., Kekalainen, J. (2002), Cumulated gain-based evaluation of IR
 * techniques, ACM TOIS 20(4): 422-446.
 */
export function ndcgAtK(labels: ArrayLike<number>, k: number, ranks?: ArrayLike<number>, scratch?: Float64Array): number | null {
  requireInteger('ndcgAtK', 'k', k, 1);
  const n = labels.length;
  const gains = scratch !== undefined && scratch.length >= n ? scratch.subarray(0, n) : new Float64Array(n);
  let dcg = 0;
  let any = false;
  for (let i = 0; i < n; i++) {
    const y = labels[i]!;
    const g = y > 0 ? y : 0;
    gains[i] = -g; // ascending sort of -gain = descending gains
    if (g > 0) {
      any = true;
      const r = ranks === undefined ? i + 1 : ranks[i]!;
      if (!(r >= 1)) throw new StatsInputError(`ndcgAtK requires ranks >= 1; ranks[${i}] is ${String(r)}`);
      if (r <= k) dcg += g / Math.log2(1 + r);
    }
  }
  if (!any) return null;
  gains.sort();
  let ideal = 0;
  for (let i = 0; i < Math.min(k, n); i++) ideal -= gains[i]! / Math.log2(2 + i);
  return dcg / ideal;
}

/** Upper rank of each click-curve bucket: 1, 2, 3, 4-5, 6-10, 11-20, 21 and below. */
export const POSITION_BUCKET_UPPER: readonly number[] = [1, 2, 3, 5, 10, 20, Infinity];
export const POSITION_BUCKET_LABELS: readonly string[] = ['rank 1', 'rank 2', 'rank 3', 'ranks 4-5', 'ranks 6-10', 'ranks 11-20', 'ranks 21+'];

/**
 * The click-curve bucket (index into POSITION_BUCKET_UPPER) of a 1-based served rank.
 * Buckets widen down the list, where positives are rare (position bias: Joachims et al.
 * 2005), so each holds enough positives to compare by PSI. O(1).
 */
export function positionBucket(rank: number): number {
  if (!(Number.isInteger(rank) && rank >= 1)) throw new StatsInputError(`positionBucket requires a rank that is an integer >= 1; got ${String(rank)}`);
  if (rank <= 3) return rank - 1;
  if (rank <= 5) return 3;
  if (rank <= 10) return 4;
  if (rank <= 20) return 5;
  return 6;
}
