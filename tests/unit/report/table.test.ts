/**
 * The terminal table says which baseline a run used and which slice a finding is about.
 */
import { describe, expect, it } from 'vitest';
import { renderTable } from '../../../src/report/index.ts';
import { finding, sampleReport } from '../exporter/fixtures.ts';

describe('renderTable', () => {
  it('names the baseline relation and the slices, and puts the slice before the feature', () => {
    const report = sampleReport({
      baseline: { ...sampleReport().baseline, window: { type: 'relation', from: '2031-01-01', to: '2031-01-31' }, source: { type: 'relation', table: 'ml.ranker_training_rows', from: '2031-01-01', to: null } },
      slices: [{ slice: 'top10', kind: 'top', rows: 200_000, lists: 20_000, baselineDays: 31 }],
      findings: [
        finding({ slice: 'all', feature: 'price_rel', check: 'psi', value: 0.03, status: 'ok' }),
        finding({ slice: 'top10', feature: 'price_rel', check: 'psi', value: 0.41, status: 'critical', summary: 'PSI 0.41' }),
      ],
    });
    const text = renderTable(report);
    expect(text).toContain('  baseline: relation ml.ranker_training_rows 2031-01-01..2031-01-31, 3 days with data');
    expect(text).toContain('  slices:   top10 (200,000 rows, 31 baseline days)');
    expect(text).toMatch(/^CRIT  \[top10\] price_rel\s+psi\s+PSI 0\.41/m);
  });

  it('shows a window baseline as before', () => {
    const report = sampleReport({ baseline: { ...sampleReport().baseline, source: { type: 'window' } } });
    expect(renderTable(report)).toContain('  baseline: trailing 2031-04-16..2031-05-13, 3 days with data');
  });
});
