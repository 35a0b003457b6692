/**
 * The status page in a real browser, served the way it is deployed: a `plumbline serve`
 * process (http.statusPage defaults to true) over a real store (PostgreSQL from
 * PLUMBLINE_TEST_DATABASE_URL, else PGlite in process) holding three stored runs, and
 * headless Chromium driven by playwright-core. Checks what a person sees: the overview grid,
 * the problems filter, a feature page with its charts, the error page, and that nothing is
 * fetched from elsewhere.
 *
 * Uses the system Chromium at /usr/bin/chromium and never downloads a browser. Without it the
 * suite is skipped (and fails when CI=true). Screenshots go to tests/e2e/artifacts/.
 */
import { existsSync, mkdirSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { chromium, type Browser, type Page } from 'playwright-core';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import pg from 'pg';
import { loadScenario } from '../../demo-data/load.ts';
import { createPool, quoteIdent, type Pool } from '../../src/db/index.ts';
import { Store } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { startEmbeddedPostgres, type EmbeddedPostgres } from '../../src/demo/index.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { startService, type ServiceProcess } from '../support/service.ts';
import { until } from '../support/tools.ts';
import { scenarioDay } from '../unit/statuspage/fixtures.ts';

const CHROMIUM = '/usr/bin/chromium';
const HAS_CHROMIUM = existsSync(CHROMIUM);
const IN_CI = process.env['CI'] === 'true';
const ARTIFACTS = fileURLToPath(new URL('./artifacts/', import.meta.url));
// Past dates: a date after today is never the "latest" run.
const DATES = ['2025-05-08', '2025-05-09', '2025-05-10'] as const;

if (!HAS_CHROMIUM && IN_CI) {
  describe('status page in a browser', () => {
    it('needs Chromium at /usr/bin/chromium when CI=true', () => {
      throw new Error(`${CHROMIUM} is missing; the CI image must provide Chromium (this test never downloads a browser)`);
    });
  });
}

describe.skipIf(!HAS_CHROMIUM)(`status page in a browser${HAS_CHROMIUM ? '' : ' (skipped: /usr/bin/chromium not found)'}`, () => {
  let pglite: EmbeddedPostgres | undefined;
  let pool: Pool;
  let schema: string;
  let srcSchema: string | undefined;
  let server: { url: string };
  let svc: ServiceProcess | undefined;
  let launching: Promise<Browser> | undefined;
  let browser: Browser | undefined;
  let page: Page;
  const requested: string[] = [];
  const problems: string[] = [];

  beforeAll(async () => {
    // The browser starts while the database boots (PGlite takes seconds on a small machine).
    mkdirSync(ARTIFACTS, { recursive: true });
    launching = chromium.launch({
      executablePath: CHROMIUM,
      args: ['--headless', '--no-sandbox', '--disable-gpu', '--disable-quic', '--no-first-run', '--disable-background-networking', '--disable-component-update', '--disable-sync'],
    });
    // Reported when awaited below; closed in afterAll even if the database setup fails first.
    launching.catch(() => undefined);
    // Without a server: the embedded PostgreSQL the demo serves from (PGlite with room for the
    // service's connections: source, store, leader lock, notifications). Its single session
    // serves one statement at a time, so this test's own pool uses one connection.
    const url = testDatabaseUrl() ?? (pglite = await startEmbeddedPostgres({ maxConnections: 16 })).url;
    pool = createPool({ url, applicationName: 'plumbline-statuspage-e2e', statementTimeoutMs: 30_000, max: pglite === undefined ? 4 : 1 });
    schema = uniqueSchema('statuspage_e2e');
    const store = new Store(pool, schema);
    await store.migrate();
    for (const [i, date] of DATES.entries()) await store.saveRun(scenarioDay(i as 0 | 1 | 2, date));

    // The service's source: one small old day, so the catch-up on start finds yesterday not
    // ready and stores nothing (the page shows exactly the three runs above).
    srcSchema = uniqueSchema('statuspage_src');
    const loader = new pg.Client({ connectionString: url });
    await loader.connect();
    try {
      await loadScenario(loader, { table: `${srcSchema}.impressions`, layout: 'wide', scenario: { startDate: '2025-01-06', days: 1, listsPerDay: 5, meanListSize: 4, seed: 3, faults: [] } });
    } finally {
      await loader.end();
    }
    const config = scenarioConfig(`${srcSchema}.impressions`, {
      storeSchema: schema,
      overrides: { schedule: { cron: '0 0 1 1 *', timezone: 'UTC', catchUpMaxDays: 0 }, http: { host: '127.0.0.1', port: 0 } },
    });
    svc = await startService({ config, sourceUrl: url });
    server = { url: svc.url };
    await until('the service to be ready', 30_000, async () => ((await svc!.get('/readyz')).status === 200 ? true : undefined), 200);

    browser = await launching;
    page = await browser.newPage({ viewport: { width: 1440, height: 900 } });
    page.on('request', (r) => requested.push(r.url()));
    page.on('console', (m) => {
      if (m.type() === 'error' || m.type() === 'warning') problems.push(`console ${m.type()}: ${m.text()}`);
    });
    page.on('pageerror', (e) => problems.push(`page error: ${e.message}`));
  });

  afterAll(async () => {
    const b = browser ?? (await launching?.catch(() => undefined));
    await b?.close();
    if (svc !== undefined) expect(await svc.stop()).toEqual({ code: 0, signal: null });
    if (pool !== undefined) {
      if (schema !== undefined) await pool.query(`DROP SCHEMA IF EXISTS ${quoteIdent(schema)} CASCADE`);
      if (srcSchema !== undefined) await pool.query(`DROP SCHEMA IF EXISTS ${quoteIdent(srcSchema)} CASCADE`);
      await pool.end();
    }
    await pglite?.stop();
  });

  it('renders the overview of the latest stored run with its features and statuses', async () => {
    const res = await page.goto(`${server.url}/`);
    expect(res?.status()).toBe(200);
    expect(res?.headers()['content-type']).toBe('text/html; charset=utf-8');
    expect(await page.title()).toBe('Overview 2025-05-10: ✖ critical · Plumbline');
    await expect.poll(() => page.locator('h1').innerText()).toContain('Run of 2025-05-10');
    expect(await page.locator('h1 .badge').innerText()).toBe('✖ critical');

    const names = await page.locator('table.grid tbody th a').allInnerTexts();
    expect(names).toEqual(['price_rel', 'title_match', 'ship_days', 'color_family']);
    const headers = await page.locator('table.grid thead th').allInnerTexts();
    const psiCol = headers.indexOf('PSI');
    const ruleCol = headers.indexOf('rule violations');
    const rowOf = (name: string) => page.locator('table.grid tbody tr', { has: page.locator(`th a:text-is("${name}")`) });
    const cellText = async (name: string, col: number) => (await rowOf(name).locator('th, td').nth(col).innerText()).replace(/\s+/g, ' ').trim();
    expect(await cellText('price_rel', psiCol)).toBe('✖ critical 0.31 ALERTING');
    expect(await cellText('title_match', ruleCol)).toBe('✖ critical 9% minmax ALERTING');
    expect(await cellText('ship_days', psiCol)).toBe('✓ ok 0.01');
    // The whole-day section and the stored dates read from the store.
    expect(await page.locator('table.dataset > tbody > tr > th').allInnerTexts()).toEqual([
      'rows vs baseline\nrow_count_ratio',
      'lists vs baseline\nlist_count_ratio',
      'list size PSI\nlist_size_psi',
      'duplicate items\nduplicate_item_ratio',
    ]);
    expect(await page.locator('ul.dates li').allInnerTexts()).toEqual(['2025-05-10', '2025-05-09', '2025-05-08']);
    await page.screenshot({ path: `${ARTIFACTS}overview.png`, fullPage: true });
  });

  it('filters to features with problems through a plain link', async () => {
    await page.goto(`${server.url}/`);
    await page.getByRole('link', { name: /Only problems/ }).click();
    await page.waitForURL(/problems=1/);
    expect(await page.locator('table.grid tbody th a').allInnerTexts()).toEqual(['price_rel', 'title_match']);
    // An older date shows that day's verdict.
    await page.getByRole('link', { name: '‹ 2025-05-09' }).click();
    await page.waitForURL(/date=2025-05-09/);
    expect(await page.locator('h1').innerText()).toContain('Run of 2025-05-09');
    expect(page.url()).toContain('problems=1');
  });

  it('follows a feature link to a page with the histogram and the charts drawn', async () => {
    await page.goto(`${server.url}/`);
    await page.locator('table.grid tbody th a', { hasText: 'price_rel' }).click();
    await page.waitForURL(/\/feature\/price_rel\?date=2025-05-10$/);
    expect(await page.locator('#feature-h').innerText()).toContain('price_rel');

    // One histogram and two line charts (PSI, KS D).
    const charts = page.locator('svg.chart');
    expect(await charts.count()).toBe(3);
    expect(await page.locator('svg.bin-chart').count()).toBe(1);
    for (const chart of await charts.all()) {
      const box = await chart.boundingBox();
      expect(box?.width).toBeGreaterThan(200);
      expect(box?.height).toBeGreaterThan(80);
      expect(await chart.getAttribute('role')).toBe('img');
    }
    // Three stored days: three markers on each line chart.
    expect(await page.locator('svg[aria-labelledby^="c-psi"] .mk').count()).toBe(3);
    // Threshold lines drawn, critical above warn on the screen.
    for (const id of ['c-psi', 'c-ks']) {
      const warn = await page.locator(`svg[aria-labelledby^="${id}"] line[data-level="warn"]`).boundingBox();
      const critical = await page.locator(`svg[aria-labelledby^="${id}"] line[data-level="critical"]`).boundingBox();
      expect(warn?.width).toBeGreaterThan(200);
      expect(critical?.width).toBeGreaterThan(200);
      expect(critical!.y).toBeLessThan(warn!.y);
    }
    // The bar of the bin that grew most is the longest.
    const current = await page.locator('svg.bin-chart rect.bar-current').evaluateAll((rects) => rects.map((r) => r.getBoundingClientRect().width));
    expect(current).toHaveLength(5);
    expect(Math.max(...current)).toBe(current[3]);
    expect(current[3]).toBeGreaterThan(0);
    expect(await page.getByText('bins that moved most', { exact: false }).count()).toBeGreaterThan(0);
    await page.screenshot({ path: `${ARTIFACTS}feature.png`, fullPage: true });

    // The page's JSON link is served by the same server.
    const json = await page.request.get(`${server.url}${await page.getByRole('link', { name: 'JSON report of 2025-05-10' }).getAttribute('href')}`);
    expect(json.status()).toBe(200);
    expect(((await json.json()) as { runDate: string }).runDate).toBe('2025-05-10');
  });

  it('charts the within-list checks over the stored days', async () => {
    await page.goto(`${server.url}/feature/title_match`);
    expect(await page.locator('svg.line-chart').count()).toBe(3);
    const rule = page.locator('svg[aria-labelledby^="c-rule_violation_ratio"]');
    expect(await rule.locator('.mk').count()).toBe(3);
    expect(await rule.locator('line.thr-line').count()).toBe(3); // warn, critical, baseline
    expect((await rule.boundingBox())?.height).toBeGreaterThan(80);
    await page.screenshot({ path: `${ARTIFACTS}feature-within-list.png`, fullPage: true });
  });

  it('answers an unknown feature with a 404 page', async () => {
    const res = await page.goto(`${server.url}/feature/no_such_feature`);
    expect(res?.status()).toBe(404);
    expect(await page.locator('h1').innerText()).toBe('Feature not found');
    const res2 = await page.goto(`${server.url}/?date=2025-01-01`);
    expect(res2?.status()).toBe(404);
  });

  it('requested nothing outside 127.0.0.1 and logged no errors', () => {
    expect(requested.length).toBeGreaterThan(5);
    for (const u of requested) {
      const url = new URL(u);
      expect(url.protocol === 'data:' || url.hostname === '127.0.0.1', u).toBe(true);
    }
    // The 404 page logs a failed-resource message in some Chromium builds; nothing else may.
    expect(problems.filter((p) => !/status of 404/.test(p))).toEqual([]);
    // The service logged nothing at error level while serving the pages.
    expect(svc!.logs.filter((l) => l.level === 'error').map((l) => JSON.stringify(l))).toEqual([]);
  });
});
