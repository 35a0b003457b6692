/**
 * The fault scenario of the end-to-end run tests (tests/integration/run-day.test.ts and
 * pushdown.test.ts): 14 clean baseline days of the invented scenario of demo-data/, then one
 * injected fault a day, each with the finding that must catch it.
 */
import { addDays, type FaultPlan, type ScenarioOptions } from '../../demo-data/scenario.ts';

export const START = '2025-06-02'; // a Monday
export const BASELINE_DAYS = 14;
export const faultDay = (i: number): string => addDays(START, BASELINE_DAYS + i);

export interface FaultCase {
  plan: FaultPlan;
  /** The finding that must catch the fault, at this level or worse. */
  expect: { feature: string | null; check: string; rule?: string; atLeast: 'warn' | 'critical' };
}

/** One fault per day after the clean baseline; the expected finding beside each. */
export const FAULTS: FaultCase[] = [
  { plan: { date: faultDay(0), kind: 'mean_shift', feature: 'semantic_similarity', amount: 0.5 }, expect: { feature: 'semantic_similarity', check: 'ks', atLeast: 'warn' } },
  { plan: { date: faultDay(1), kind: 'unit_change', feature: 'price', amount: 100 }, expect: { feature: 'price', check: 'psi', atLeast: 'critical' } },
  { plan: { date: faultDay(2), kind: 'null_spike', feature: 'review_count', amount: 0.2 }, expect: { feature: 'review_count', check: 'null_ratio', atLeast: 'critical' } },
  { plan: { date: faultDay(3), kind: 'minmax_raw', feature: 'text_match_norm' }, expect: { feature: 'text_match_norm', check: 'rule_violation_ratio', rule: 'minmax', atLeast: 'critical' } },
  { plan: { date: faultDay(4), kind: 'stuck_default', feature: 'listing_age_days', amount: 0 }, expect: { feature: 'listing_age_days', check: 'constant', atLeast: 'critical' } },
  { plan: { date: faultDay(5), kind: 'flat_within_lists', feature: 'photo_quality' }, expect: { feature: 'photo_quality', check: 'flat_list_ratio', atLeast: 'critical' } },
  { plan: { date: faultDay(6), kind: 'list_truncation', amount: 0.4 }, expect: { feature: null, check: 'list_size_psi', atLeast: 'critical' } },
  { plan: { date: faultDay(7), kind: 'new_category', feature: 'plant_family', amount: 0.3 }, expect: { feature: 'plant_family', check: 'new_category_ratio', atLeast: 'critical' } },
  { plan: { date: faultDay(8), kind: 'nonfinite', feature: 'text_match', amount: 0.02 }, expect: { feature: 'text_match', check: 'nonfinite_ratio', atLeast: 'critical' } },
  { plan: { date: faultDay(9), kind: 'duplicate_items', amount: 0.2 }, expect: { feature: null, check: 'duplicate_item_ratio', atLeast: 'critical' } },
  // review_count declares only a minimum: 1e308 is "in range", PSI and KS barely move.
  { plan: { date: faultDay(10), kind: 'overflow', feature: 'review_count', amount: 0.1 }, expect: { feature: 'review_count', check: 'extreme_value_ratio', atLeast: 'critical' } },
];

export const SCENARIO: ScenarioOptions = {
  startDate: START,
  days: BASELINE_DAYS + FAULTS.length,
  listsPerDay: 200,
  meanListSize: 20,
  seed: 7,
  faults: FAULTS.map((f) => f.plan),
};
