/**
 * Adaptive drift thresholds: each feature's PSI and KS thresholds learned from its own
 * day-to-day variation over the baseline window.
 *
 * Method: for every baseline day, the statistic of that day against the rest of the window
 * (leave one out, profile/variation.ts). With Q the `quantile` of those values (linear
 * interpolation, Hyndman & Fan definition 7, simple-statistics' quantileSorted):
 *   warn = max(floor, margin * Q),   critical = criticalMultiple * warn.
 * With fewer than `minDays` leave-one-out values, the fixed thresholds apply.
 *
 * Assumptions, stated because they decide what the mode can promise:
 * - the baseline window is clean and its days are exchangeable with the day judged, apart
 *   from the variation that is meant to be learned (weekly seasonality, promotions): a
 *   window holding a past break learns that break as normal;
 * - with W days the quantile is only as fine as 1/W (28 days: a 95 % quantile lies between
 *   the two largest values), hence the default quantile 1, the largest value, with a margin;
 * - a baseline day is judged on its thinned stored sample, the current day on all its rows,
 *   so the learned values carry a little more sampling noise than the day does: the
 *   thresholds err toward quiet;
 * - the floor keeps a feature that hardly moves from paging on sampling noise alone; the
 *   PSI noise floor and the KS p-value gate still apply on top.
 */
import { quantileSorted } from 'simple-statistics';
import type { AboveThreshold, Config } from '../config/index.ts';

export type AdaptiveConfig = Config['thresholds']['adaptive'];

export interface LearnedThreshold {
  threshold: AboveThreshold;
  /** How it was learned: goes into the finding's evidence as `learnedThreshold`. */
  evidence: {
    method: 'leave_one_out';
    statistic: 'psi' | 'ks';
    days: number;
    quantile: number;
    quantileValue: number;
    margin: number;
    criticalMultiple: number;
    floor: number;
    fixed: AboveThreshold;
  };
}

/** The learned thresholds from leave-one-out values, or null when there are too few of them. */
export function learnThreshold(statistic: 'psi' | 'ks', looValues: readonly number[] | undefined, fixed: AboveThreshold, a: AdaptiveConfig): LearnedThreshold | null {
  const values = (looValues ?? []).filter((v) => Number.isFinite(v));
  if (values.length < a.minDays) return null;
  const sorted = [...values].sort((x, y) => x - y);
  const q = quantileSorted(sorted, a.quantile);
  const floor = a.floor[statistic];
  const warn = Math.max(floor, a.margin * q);
  return {
    threshold: { warn, critical: a.criticalMultiple * warn },
    evidence: { method: 'leave_one_out', statistic, days: values.length, quantile: a.quantile, quantileValue: q, margin: a.margin, criticalMultiple: a.criticalMultiple, floor, fixed },
  };
}
