/**
 * Hand-built reports for the status page tests. Everything is invented: the search results of
 * a made-up hardware shop. The page only shows these numbers; it computes no statistic.
 */
import type { BinEvidence, Finding, Report, Status } from '../../../src/report/index.ts';
import { alerting, finding } from '../../support/report-fixtures.ts';

export { alerting, finding };

export function report(runDate: string, findings: Finding[], overrides: Partial<Report> = {}): Report {
  const worst: Status = findings.some((f) => f.status === 'critical') ? 'critical' : findings.some((f) => f.status === 'warn') ? 'warn' : 'ok';
  return {
    schemaVersion: 1,
    runDate,
    status: worst,
    engine: 'stream',
    startedAt: `${runDate}T23:40:00.000Z`,
    finishedAt: `${runDate}T23:41:05.250Z`,
    configFingerprint: 'cfg-hardware-1',
    baseline: {
      window: { type: 'trailing', from: '2031-04-10', to: '2031-05-07' },
      days: ['2031-05-05', '2031-05-06', '2031-05-07'],
      rows: 2_400_000,
      lists: 96_000,
      meanRowsPerDay: 800_000,
      meanListsPerDay: 32_000,
      sampleSize: 100_000,
      fingerprint: 'base-hardware-1',
    },
    current: { rows: 792_000, lists: 31_700, evaluatedRows: 792_000, evaluatedLists: 31_700, sampled: false },
    findings,
    ...overrides,
  };
}

/** Interval bins as the PSI check labels them (largest move first, as the report keeps them). */
export const PRICE_BINS: BinEvidence[] = [
  { bin: '(1.4, +inf)', baselineShare: 0.1, currentShare: 0.28, contribution: 0.1058 },
  { bin: '(-inf, 0.6]', baselineShare: 0.1, currentShare: 0.04, contribution: 0.055 },
  { bin: '(0.9, 1)', baselineShare: 0.1, currentShare: 0.05, contribution: 0.0347 },
  { bin: '[1, 1]', baselineShare: 0.12, currentShare: 0.07, contribution: 0.0269 },
  { bin: 'missing', baselineShare: 0.01, currentShare: 0.03, contribution: 0.022 },
];

const PSI_BY_DAY = [0.04, 0.14, 0.31];
const KS_BY_DAY = [0.02, 0.06, 0.12];
const RULE_BY_DAY = [0.004, 0.03, 0.09];

/**
 * Day `d` (0, 1, 2) of a small scenario: price_rel drifts from ok to warn to critical
 * (alerting on the last day); title_match starts breaking its minmax rule; the rest is calm,
 * with a duplicate-items problem on the whole day.
 */
