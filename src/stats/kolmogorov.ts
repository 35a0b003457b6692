/**
 * Kolmogorov's limit distribution, the large-sample law of sqrt(n) * D for the one-sample
 * and of sqrt(n m / (n + m)) * D for the two-sample Kolmogorov-Smirnov statistic.
 * No library in package.json provides it (simple-statistics has no Kolmogorov-Smirnov
 * support), so it is written here.
 */
import { StatsInputError } from './errors.ts';

const SQRT_2PI = Math.sqrt(2 * Math.PI);
const PI2_OVER_8 = (Math.PI * Math.PI) / 8;
/** Below this x the theta-function series for the CDF converges fastest; above it, the alternating series for the survival function. */
const SWITCH_X = 1;

/** Both tails at once, each from the series that is accurate for it. */
function kolmogorovBoth(x: number): { cdf: number; sf: number } {
  if (x <= 0) return { cdf: 0, sf: 1 };
  if (x === Infinity) return { cdf: 1, sf: 0 };
  if (x < SWITCH_X) {
    // K(x) = sqrt(2 pi) / x * sum_{k>=1} exp(-(2k-1)^2 pi^2 / (8 x^2)); terms fall off fast.
    const w = -PI2_OVER_8 / (x * x);
    let s = 0;
    for (let k = 1; k < 100; k++) {
      const t = Math.exp((2 * k - 1) * (2 * k - 1) * w);
      s += t;
      if (t <= 1e-17 * s || t === 0) break;
    }
    const cdf = (SQRT_2PI / x) * s;
    return { cdf, sf: 1 - cdf };
  }
  // Q(x) = 2 sum_{k>=1} (-1)^(k-1) exp(-2 k^2 x^2).
  const w = -2 * x * x;
  let s = 0;
  for (let k = 1; k < 100; k++) {
    const t = Math.exp(k * k * w);
    s += k % 2 === 1 ? t : -t;
    if (t <= 1e-17 * s || t === 0) break;
  }
  const sf = 2 * s;
  return { cdf: 1 - sf, sf };
}

/**
 * Kolmogorov survival function (limit distribution of the Kolmogorov-Smirnov statistic).
 *
 * What: Q_KS(x) = P(K > x) = 2 sum_{k>=1} (-1)^(k-1) exp(-2 k^2 x^2), the probability that
 * the supremum of a Brownian bridge's absolute value exceeds x. x <= 0 gives 1.
 *
 * Why: the asymptotic two-sided p-value of the two-sample test is Q_KS(sqrt(en) D) with
 * en = n m / (n + m).
 *
 * How and cost: for x >= 1 the alternating series above (at most ~6 terms to double
 * precision); for x < 1, where that series converges slowly, 1 - K(x) with the equivalent
 * theta-function form K(x) = sqrt(2 pi) / x sum_{k>=1} exp(-(2k-1)^2 pi^2 / (8 x^2)). O(1).
 *
 * Example: kolmogorovSurvival(1.3580986393225505) => 0.05 (the 5 % critical value).
 *
 * Source: Kolmogorov, A. (1933), Sulla determinazione empirica di una legge di
 * distribuzione, Giornale dell'Istituto Italiano degli Attuari 4: 83-91; the theta-function
 * form as given by Marsaglia, Tsang & Wang (2003), Evaluating Kolmogorov's distribution,
 * Journal of Statistical Software 8(18).
 */
export function kolmogorovSurvival(x: number): number {
  if (Number.isNaN(x)) throw new StatsInputError('kolmogorovSurvival requires a number, not NaN');
  return kolmogorovBoth(x).sf;
}

/**
 * Kolmogorov cumulative distribution function K(x) = 1 - Q_KS(x), accurate for small x
 * (theta-function series) as well as large x. Source and cost: as kolmogorovSurvival.
 *
 * Example: kolmogorovCdf(1) => 0.7300003283226455
 */
export function kolmogorovCdf(x: number): number {
  if (Number.isNaN(x)) throw new StatsInputError('kolmogorovCdf requires a number, not NaN');
  return kolmogorovBoth(x).cdf;
}

/**
 * Inverse Kolmogorov survival function: the x with Q_KS(x) = p, for p in (0, 1].
 *
 * Why: asymptotic critical values of the two-sample test, D_crit(alpha) =
 * kolmogorovSurvivalInverse(alpha) * sqrt((n + m) / (n m)) (Smirnov 1948 tabulates
 * c(alpha) = 1.22, 1.36, 1.63 for alpha = 0.10, 0.05, 0.01).
 *
 * Cost: about 50 bisection steps on a bracket of [0, 10] (Q_KS(10) < 1e-86, widened for
 * smaller p), to a relative width of 1e-15. Example: kolmogorovSurvivalInverse(0.05) => 1.3580986393225505
 *
 * Source: Smirnov, N. (1948), Table for estimating the goodness of fit of empirical
 * distributions, Annals of Mathematical Statistics 19(2): 279-281.
 */
export function kolmogorovSurvivalInverse(p: number): number {
  if (!(p > 0 && p <= 1)) throw new StatsInputError(`kolmogorovSurvivalInverse requires p in (0, 1]; got ${String(p)}`);
  if (p === 1) return 0;
  let lo = 0;
  let hi = 10;
  if (kolmogorovSurvival(hi) > p) {
    while (kolmogorovSurvival(hi) > p) hi *= 2;
  }
  for (let i = 0; i < 200 && hi - lo > 1e-15 * hi; i++) {
    const mid = (lo + hi) / 2;
    if (kolmogorovSurvival(mid) > p) lo = mid;
    else hi = mid;
  }
  return (lo + hi) / 2;
}
