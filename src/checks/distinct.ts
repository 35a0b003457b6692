/**
 * distinct_ratio_drop: a loss of variety (a stuck default, a join that fills one value).
 *
 * The day is compared with the baseline *days*, not the pooled window: for an item-level
 * feature whose items rotate daily, a pooled month holds many times the distinct values of
 * any one day, and a pooled comparison would sit at a standing warning. Each baseline day's
 * distinct count is kept at a ladder of sample sizes (profile/variation.ts); the day is
 * thinned to the largest ladder size it reaches (and at least half the baseline days reach),
 * and its distinct count is compared with the median of the baseline days' at that size:
 *   drop = max(0, 1 - current / median).
 * The status follows the thresholds only when the day is also below every baseline day
 * (the baseline's own spread): a drop the window has seen on a normal day is not a finding.
 * A baseline stored before per-day counts existed falls back to the pooled comparison.
 */
import type { AboveThreshold } from '../config/index.ts';
import type { FeatureVariation, NumericProfile } from '../profile/index.ts';
import type { Finding } from '../report/index.ts';
import { distinctCountSorted, thinSorted } from '../stats/index.ts';
import { applied, pct, statusAbove } from './status.ts';

type FindingDraft = Omit<Finding, 'alert'>;

function median(sorted: readonly number[]): number {
  const n = sorted.length;
  return n % 2 === 1 ? sorted[(n - 1) / 2]! : (sorted[n / 2 - 1]! + sorted[n / 2]!) / 2;
}

/** The ladder size to compare at, and the baseline days' counts there; null when no size fits. */
function ladderRung(d: NonNullable<FeatureVariation['distinct']>, available: number): { size: number; counts: number[] } | null {
  const days = d.perDay.length;
  let best: { size: number; counts: number[] } | null = null;
  d.sizes.forEach((size, i) => {
    if (size > available) return;
    const counts = d.perDay.filter((c) => c.length > i).map((c) => c[i]!);
    if (counts.length > 0 && 2 * counts.length >= days) best = { size, counts };
  });
  return best;
}

export function distinctFinding(feature: string, base: NumericProfile, cur: NumericProfile, variation: FeatureVariation | undefined, t: AboveThreshold): FindingDraft {
  const rung = variation?.distinct === undefined ? null : ladderRung(variation.distinct, cur.sortedSample.length);
  if (rung !== null) {
    const counts = [...rung.counts].sort((a, b) => a - b);
    const med = median(counts);
    const dCur = distinctCountSorted(thinSorted(cur.sortedSample, rung.size));
    const lowest = counts[0]!;
    const drop = med > 0 ? Math.max(0, 1 - dCur / med) : 0;
    const status = dCur < lowest ? statusAbove(drop, t) : 'ok';
    const mad = median(counts.map((c) => Math.abs(c - med)).sort((a, b) => a - b));
    return {
      feature,
      check: 'distinct_ratio_drop',
      rule: null,
      value: drop,
      score: drop,
      status,
      thresholds: applied(t),
      summary: `${dCur} distinct values in ${rung.size} where baseline days had a median of ${med} (lowest ${lowest}; drop ${pct(drop)})`,
      evidence: { method: 'per_day', baseline: med, current: dCur, comparedValues: rung.size, baselineDays: counts.length, baselineLowest: lowest, baselineHighest: counts[counts.length - 1]!, baselineMad: mad },
    };
  }
  // Pooled comparison on equal-size samples (baselines without per-day counts).
  const k = Math.min(base.sortedSample.length, cur.sortedSample.length);
  const dBase = distinctCountSorted(thinSorted(base.sortedSample, k));
  const dCur = distinctCountSorted(thinSorted(cur.sortedSample, k));
  const drop = dBase > 0 ? Math.max(0, 1 - dCur / dBase) : 0;
  const status = statusAbove(drop, t);
  return {
    feature,
    check: 'distinct_ratio_drop',
    rule: null,
    value: drop,
    score: drop,
    status,
    thresholds: applied(t),
    summary: `${dCur} distinct values where the baseline had ${dBase} in as many values (drop ${pct(drop)})`,
    evidence: { method: 'pooled', baseline: dBase, current: dCur, comparedValues: k },
  };
}