export function scenarioDay(d: 0 | 1 | 2, runDate: string): Report {
  const psiStatus: Status = d === 2 ? 'critical' : d === 1 ? 'warn' : 'ok';
  const ruleStatus: Status = d === 2 ? 'critical' : d === 1 ? 'warn' : 'ok';
  const findings: Finding[] = [
    finding({
      feature: 'price_rel',
      check: 'psi',
      value: PSI_BY_DAY[d]!,
      status: psiStatus,
      summary: `PSI ${PSI_BY_DAY[d]} (${psiStatus}; warn >= 0.1, critical >= 0.25; noise floor 0.002)`,
      evidence: { baseline: 1.02, current: 1.11, n: 100_000, m: 264_000, noiseFloor: 0.002, bins: PRICE_BINS, binsUsed: 11 },
      alert: d === 2 ? alerting('critical', runDate, 1) : {},
    }),
    finding({
      feature: 'price_rel',
      check: 'ks',
      value: KS_BY_DAY[d]!,
      status: d === 2 ? 'warn' : 'ok',
      thresholds: { type: 'above', warn: 0.1, critical: 0.2 },
      evidence: { baseline: 1.02, current: 1.11, n: 100_000, m: 264_000, pValue: 1e-12, pValueMethod: 'asymptotic', adjustedPValue: 6e-12 },
    }),
    finding({ feature: 'price_rel', check: 'null_ratio', value: 0.002, status: 'ok', thresholds: { type: 'above', warn: 0.01, critical: 0.05 }, evidence: { baseline: 0.002, current: 0.002 } }),
    finding({ feature: 'price_rel', check: 'out_of_range_ratio', value: 0, status: 'ok', thresholds: { type: 'above', warn: 0.001, critical: 0.01 }, evidence: { baseline: 0, current: 0, range: { min: 0, max: 50 } } }),
    finding({ feature: 'ship_days', check: 'psi', value: 0.01, status: 'ok', evidence: { bins: [] } }),
    finding({ feature: 'ship_days', check: 'ks', value: 0.01, status: 'ok', thresholds: { type: 'above', warn: 0.1, critical: 0.2 } }),
    finding({ feature: 'ship_days', check: 'null_ratio', value: 0, status: 'ok', thresholds: { type: 'above', warn: 0.01, critical: 0.05 } }),
    finding({
      feature: 'title_match',
      check: 'rule_violation_ratio',
      rule: 'minmax',
      value: RULE_BY_DAY[d]!,
      score: Math.max(0, RULE_BY_DAY[d]! - 0.004),
      status: ruleStatus,
      thresholds: { type: 'above', warn: 0.02, critical: 0.05 },
      summary: `lists breaking minmax: ${(RULE_BY_DAY[d]! * 100).toFixed(1)}% (baseline 0.4%)`,
      evidence: { baseline: 0.004, current: RULE_BY_DAY[d]!, violations: Math.round(RULE_BY_DAY[d]! * 31_000), listsJudged: 31_000, tolerance: 1e-9 },
      alert: d === 2 ? alerting('critical', runDate, 1) : {},
    }),
    finding({
      feature: 'title_match',
      check: 'flat_list_ratio',
      value: 0.01,
      score: 0,
      status: 'ok',
      thresholds: { type: 'above', warn: 0.05, critical: 0.2 },
      evidence: { baseline: 0.01, current: 0.01, flatLists: 317, listsJudged: 31_700 },
    }),
    finding({ feature: 'title_match', check: 'psi', value: 0.03, status: 'ok' }),
    finding({ feature: 'color_family', check: 'new_category_ratio', value: 0.001, status: 'ok', thresholds: { type: 'above', warn: 0.01, critical: 0.05 }, evidence: { current: 0.001, unseen: ['teal'], unseenCount: 1 } }),
    finding({ feature: 'color_family', check: 'constant', value: 0, status: 'ok', thresholds: { type: 'flag' } }),
    finding({ feature: null, check: 'row_count_ratio', value: 0.99, status: 'ok', thresholds: { type: 'band', warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 2 }, evidence: { baseline: 800_000, current: 792_000 } }),
    finding({ feature: null, check: 'list_count_ratio', value: 0.99, status: 'ok', thresholds: { type: 'band', warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 2 }, evidence: { baseline: 32_000, current: 31_700 } }),
    finding({
      feature: null,
      check: 'list_size_psi',
      value: 0.02,
      status: 'ok',
      evidence: { baseline: 25, current: 24.98, bins: [{ bin: 'size 24', baselineShare: 0.2, currentShare: 0.22, contribution: 0.0019 }] },
    }),
    finding({
      feature: null,
      check: 'duplicate_item_ratio',
      value: d === 0 ? 0.001 : 0.03,
      score: d === 0 ? 0 : 0.029,
      status: d === 0 ? 'ok' : 'critical',
      thresholds: { type: 'above', warn: 0.005, critical: 0.02 },
      summary: 'lists with a duplicated item: 3.0% (baseline 0.10%)',
      evidence: { baseline: 0.001, current: d === 0 ? 0.001 : 0.03, lists: d === 0 ? 32 : 951 },
      alert: d === 0 ? {} : alerting('critical', '2031-05-09', d),
    }),
  ];
  return report(runDate, findings);
}
