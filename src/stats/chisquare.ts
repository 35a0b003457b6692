/**
 * Chi-square distribution: CDF, survival function and quantile, through the regularized
 * incomplete gamma function. Needed for the PSI noise floor.
 *
 * simple-statistics provides ln Gamma (`gammaln`, Lanczos) and a normal quantile (`probit`),
 * used here; its chi-square support is a fixed table of a few probabilities
 * (`chiSquaredDistributionTable`), not accurate enough for a noise floor at any df and
 * quantile, so the incomplete gamma function and the quantile solver are written here.
 */
import { gammaln, probit } from 'simple-statistics';
import { StatsInputError } from './errors.ts';

const EPS = 1e-16;
const TINY = 1e-300;
const MAX_ITER = 10_000;

/** ln of the common factor x^a e^-x / Gamma(a). */
function logPrefactor(a: number, x: number): number {
  return a * Math.log(x) - x - gammaln(a);
}

/** Series for P(a, x), good for x < a + 1 (A&S 6.5.29). */
function gammaPSeries(a: number, x: number): number {
  let term = 1 / a;
  let sum = term;
  for (let k = 1; k < MAX_ITER; k++) {
    term *= x / (a + k);
    sum += term;
    if (Math.abs(term) < Math.abs(sum) * EPS) break;
  }
  return sum * Math.exp(logPrefactor(a, x));
}

/** Continued fraction for Q(a, x), good for x >= a + 1 (A&S 6.5.31), modified Lentz evaluation. */
function gammaQContinuedFraction(a: number, x: number): number {
  let b = x + 1 - a;
  let c = 1 / TINY;
  let d = 1 / b;
  let h = d;
  for (let k = 1; k < MAX_ITER; k++) {
    const an = -k * (k - a);
    b += 2;
    d = an * d + b;
    if (Math.abs(d) < TINY) d = TINY;
    c = b + an / c;
    if (Math.abs(c) < TINY) c = TINY;
    d = 1 / d;
    const delta = d * c;
    h *= delta;
    if (Math.abs(delta - 1) < EPS) break;
  }
  return Math.exp(logPrefactor(a, x)) * h;
}

function checkGammaArgs(fn: string, a: number, x: number): void {
  if (!(Number.isFinite(a) && a > 0)) throw new StatsInputError(`${fn} requires a finite shape a > 0; got ${String(a)}`);
  if (Number.isNaN(x) || x < 0) throw new StatsInputError(`${fn} requires x >= 0; got ${String(x)}`);
}

/**
 * Regularized lower incomplete gamma function P(a, x) = gamma(a, x) / Gamma(a).
 *
 * Why: the chi-square CDF is P(df/2, x/2). Cost: O(sqrt(a)) terms of a series or continued
 * fraction. Example: regularizedGammaP(1, 1) => 1 - e^-1 = 0.6321205588285577.
 * Source: Abramowitz & Stegun (1964), Handbook of Mathematical Functions, 6.5.29 (series)
 * and 6.5.31 (continued fraction).
 */
export function regularizedGammaP(a: number, x: number): number {
  checkGammaArgs('regularizedGammaP', a, x);
  if (x === 0) return 0;
  if (x === Infinity) return 1;
  return x < a + 1 ? gammaPSeries(a, x) : 1 - gammaQContinuedFraction(a, x);
}

/**
 * Regularized upper incomplete gamma function Q(a, x) = 1 - P(a, x), computed directly in
 * its tail so small values keep their relative accuracy.
 *
 * Example: regularizedGammaQ(1, 1) => e^-1 = 0.36787944117144233.
 * Source: Abramowitz & Stegun (1964) 6.5.29, 6.5.31.
 */
export function regularizedGammaQ(a: number, x: number): number {
  checkGammaArgs('regularizedGammaQ', a, x);
  if (x === 0) return 1;
  if (x === Infinity) return 0;
  return x < a + 1 ? 1 - gammaPSeries(a, x) : gammaQContinuedFraction(a, x);
}

function checkDf(fn: string, df: number): void {
  if (!(Number.isFinite(df) && df > 0)) throw new StatsInputError(`${fn} requires degrees of freedom df > 0; got ${String(df)}`);
}

