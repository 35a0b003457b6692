/**
 * Slices on the status page: the whole day stays the default view, a selector shows one
 * slice at a time, a slice finding is titled with its slice, and segment values (data) are
 * escaped.
 */
import { describe, expect, it } from 'vitest';
import { createStatusPage, type StatusPageResult } from '../../../src/statuspage/index.ts';
import type { Report } from '../../../src/report/index.ts';
import { finding, report } from './fixtures.ts';

const EVIL = 'segment:market=<b>"isle"&</b>';

function sliced(): Report {
  return report(
    '2031-05-10',
    [
      finding({ slice: 'all', feature: 'price_rel', check: 'psi', value: 0.03, status: 'ok' }),
      finding({ slice: 'top10', feature: 'price_rel', check: 'psi', value: 0.41, status: 'critical', summary: 'PSI 0.41 in the top' }),
      finding({ slice: EVIL, feature: 'price_rel', check: 'ks', value: 0.12, status: 'warn', summary: 'KS D 0.12 in the isle' }),
      finding({ slice: 'all', feature: null, check: 'row_count_ratio', value: 1, status: 'ok' }),
    ],
    {
      baseline: { window: { type: 'relation', from: '2031-01-01', to: '2031-01-31' }, days: ['2031-01-01'], rows: 1, lists: 1, meanRowsPerDay: 1, meanListsPerDay: 1, sampleSize: 1000, fingerprint: 'b', source: { type: 'relation', table: 'ml.training_rows', from: null, to: null } },
      slices: [
        { slice: 'top10', kind: 'top', rows: 1000, lists: 100, baselineDays: 7 },
        { slice: EVIL, kind: 'segment', rows: 200, lists: 20, baselineDays: 7 },
      ],
    },
  );
}

async function get(path: string, query = ''): Promise<StatusPageResult> {
  const r = sliced();
  const page = createStatusPage({ latestReport: async () => r, reportFor: async () => r, history: async () => [] });
  return (await page(path, new URLSearchParams(query)))!;
}

describe('status page slices', () => {
  it('shows the whole day by default, with a selector of the slices and the baseline relation', async () => {
    const { body } = await get('/');
    expect(body).toContain('Features: whole day');
    expect(body).toContain('aria-label="Which rows to show"');
    expect(body).toContain('href="/?date=2031-05-10&amp;slice=top10"');
    expect(body).toContain('baseline relation ml.training_rows, 2031-01-01 → 2031-01-31');
    // The whole-day grid holds the whole day's value, not the slice's.
    expect(body).toContain('0.03');
    expect(body).not.toContain('PSI 0.41 in the top');
  });

  it('shows one slice when asked, and escapes segment values', async () => {
    const top = await get('/', 'slice=top10');
    expect(top.body).toContain('Features: slice top10');
    expect(top.body).toContain('title="[top10] PSI 0.41 in the top"');
    const evil = await get('/', `slice=${encodeURIComponent(EVIL)}`);
    expect(evil.body).toContain('Features: slice segment:market=&lt;b&gt;&quot;isle&quot;&amp;&lt;/b&gt;');
    expect(evil.body).not.toContain('<b>"isle"');
    // A slice the run did not evaluate falls back to the whole day.
    expect((await get('/', 'slice=top99')).body).toContain('Features: whole day');
  });

  it('lists a feature\'s slice findings that are not ok on its page, each titled with its slice', async () => {
    const { body } = await get('/feature/price_rel', 'date=2031-05-10');
    expect(body).toContain('Slices of 2031-05-10: findings not ok');
    expect(body).toContain('<span class="slice">top10</span>');
    expect(body).toContain('<span class="slice">segment:market=&lt;b&gt;&quot;isle&quot;&amp;&lt;/b&gt;</span>');
  });
});
