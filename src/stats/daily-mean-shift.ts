/**
 * The shift of a day's mean of per-list values (a rank correlation, a reciprocal rank, an
 * NDCG) against the same mean on the baseline's days, with a noise floor that needs no
 * distributional assumption about the per-list values.
 */
import { StatsInputError } from './errors.ts';

/** Mergeable sums of per-list values: lists counted, sum, sum of squares. */
export interface MeanSums {
  count: number;
  sum: number;
  sumSq: number;
}

export function emptyMeanSums(): MeanSums {
  return { count: 0, sum: 0, sumSq: 0 };
}

export function addToMeanSums(s: MeanSums, x: number): void {
  s.count++;
  s.sum += x;
  s.sumSq += x * x;
}

export function mergeMeanSums(a: MeanSums, b: MeanSums): MeanSums {
  return { count: a.count + b.count, sum: a.sum + b.sum, sumSq: a.sumSq + b.sumSq };
}

/** Mean of the per-list values, or null without any list. */
export function meanOfSums(s: MeanSums): number | null {
  return s.count > 0 ? s.sum / s.count : null;
}

/** Sample variance (divide by count - 1) of the per-list values, or null below two lists. */
export function varianceOfSums(s: MeanSums): number | null {
  if (s.count < 2) return null;
  return Math.max(0, (s.sumSq - (s.sum * s.sum) / s.count) / (s.count - 1));
}

export interface MeanShift {
  current: number;
  /** Mean over baseline days of each day's mean (every day weighs the same). */
  baselineMean: number;
  /** Sample standard deviation of the baseline days' means (null below two days). */
  baselineDaySd: number | null;
  /** Day-to-day standard deviation beyond list sampling, estimated from the baseline days. */
  betweenDaySd: number;
  /** Standard error of the current mean from its lists, with the baseline's per-list variance. */
  currentSe: number;
  /** Standard deviation of (current - baselineMean) when nothing changed. */
  noise: number;
  change: number;
  /** |change| / noise (Infinity for a change over zero noise, 0 for no change). */
  z: number;
  days: number;
}

/**
 * Shift of the current day's mean of per-list values against the baseline days' means.
 *
 * What: change = mean_today - mean over baseline days d of mean_d. Under no change, with
 * lists independent and v the per-list variance (pooled over the baseline's lists):
 *   Var(mean_today) = s_b^2 + v / n_today      (s_b: true day-to-day spread)
 *   Var(baseline mean) = s_d^2 / D             (s_d: sample SD of the D daily means)
 * with s_b^2 estimated as max(0, s_d^2 - v * mean_d(1 / n_d)) (the spread of daily means
 * minus their own sampling variance). noise = sqrt(s_b^2 + v / n_today + s_d^2 / D), and
 * with a single baseline day (no spread to measure) sqrt(v / n_today + v / n_1).
 *
 * Why: the standard error of a mean of per-list values comes from their empirical variance,
 * so nothing is assumed about their distribution (a rank correlation's depends on list sizes
 * and ties; a reciprocal rank's is far from normal); the baseline days' spread adds the
 * day-to-day variation (weekly seasonality) that list sampling alone would miss.
 *
 * Cost: O(D). Returns null when the current day or every baseline day has no list.
 *
 * Source: the variance of a sample mean and of a difference of independent means (any
 * statistics text, e.g. Rice, Mathematical Statistics and Data Analysis, ch. 7); the
 * between-day component as in one-way random-effects analysis of variance.
 */
export function dailyMeanShift(current: MeanSums, baselineDays: readonly MeanSums[]): MeanShift | null {
  for (const s of [current, ...baselineDays]) {
    if (!(Number.isInteger(s.count) && s.count >= 0 && Number.isFinite(s.sum) && Number.isFinite(s.sumSq))) {
      throw new StatsInputError(`dailyMeanShift requires finite sums over a whole number of lists; got ${JSON.stringify(s)}`);
    }
  }
  const days = baselineDays.filter((d) => d.count > 0);
  if (current.count === 0 || days.length === 0) return null;
  const means = days.map((d) => d.sum / d.count);
  const D = days.length;
  const baselineMean = means.reduce((a, b) => a + b, 0) / D;
  let pooled = emptyMeanSums();
  for (const d of days) pooled = mergeMeanSums(pooled, d);
  const v = varianceOfSums(pooled) ?? varianceOfSums(current) ?? 0;
  const cur = current.sum / current.count;
  const currentSe = Math.sqrt(v / current.count);
  let baselineDaySd: number | null = null;
  let between2 = 0;
  let noise2: number;
  if (D >= 2) {
    const sd2 = means.reduce((a, m) => a + (m - baselineMean) ** 2, 0) / (D - 1);
    baselineDaySd = Math.sqrt(sd2);
    const meanInvN = days.reduce((a, d) => a + 1 / d.count, 0) / D;
    between2 = Math.max(0, sd2 - v * meanInvN);
    noise2 = between2 + v / current.count + sd2 / D;
  } else {
    noise2 = v / current.count + v / days[0]!.count;
  }
  const noise = Math.sqrt(noise2);
  const change = cur - baselineMean;
  const z = change === 0 ? 0 : noise > 0 ? Math.abs(change) / noise : Infinity;
  return { current: cur, baselineMean, baselineDaySd, betweenDaySd: Math.sqrt(between2), currentSe, noise, change, z, days: D };
}
