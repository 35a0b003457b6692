/**
 * A small hand-built Report for the exporter tests. The numbers are invented (a made-up
 * garden-supplies shop's search results); the exporter republishes them, it computes nothing.
 */
import type { Report } from '../../../src/report/contract.ts';
import { alerting, finding } from '../../support/report-fixtures.ts';

export { finding };

export function sampleReport(overrides: Partial<Report> = {}): Report {
  return {
    schemaVersion: 1,
    runDate: '2031-05-14',
    status: 'critical',
    engine: 'stream',
    startedAt: '2031-05-15T06:30:00.000Z',
    finishedAt: '2031-05-15T06:31:12.500Z',
    configFingerprint: 'cfg-1',
    baseline: {
      window: { type: 'trailing', from: '2031-04-16', to: '2031-05-13' },
      days: ['2031-05-11', '2031-05-12', '2031-05-13'],
      rows: 3_000_000,
      lists: 120_000,
      meanRowsPerDay: 1_000_000,
      meanListsPerDay: 40_000,
      sampleSize: 200_000,
      fingerprint: 'base-1',
    },
    current: { rows: 980_000, lists: 39_500, evaluatedRows: 980_000, evaluatedLists: 39_500, sampled: false },
    findings: [
      finding({ feature: 'price_rel', check: 'psi', value: 0.31, status: 'critical', alert: alerting('critical', '2031-05-13') }),
      finding({ feature: 'price_rel', check: 'ks', value: 0.22, status: 'critical', evidence: { pValue: 1e-15, adjustedPValue: 3e-15 }, alert: alerting('critical', '2031-05-13') }),
      finding({ feature: 'price_rel', check: 'null_ratio', value: 0.002, status: 'ok' }),
      finding({ feature: 'price_rel', check: 'rule_violation_ratio', rule: 'zscore', value: 0.08, status: 'critical', alert: alerting('critical', '2031-05-14', 1) }),
      finding({ feature: 'seller_score', check: 'psi', value: 0.02, status: 'ok' }),
      finding({ feature: 'seller_score', check: 'nonfinite_ratio', value: 0, status: 'ok' }),
      finding({ feature: 'seller_score', check: 'out_of_range_ratio', value: 0.0005, status: 'ok' }),
      finding({ feature: 'seller_score', check: 'flat_list_ratio', value: 0.07, status: 'warn', alert: alerting('warn', '2031-05-14', 1) }),
      finding({ feature: 'category', check: 'new_category_ratio', value: 0.004, status: 'ok' }),
      finding({ feature: null, check: 'snapshot_missing', value: 0, status: 'ok', thresholds: { type: 'flag' } }),
      finding({ feature: null, check: 'row_count_ratio', value: 0.98, status: 'ok' }),
      finding({ feature: null, check: 'list_size_psi', value: 0.04, status: 'ok' }),
      finding({ feature: null, check: 'duplicate_item_ratio', value: 0.02, status: 'critical', alert: alerting('critical', '2031-05-14', 1) }),
    ],
    ...overrides,
  };
}
