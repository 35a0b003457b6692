/**
 * PSI of a categorical feature, with categories the baseline never saw.
 */
import { StatsInputError } from './errors.ts';
import { psi } from './psi.ts';
import type { PsiResult } from './psi.ts';

function readCounts(side: string, counts: Record<string, number>): Map<string, number> {
  const out = new Map<string, number>();
  for (const key of Object.keys(counts)) {
    const c = counts[key];
    if (!(typeof c === 'number' && Number.isFinite(c) && c >= 0)) {
      throw new StatsInputError(`categoryPsi requires finite non-negative counts; ${side}[${JSON.stringify(key)}] is ${String(c)}`);
    }
    if (c > 0) out.set(key, c);
  }
  return out;
}

/** Code-unit order, so the result does not depend on the process locale. */
function byName(a: string, b: string): number {
  return a < b ? -1 : a > b ? 1 : 0;
}

/**
 * Population stability index of a categorical feature.
 *
 * What: PSI over the union of categories, with the empty-bin rule of psi() (a category
 * absent on one side gets half a count there). A category is seen in the baseline when its
 * baseline count is > 0; categories with a zero count on both sides are dropped (they would
 * contribute 0). Order of `categories` (and of contributions and shares): baseline
 * categories by baseline share, largest first (ties by name), then the unseen ones by
 * current count, largest first (ties by name). `unseen` lists the categories absent from the
 * baseline, in that order, and `unseenShare` is the share of current rows that fall in them.
 *
 * Why: a new category (a new device type, a renamed value) is invisible to a numeric
 * histogram; PSI with an explicit unseen share shows both how much moved and where.
 *
 * Cost: O(k log k) for k categories. Throws on negative or non-finite counts and when either
 * side has no rows.
 *
 * Example: categoryPsi({ a: 60, b: 40 }, { a: 50, b: 40, c: 10 }) => categories ['a', 'b', 'c'],
 * unseen ['c'], unseenShare 0.1, psi as psi([60, 40, 0], [50, 40, 10])
 *
 * Source: Siddiqi, N. (2006), Credit Risk Scorecards, Wiley (PSI over attribute groups).
 */
export function categoryPsi(
  baseline: Record<string, number>,
  current: Record<string, number>,
): PsiResult & { categories: string[]; unseenShare: number; unseen: string[] } {
  const b = readCounts('baseline', baseline);
  const c = readCounts('current', current);
  if (b.size === 0) throw new StatsInputError('categoryPsi requires at least one baseline row');
  if (c.size === 0) throw new StatsInputError('categoryPsi requires at least one current row');
  const seen = [...b.keys()].sort((x, y) => (b.get(y) as number) - (b.get(x) as number) || byName(x, y));
  const unseen = [...c.keys()].filter((k) => !b.has(k)).sort((x, y) => (c.get(y) as number) - (c.get(x) as number) || byName(x, y));
  const categories = [...seen, ...unseen];
  const bc = categories.map((k) => b.get(k) ?? 0);
  const cc = categories.map((k) => c.get(k) ?? 0);
  const result = psi(bc, cc);
  let currentTotal = 0;
  for (const v of cc) currentTotal += v;
  let unseenTotal = 0;
  for (const k of unseen) unseenTotal += c.get(k) as number;
  return { ...result, categories, unseenShare: unseenTotal / currentTotal, unseen };
}
