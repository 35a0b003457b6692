/**
 * Population stability index over binned counts, and its no-drift noise floor.
 * simple-statistics has no PSI; its compensated `sum` is used for the totals.
 */
import { sum } from 'simple-statistics';
import { chiSquareQuantile } from './chisquare.ts';
import { StatsInputError } from './errors.ts';
import { asReadonlyArray, requireInteger } from './validate.ts';

export interface PsiResult {
  psi: number;
  contributions: number[];
  baselineShares: number[];
  currentShares: number[];
}

/**
 * The share used in place of an empty bin: half a count of that side, 0.5 / total.
 * Exported so evidence and SQL code can state the same rule.
 */
export const PSI_EMPTY_BIN_COUNT = 0.5;

function checkCounts(fn: string, side: string, counts: ArrayLike<number>): number {
  for (let i = 0; i < counts.length; i++) {
    const c = counts[i];
    if (!(Number.isFinite(c) && c >= 0)) {
      throw new StatsInputError(`${fn} requires finite non-negative counts; ${side}[${i}] is ${String(c)}`);
    }
  }
  const total = sum(asReadonlyArray(counts));
  if (!(total > 0)) throw new StatsInputError(`${fn} requires a positive total on each side; the ${side} total is 0`);
  return total;
}

/**
 * Population stability index (PSI) of two histograms over the same bins.
 *
 * What: PSI = sum_i (c_i - b_i) ln(c_i / b_i), where b_i and c_i are the baseline and
 * current shares of bin i (count / side total). Equivalently the Jeffreys divergence,
 * KL(c || b) + KL(b || c). Each term is >= 0, so PSI >= 0, and 0 for identical shares.
 *
 * Empty-bin rule: a bin empty on one side only gets, on that side, the share of half a
 * count, 0.5 / total of that side, before the difference and the log are taken; the other
 * shares are not renormalised. A bin empty on both sides contributes 0. This keeps every
 * term finite and >= 0, and makes a value range the baseline never saw count in proportion
 * to how many current rows land there. Returned shares are the raw count / total (no
 * smoothing); contributions are computed with the smoothed shares and sum to `psi`.
 *
 * Why: a drift measure with a familiar scale. Rule of thumb (common practice in credit
 * scoring, not a statistical test): < 0.1 stable, 0.1 - 0.25 moderate shift, > 0.25 major.
 * Under no drift PSI grows as the samples shrink; see psiNoiseFloor.
 *
 * Cost: O(B). Throws on different lengths, negative or non-finite counts, or a side whose
 * total is 0.
 *
 * Example: psi([50, 50], [40, 60]) => psi = 0.1 ln(1.5) = 0.04054651081081644,
 * contributions [0.1 ln(1.25), 0.1 ln(1.2)]
 *
 * Source: Siddiqi, N. (2006), Credit Risk Scorecards, Wiley (PSI and the 0.1 / 0.25 rule of
 * thumb); Jeffreys, H. (1946), An invariant form for the prior probability in estimation
 * problems, Proc. R. Soc. A 186: 453-461 (the symmetric divergence).
 */
export function psi(baselineCounts: ArrayLike<number>, currentCounts: ArrayLike<number>): PsiResult {
  const fn = 'psi';
  if (baselineCounts.length !== currentCounts.length) {
    throw new StatsInputError(
      `${fn} requires baseline and current counts over the same bins; got ${baselineCounts.length} and ${currentCounts.length}`,
    );
  }
  const nb = checkCounts(fn, 'baseline', baselineCounts);
  const nc = checkCounts(fn, 'current', currentCounts);
  const k = baselineCounts.length;
  const contributions: number[] = new Array<number>(k);
  const baselineShares: number[] = new Array<number>(k);
  const currentShares: number[] = new Array<number>(k);
  let total = 0;
  for (let i = 0; i < k; i++) {
    const bc = baselineCounts[i];
    const cc = currentCounts[i];
    baselineShares[i] = bc / nb;
    currentShares[i] = cc / nc;
    if (bc === 0 && cc === 0) {
      contributions[i] = 0;
      continue;
    }
    const b = (bc === 0 ? PSI_EMPTY_BIN_COUNT : bc) / nb;
    const c = (cc === 0 ? PSI_EMPTY_BIN_COUNT : cc) / nc;
    const t = (c - b) * Math.log(c / b);
    contributions[i] = t;
    total += t;
  }
  return { psi: total, contributions, baselineShares, currentShares };
}

/**
 * PSI noise floor: the PSI that sampling noise alone exceeds with probability 1 - quantile.
 *
 * What: (1/n + 1/m) * chiSquareQuantile(quantile, bins - 1). Under no shift, with B bins of
 * nonzero probability, n baseline and m current rows, PSI is approximately distributed as
 * (1/n + 1/m) chi2(B - 1), so its mean is (1/n + 1/m)(B - 1).
 *
 * Why: a fixed PSI threshold pages on small samples for noise and misses real shifts on
 * large ones; comparing PSI with this floor makes the verdict sample-size aware. Pass as
 * `bins` the bins that can hold baseline mass (bins with a baseline count > 0, plus the
 * null bin if the baseline has nulls): bins empty in the baseline are empty under no shift.
 *
 * Cost: one chi-square quantile, O(1) in practice. Example: psiNoiseFloor(1000, 1000, 10, 0.95)
 * => 0.002 * 16.918977604620448 = 0.033837955209240896
 *
 * Source: Yurdakul, B. & Naranjo, J. (2020), Statistical properties of the population
 * stability index, Journal of Risk Model Validation 14(4).
 *
 * @param n baseline row count (> 0)
 * @param m current row count (> 0)
 * @param bins number of bins B, integer >= 2
 * @param quantile probability in (0, 1), e.g. 0.95 or 0.99
 */
export function psiNoiseFloor(n: number, m: number, bins: number, quantile: number): number {
  const fn = 'psiNoiseFloor';
  if (!(Number.isFinite(n) && n > 0)) throw new StatsInputError(`${fn} requires a baseline size n > 0; got ${String(n)}`);
  if (!(Number.isFinite(m) && m > 0)) throw new StatsInputError(`${fn} requires a current size m > 0; got ${String(m)}`);
  requireInteger(fn, 'bins', bins, 2);
  if (!(quantile > 0 && quantile < 1)) throw new StatsInputError(`${fn} requires a quantile in (0, 1); got ${String(quantile)}`);
  return (1 / n + 1 / m) * chiSquareQuantile(quantile, bins - 1);
}
