/**
 * extreme_value_ratio: the share of the day's finite values beyond the baseline's
 * extreme-value bounds (stats/extremes.ts: the 0.1 % and 99.9 % quantiles widened by
 * thresholds.extremeIqrMultiple IQRs), as a rise over the baseline's own share, reported
 * with the most extreme value seen. It catches a unit change or an overflow in a feature
 * whose valid range nobody declared (PSI puts 1e308 in the top bin and barely moves).
 *
 * The stream engine counts from the day's sorted values; the pushdown engine counts in SQL
 * against the same bounds (NumericProfile.extremeCounts), so both give the same finding.
 */
import type { AboveThreshold } from '../config/index.ts';
import type { NumericProfile } from '../profile/index.ts';
import type { Finding } from '../report/index.ts';
import { countBeyondSorted, extremeBoundsSorted, type ExtremeBounds } from '../stats/index.ts';
import { applied, fmt, pct, statusAbove } from './status.ts';

type FindingDraft = Omit<Finding, 'alert'>;

/** The bounds of a baseline sample (null when it has no finite value). */
export function baselineExtremeBounds(base: NumericProfile, iqrMultiple: number): ExtremeBounds | null {
  return base.sortedSample.length === 0 ? null : extremeBoundsSorted(base.sortedSample, { iqrMultiple });
}

export function extremeFinding(feature: string, base: NumericProfile, cur: NumericProfile, iqrMultiple: number, t: AboveThreshold): FindingDraft | null {
  const bounds = baselineExtremeBounds(base, iqrMultiple);
  if (bounds === null) return null;
  const pushed = cur.extremeCounts;
  const fromSql = pushed !== undefined && pushed.lower === bounds.lower && pushed.upper === bounds.upper;
  const c = fromSql ? pushed : countBeyondSorted(cur.sortedSample, bounds.lower, bounds.upper);
  const values = fromSql ? cur.quality.finite : cur.sortedSample.length;
  if (values === 0) return null;
  const b = countBeyondSorted(base.sortedSample, bounds.lower, bounds.upper);
  const current = (c.below + c.above) / values;
  const baseline = (b.below + b.above) / base.sortedSample.length;
  const score = Math.max(0, current - baseline);
  const status = statusAbove(score, t);
  // The most extreme value: the one farthest beyond its bound.
  const low = c.below > 0 && c.min !== null ? bounds.lower - c.min : -1;
  const high = c.above > 0 && c.max !== null ? c.max - bounds.upper : -1;
  const mostExtreme = low < 0 && high < 0 ? null : high >= low ? c.max : c.min;
  return {
    feature,
    check: 'extreme_value_ratio',
    rule: null,
    value: current,
    score,
    status,
    thresholds: applied(t),
    summary: `${pct(current)} of values beyond the baseline's extremes [${fmt(bounds.lower)}, ${fmt(bounds.upper)}] (baseline ${pct(baseline)})${mostExtreme === null ? '' : `; most extreme ${fmt(mostExtreme)}`}`,
    evidence: {
      baseline,
      current,
      below: c.below,
      above: c.above,
      finite: values,
      lowerBound: bounds.lower,
      upperBound: bounds.upper,
      baselineLowQuantile: bounds.lowerQuantileValue,
      baselineHighQuantile: bounds.upperQuantileValue,
      baselineIqr: bounds.iqr,
      iqrMultiple,
      mostExtreme,
    },
  };
}