/**
 * Chi-square cumulative distribution function P(X <= x) for X ~ chi2(df).
 *
 * Cost: as regularizedGammaP. Example: chiSquareCdf(3.841458820694124, 1) => 0.95.
 * Source: A&S (1964) 26.4.19 (chi-square CDF as an incomplete gamma ratio).
 */
export function chiSquareCdf(x: number, df: number): number {
  checkDf('chiSquareCdf', df);
  if (Number.isNaN(x)) throw new StatsInputError('chiSquareCdf requires a number x, not NaN');
  return x <= 0 ? 0 : regularizedGammaP(df / 2, x / 2);
}

/**
 * Chi-square survival function P(X > x) for X ~ chi2(df), accurate in the upper tail.
 *
 * Example: chiSquareSurvival(3.841458820694124, 1) => 0.05.
 * Source: A&S (1964) 26.4.19.
 */
export function chiSquareSurvival(x: number, df: number): number {
  checkDf('chiSquareSurvival', df);
  if (Number.isNaN(x)) throw new StatsInputError('chiSquareSurvival requires a number x, not NaN');
  return x <= 0 ? 1 : regularizedGammaQ(df / 2, x / 2);
}

/**
 * Chi-square quantile (percentage point): the x with P(X <= x) = p for X ~ chi2(df).
 *
 * What: the inverse of chiSquareCdf, for p in [0, 1] (p = 0 gives 0, p = 1 gives +Infinity).
 *
 * Why: the PSI noise floor (Yurdakul & Naranjo 2020) is (1/n + 1/m) times a chi-square
 * quantile with B - 1 degrees of freedom.
 *
 * How and cost: Wilson-Hilferty cube-root normal approximation as the start, then Newton
 * steps on the CDF (the derivative is the chi-square density) kept inside a bisection
 * bracket, to a relative step of 1e-15. For p > 0.5 the upper-tail equation Q = 1 - p is
 * solved instead, so quantiles near 1 keep their accuracy. Typically 3-6 CDF evaluations.
 *
 * Example: chiSquareQuantile(0.95, 1) => 3.841458820694124; chiSquareQuantile(0.99, 10) => 23.209251158954356
 *
 * Source: Wilson, E. B. & Hilferty, M. M. (1931), The distribution of chi-square, PNAS 17:
 * 684-688 (start value); Abramowitz & Stegun (1964) 26.4.17 and table 26.8 (check values).
 */
export function chiSquareQuantile(p: number, df: number): number {
  checkDf('chiSquareQuantile', df);
  if (!(p >= 0 && p <= 1)) throw new StatsInputError(`chiSquareQuantile requires a probability p in [0, 1]; got ${String(p)}`);
  if (p === 0) return 0;
  if (p === 1) return Infinity;
  const a = df / 2;
  const upper = p > 0.5;
  const target = upper ? 1 - p : p;
  // g(x) = F(x) - p expressed so that it increases with x in both branches.
  const g = (x: number): number => (upper ? target - regularizedGammaQ(a, x / 2) : regularizedGammaP(a, x / 2) - target);
  const logDensity = (x: number): number => (a - 1) * Math.log(x / 2) - x / 2 - gammaln(a) - Math.LN2;

  // Start: Wilson-Hilferty; fall back to a small positive value when it is not usable.
  const z = probit(p);
  const h = 2 / (9 * df);
  let x = df * Math.pow(1 - h + z * Math.sqrt(h), 3);
  if (!(x > 0 && Number.isFinite(x))) x = Math.min(df, 1) * 1e-3;

  // Bracket [lo, hi] with g(lo) < 0 <= g(hi).
  let lo = 0;
  let hi = Infinity;
  for (let iter = 0; iter < 200; iter++) {
    const gx = g(x);
    if (gx === 0) return x;
    if (gx < 0) lo = x;
    else hi = x;
    const step = gx / Math.exp(logDensity(x));
    let next = x - step;
    if (!(next > lo && next < hi) || !Number.isFinite(next)) {
      next = hi === Infinity ? Math.max(2 * x, x + 1) : (lo + hi) / 2;
    }
    if (Math.abs(next - x) <= 1e-15 * Math.abs(next) || (hi !== Infinity && hi - lo <= 1e-15 * hi)) return next;
    x = next;
  }
  return x;
}
