/**
 * Benjamini-Hochberg adjusted p-values. simple-statistics has no multiple-testing
 * correction, so it is written here.
 */
import { StatsInputError } from './errors.ts';

/**
 * Benjamini-Hochberg false discovery rate adjusted p-values (step-up procedure).
 *
 * What: for p-values sorted ascending p_(1) <= ... <= p_(k), the adjusted value of p_(i) is
 * min_{j >= i} min(1, k p_(j) / j). Rejecting every hypothesis whose adjusted p-value is
 * <= q is the BH step-up procedure at false discovery rate q. The result is monotone in
 * the p-values, capped at 1, and returned in the input order.
 *
 * Why: Plumbline tests many features every day; a per-feature p-value gate at 0.05 would
 * page on about one feature in twenty under no drift at all.
 *
 * Cost: O(k log k) for the sort, O(k) memory. Throws on a value outside [0, 1] or NaN.
 *
 * Example: benjaminiHochberg([0.01, 0.04, 0.03]) => [0.03, 0.04, 0.04]
 *
 * Source: Benjamini, Y. & Hochberg, Y. (1995), Controlling the false discovery rate: a
 * practical and powerful approach to multiple testing, JRSS B 57(1): 289-300.
 */
export function benjaminiHochberg(pValues: ArrayLike<number>): Float64Array {
  const k = pValues.length;
  for (let i = 0; i < k; i++) {
    const p = pValues[i];
    if (!(p >= 0 && p <= 1)) throw new StatsInputError(`benjaminiHochberg requires p-values in [0, 1]; pValues[${i}] is ${String(p)}`);
  }
  const order = Array.from({ length: k }, (_, i) => i).sort((x, y) => pValues[x] - pValues[y] || x - y);
  const adjusted = new Float64Array(k);
  let running = 1;
  for (let r = k - 1; r >= 0; r--) {
    const idx = order[r];
    // p * (k / rank): the factor is >= 1 and exactly 1 at the top rank, so adjusted >= p holds in floating point too.
    const v = pValues[idx] * (k / (r + 1));
    if (v < running) running = v;
    adjusted[idx] = running;
  }
  return adjusted;
}
