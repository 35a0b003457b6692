/**
 * PSI of a categorical feature, with categories the baseline never saw.
 */
import { StatsInputError } from './errors.ts';
import { psi } from './psi.ts';
import type { PsiResult } from './psi.ts';

/**
 * Keys for the bucket of the categories beyond the kept ones, and for missing values, in a
 * comparison built in memory (never stored: jsonb cannot hold NUL either). PostgreSQL text
 * cannot contain NUL, so no category read from the source can equal them.
 */
export const OTHER_CATEGORY = '\u0000other';
export const NULL_CATEGORY = '\u0000null';

/** Category counts as a Map (a plain object would turn `constructor` or `__proto__` into inherited members). */
export type CategoryCounts = ReadonlyMap<string, number>;

function entriesOf(counts: CategoryCounts | Record<string, number>): [string, unknown][] {
  return counts instanceof Map ? [...counts] : Object.keys(counts).map((k) => [k, (counts as Record<string, number>)[k]]);
}

function readCounts(side: string, counts: CategoryCounts | Record<string, number>): Map<string, number> {
  const out = new Map<string, number>();
  for (const [key, c] of entriesOf(counts)) {
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
 * Counts come as a Map (or, for literals, an object's own keys).
 *
 * Example: categoryPsi({ a: 60, b: 40 }, { a: 50, b: 40, c: 10 }) => categories ['a', 'b', 'c'],
 * unseen ['c'], unseenShare 0.1, psi as psi([60, 40, 0], [50, 40, 10])
 *
 * Source: Siddiqi, N. (2006), Credit Risk Scorecards, Wiley (PSI over attribute groups).
 */
export function categoryPsi(
  baseline: CategoryCounts | Record<string, number>,
  current: CategoryCounts | Record<string, number>,
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

/**
 * A category value cut to at most `maxLength` characters (Unicode code points, as PostgreSQL's
 * left() counts them), with "…" appended when it was cut, so a cut value never equals an
 * uncut one of the same length.
 *
 * Why: category strings come from the data; a 10 kB value repeated in every row must not
 * become 10 kB per distinct value in memory, in the store and in evidence.
 *
 * Cost: O(maxLength). Example: truncateCategory('abcdef', 3) => 'abc…'
 *
 * Source: definition of this unit.
 */
export function truncateCategory(value: string, maxLength: number): string {
  if (value.length <= maxLength) return value;
  const points = Array.from(value.slice(0, 2 * maxLength));
  return points.length <= maxLength && value.length <= 2 * maxLength ? value : `${points.slice(0, maxLength).join('')}\u2026`;
}

/**
 * The `limit` most frequent categories (ties by name, code-unit order), and the rows of all the
 * others added to `other` (the rows already outside the kept categories, 0 by default).
 *
 * Why: the number of distinct values of a categorical feature is set by the data, not by the
 * config; a profile kept for months must not grow with it. The heavy hitters carry nearly all
 * of a PSI; the tail is compared as one bucket.
 *
 * Cost: O(k log k) for k categories. Example: boundCategories(new Map([['a', 5], ['b', 3], ['c', 1]]), 1)
 *   => { kept: Map { 'a' => 5 }, other: 4 }
 *
 * Source: definition of this unit (a top-k summary with a remainder bucket).
 */
export function boundCategories(counts: CategoryCounts, limit: number, other = 0): { kept: Map<string, number>; other: number } {
  if (!(Number.isInteger(limit) && limit >= 1)) throw new StatsInputError(`boundCategories requires a limit that is an integer >= 1; got ${String(limit)}`);
  if (counts.size <= limit) return { kept: new Map(counts), other };
  const named = [...counts].sort((x, y) => y[1] - x[1] || byName(x[0], y[0]));
  let rest = other;
  for (let i = limit; i < named.length; i++) rest += named[i]![1];
  return { kept: new Map(named.slice(0, limit)), other: rest };
}
