/**
 * Faults that leave every feature's day-wide distribution intact and break the ranking,
 * injected into the invented scenario (demo-data/scenario.ts) and profiled without a
 * database: a polarity flip inside lists, a shuffle inside lists, and the served order
 * scrambled in 30 % of lists. Each must be caught by a ranking check at warn or worse while
 * no marginal check (psi, ks) fires and the faulted feature's KS D against the same day
 * without the fault stays below 0.01; clean days with weekly seasonality must stay quiet.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import { addDays, type FaultPlan, type ScenarioOptions } from '../../../demo-data/scenario.ts';
import { evaluateDay } from '../../../src/checks/index.ts';
import { buildDayProfile, capDayProfile, mergeBaseline, type DayProfile } from '../../../src/profile/index.ts';
import type { Finding, Status } from '../../../src/report/index.ts';
import { ks2 } from '../../../src/stats/index.ts';
import { scenarioColumns } from '../../support/scenario-columns.ts';
import { scenarioConfig } from '../../support/scenario-config.ts';

type Draft = Omit<Finding, 'alert'>;
const START = '2025-06-02'; // a Monday
const WINDOW = 28;
const CLEAN_EVALUATED = 14;
const faultDate = (i: number): string => addDays(START, WINDOW + CLEAN_EVALUATED + i);

const FAULTS: { plan: FaultPlan; expect: { feature: string | null; check: string }[] }[] = [
  { plan: { date: faultDate(0), kind: 'polarity_flip', feature: 'semantic_similarity' }, expect: [{ feature: 'semantic_similarity', check: 'position_rank_correlation' }, { feature: 'semantic_similarity', check: 'score_rank_correlation' }] },
  { plan: { date: faultDate(1), kind: 'shuffle_within_lists', feature: 'text_match' }, expect: [{ feature: 'text_match', check: 'position_rank_correlation' }, { feature: 'text_match', check: 'score_rank_correlation' }] },
  // The score's own association with the position: -1 when the list is served by score.
  { plan: { date: faultDate(2), kind: 'order_scrambled', amount: 0.3 }, expect: [{ feature: 'model_score', check: 'position_rank_correlation' }] },
  // Outcomes: at 30 % of 400 lists a day the reciprocal rank falls by about 0.06, under 3 x its
  // noise (the weekly swing of the outcomes dominates); at 60 % they page.
  {
    plan: { date: faultDate(3), kind: 'order_scrambled', amount: 0.6 },
    expect: [
      { feature: 'model_score', check: 'position_rank_correlation' },
      { feature: null, check: 'mean_reciprocal_rank' },
      { feature: null, check: 'ndcg' },
    ],
  },
];
const OPTIONS: ScenarioOptions = { startDate: START, days: WINDOW + CLEAN_EVALUATED + FAULTS.length, listsPerDay: 400, meanListSize: 20, seed: 11, faults: FAULTS.map((f) => f.plan) };
const CLEAN: ScenarioOptions = { ...OPTIONS, faults: [] };
const config = scenarioConfig('demo.brindlemoss_impressions', { storeSchema: 'unused' });
const RANKING_CHECKS = new Set(['position_rank_correlation', 'score_rank_correlation', 'mean_reciprocal_rank', 'ndcg', 'positive_position_psi']);
const atLeastWarn = (s: Status): boolean => s !== 'ok';

const stored = new Map<string, DayProfile>();
async function evaluate(options: ScenarioOptions, date: string): Promise<{ findings: Draft[]; profile: DayProfile }> {
  const days: DayProfile[] = [];
  for (let i = WINDOW; i >= 1; i--) days.push(stored.get(addDays(date, -i))!);
  const baseline = mergeBaseline(days, config, { fingerprint: 't', window: { type: 'trailing', from: days[0]!.date, to: days[days.length - 1]!.date }, createdAt: '2025-01-01T00:00:00Z' });
  const profile = await buildDayProfile(scenarioColumns(options, date, config), config, baseline.bins);
  return { findings: evaluateDay(config, baseline, profile), profile };
}

beforeAll(async () => {
  // Day profiles of every clean day, as the store would keep them.
  for (let i = 0; i < WINDOW + CLEAN_EVALUATED + FAULTS.length; i++) {
    const date = addDays(START, i);
    stored.set(date, capDayProfile(await buildDayProfile(scenarioColumns(CLEAN, date, config), config, null), 20_000));
  }
}, 120_000);

describe('ranking faults that keep every marginal', () => {
  for (const fault of FAULTS) {
    it(`${fault.plan.kind}${fault.plan.feature !== undefined ? ` of ${fault.plan.feature}` : ''}${fault.plan.amount !== undefined ? ` (${fault.plan.amount})` : ''} is caught by ${fault.expect.map((e) => e.check).join(', ')}`, async () => {
      const { findings } = await evaluate(OPTIONS, fault.plan.date);
      for (const e of fault.expect) {
        const hit = findings.find((f) => f.feature === e.feature && f.check === e.check);
        expect(hit, `${e.feature} ${e.check}`).toBeDefined();
        console.log(fault.plan.kind, hit!.summary);
        expect(atLeastWarn(hit!.status), hit!.summary).toBe(true);
      }
      const marginal = findings.filter((f) => (f.check === 'psi' || f.check === 'ks') && f.status !== 'ok');
      expect(marginal.map((f) => `${f.feature} ${f.check}: ${f.summary}`)).toEqual([]);
      for (const f of findings.filter((x) => x.feature === null && RANKING_CHECKS.has(x.check))) console.log(fault.plan.kind, f.check, f.status, f.summary);
    });

    it(`${fault.plan.kind}${fault.plan.amount !== undefined ? ` (${fault.plan.amount})` : ''} keeps the marginals: KS D against the same day without the fault below 0.01`, () => {
      const faulted = scenarioColumns(OPTIONS, fault.plan.date, config);
      const clean = scenarioColumns(CLEAN, fault.plan.date, config);
      const names = fault.plan.feature !== undefined ? [fault.plan.feature] : config.features.filter((f) => f.kind === 'numeric').map((f) => f.name);
      for (const name of names) {
        const fi = config.features.findIndex((f) => f.name === name);
        const finite = (c: typeof faulted): Float64Array => c.numeric[fi]!.filter((v) => Number.isFinite(v));
        const { d } = ks2(finite(clean), finite(faulted));
        expect(d, name).toBeLessThan(0.01);
      }
    });
  }

  it('clean days with weekly seasonality: ranking findings at warn or worse on at most 1 % of feature-days', async () => {
    let judged = 0;
    const loud: string[] = [];
    for (let i = 0; i < CLEAN_EVALUATED; i++) {
      const date = addDays(START, WINDOW + i);
      const { findings } = await evaluate(CLEAN, date);
      for (const f of findings.filter((x) => RANKING_CHECKS.has(x.check))) {
        judged++;
        if (f.status !== 'ok') loud.push(`${date} ${f.feature} ${f.check}: ${f.summary}`);
      }
    }
    console.log(`clean feature-days judged by ranking checks: ${judged}, at warn or worse: ${loud.length}`, loud);
    expect(judged).toBeGreaterThan(CLEAN_EVALUATED * 20);
    expect(loud.length).toBeLessThanOrEqual(0.01 * judged);
  }, 120_000);
});
