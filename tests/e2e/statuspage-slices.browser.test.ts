/**
 * Slices on the status page in a real browser: a run with slices stored in a real store
 * (PostgreSQL from PLUMBLINE_TEST_DATABASE_URL, else PGlite), the real HTTP server, headless
 * Chromium. The whole day is the default view; the slice selector switches the grid to one
 * slice through a plain link; a slice finding's title names its slice.
 */
import { existsSync } from 'node:fs';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { createPool, quoteIdent, type Pool } from '../../src/db/index.ts';
import { PlumblineMetrics, startHttpServer, type RunningHttpServer } from '../../src/exporter/index.ts';
import { createStatusPage } from '../../src/statuspage/index.ts';
import { Store } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { startPglite, type PgliteServer } from '../support/pglite.ts';
import { finding, report } from '../unit/statuspage/fixtures.ts';

const CHROMIUM = '/usr/bin/chromium';
const HAS_CHROMIUM = existsSync(CHROMIUM);

describe.skipIf(!HAS_CHROMIUM)(`status page slices in a browser${HAS_CHROMIUM ? '' : ' (skipped: /usr/bin/chromium not found)'}`, () => {
  let pglite: PgliteServer | undefined;
  let pool: Pool;
  let schema: string;
  let server: RunningHttpServer;
  let browser: Browser | undefined;
  let page: Page;
  const problems: string[] = [];

  beforeAll(async () => {
    const launching = chromium.launch({ executablePath: CHROMIUM, args: ['--headless', '--no-sandbox', '--disable-gpu', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'] });
    launching.catch(() => undefined);
    const url = testDatabaseUrl() ?? (pglite = await startPglite()).url;
    pool = createPool({ url, applicationName: 'plumbline-slices-e2e', statementTimeoutMs: 30_000, max: pglite === undefined ? 4 : 1 });
    schema = uniqueSchema('slices_e2e');
    const store = new Store(pool, schema);
    await store.migrate();
    await store.saveRun(
      report(
        '2031-05-10',
        [
          finding({ slice: 'all', feature: 'price_rel', check: 'psi', value: 0.03, status: 'ok' }),
          finding({ slice: 'all', feature: 'title_match', check: 'psi', value: 0.02, status: 'ok' }),
          finding({ slice: 'top10', feature: 'price_rel', check: 'psi', value: 0.41, status: 'critical', summary: 'PSI 0.41 (critical)' }),
          finding({ slice: 'top10', feature: 'title_match', check: 'psi', value: 0.02, status: 'ok' }),
          finding({ slice: 'segment:market=isle', feature: 'price_rel', check: 'psi', value: 0.05, status: 'ok' }),
          finding({ slice: 'segment:market=isle', feature: 'title_match', check: 'psi', value: 0.02, status: 'ok' }),
          finding({ slice: 'all', feature: null, check: 'row_count_ratio', value: 1, status: 'ok' }),
        ],
        {
          status: 'critical',
          slices: [
            { slice: 'top10', kind: 'top', rows: 1000, lists: 100, baselineDays: 7 },
            { slice: 'segment:market=isle', kind: 'segment', rows: 300, lists: 30, baselineDays: 7 },
          ],
        },
      ),
    );
    server = await startHttpServer(
      {
        metrics: new PlumblineMetrics({ version: 'e2e', defaultMetrics: false }),
        latestReport: () => store.latestReport(),
        reportFor: (d) => store.reportFor(d),
        readiness: async () => ({ ready: true, reasons: [] }),
        page: createStatusPage({ latestReport: () => store.latestReport(), reportFor: (d) => store.reportFor(d), history: (q) => store.history(q), storedDates: (f, t) => store.storedDates(f, t) }),
        onError: (err) => problems.push(`server: ${String(err)}`),
      },
      { host: '127.0.0.1', port: 0 },
    );
    browser = await launching;
    page = await browser.newPage({ viewport: { width: 1280, height: 900 } });
    page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  });

  afterAll(async () => {
    await browser?.close();
    await server?.close();
    if (pool !== undefined) {
      if (schema !== undefined) await pool.query(`DROP SCHEMA IF EXISTS ${quoteIdent(schema)} CASCADE`);
      await pool.end();
    }
    await pglite?.stop();
  });

  it('shows the whole day first, then one slice through the selector', async () => {
    await page.goto(`${server.url}/`);
    expect(await page.locator('#features-h').innerText()).toBe('Features: whole day');
    const selector = page.getByRole('group', { name: 'Which rows to show' });
    expect(await selector.locator('a').allInnerTexts()).toEqual(['✓ Whole day', '✖ top10', '✓ segment:market=isle']);
    expect(await selector.locator('a[aria-current]').innerText()).toBe('✓ Whole day');
    const psiCell = page.locator('table.grid tbody tr', { has: page.locator('th a:text-is("price_rel")') }).locator('td').nth(1);
    expect((await psiCell.innerText()).replace(/\s+/g, ' ')).toContain('0.03');

    await selector.getByRole('link', { name: /top10/ }).click();
    await page.waitForURL(/slice=top10/);
    expect(await page.locator('#features-h').innerText()).toBe('Features: slice top10');
    const cell = page.locator('table.grid tbody tr', { has: page.locator('th a:text-is("price_rel")') }).locator('td.s-critical').last();
    expect(await cell.getAttribute('title')).toBe('[top10] PSI 0.41 (critical)');
    // The problems filter keeps the slice.
    await page.getByRole('link', { name: /Only problems/ }).click();
    await page.waitForURL(/problems=1.*slice=top10|slice=top10.*problems=1/);
    expect(await page.locator('table.grid tbody th a').allInnerTexts()).toEqual(['price_rel']);
    expect(problems).toEqual([]);
  });
});
