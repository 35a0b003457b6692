/**
 * The slice scenario: the invented marketplace of demo-data/ with a list-level `market`
 * column (five invented markets, one of them, "isle", about 6 % of the lists), 14 clean
 * baseline days, then clean days and days with a shift confined to the top 10 positions or
 * to one market. Shifts are injected in SQL after loading, so the generator stays as it is.
 */
import { addDays, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario, type Queryable } from '../../demo-data/load.ts';

export const SLICE_START = '2025-05-05'; // a Monday
export const SLICE_BASELINE_DAYS = 14;
/** Clean evaluation days after the baseline (a week: every weekday and the weekend). */
export const CLEAN_DAYS = 7;
export const cleanDay = (i: number): string => addDays(SLICE_START, SLICE_BASELINE_DAYS + i);
/** The day with a shift in the top 10 positions only, and the day with a shift in one market only. */
export const TOP_SHIFT_DAY = addDays(SLICE_START, SLICE_BASELINE_DAYS + CLEAN_DAYS);
export const SEGMENT_SHIFT_DAY = addDays(SLICE_START, SLICE_BASELINE_DAYS + CLEAN_DAYS + 1);

/** Markets by share of lists (cumulative bounds on a hash of the list id in [0, 1)). */
export const MARKETS: readonly { name: string; upTo: number }[] = [
  { name: 'north', upTo: 0.4 },
  { name: 'south', upTo: 0.7 },
  { name: 'east', upTo: 0.9 },
  { name: 'reef', upTo: 0.94 },
  { name: 'isle', upTo: 1 },
];

export function sliceScenario(listsPerDay: number, meanListSize: number): ScenarioOptions {
  return { startDate: SLICE_START, days: SLICE_BASELINE_DAYS + CLEAN_DAYS + 2, listsPerDay, meanListSize, seed: 4242 };
}

/**
 * Loads the scenario into `table` (wide layout) with its market column, then injects:
 * - TOP_SHIFT_DAY: text_match x 1.3 at positions 1..10 (about 0.65 sd of its logarithm);
 * - SEGMENT_SHIFT_DAY: price x 2.5 in the market "isle" (about 6 % of the lists).
 */
export async function loadSliceScenario(client: Queryable, table: string, size: { listsPerDay: number; meanListSize: number }, method?: 'copy' | 'unnest', dates?: string[]): Promise<void> {
  await loadScenario(client, { table, layout: 'wide', scenario: sliceScenario(size.listsPerDay, size.meanListSize), ...(method !== undefined ? { method } : {}), ...(dates !== undefined ? { dates } : {}) });
  // Not the hash the engines sample whole lists by (substr 1..8 of the same md5): markets must not follow it.
  const h = `(('x' || substr(md5(list_id), 9, 8))::bit(32)::bigint / 4294967296.0)`;
  const cases = MARKETS.map((m) => `WHEN ${h} < ${m.upTo} THEN '${m.name}'`).join(' ');
  await client.query(`ALTER TABLE ${table} ADD COLUMN market text`);
  await client.query(`UPDATE ${table} SET market = CASE ${cases} END`);
  await client.query(`UPDATE ${table} SET text_match = text_match * 1.3 WHERE snapshot_date = $1 AND position <= 10`, [TOP_SHIFT_DAY]);
  await client.query(`UPDATE ${table} SET price = price * 2.5 WHERE snapshot_date = $1 AND market = 'isle'`, [SEGMENT_SHIFT_DAY]);
  await client.query(`ANALYZE ${table}`);
}
