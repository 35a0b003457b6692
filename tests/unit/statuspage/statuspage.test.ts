/**
 * The status page rendered from hand-built reports, without a database: what the HTML says
 * (statuses in words, values, links), that report text is escaped, the problems filter, the
 * chart geometry against its documented scale, error pages, and page size.
 */
import { describe, expect, it } from 'vitest';
import {
  BIN_CHART,
  CONTENT_SECURITY_POLICY,
  HISTORY_LIMIT,
  LINE_CHART,
  createStatusPage,
  niceCeiling,
  type StatusPageDeps,
  type StatusPageHistoryQuery,
  type StatusPageResult,
} from '../../../src/statuspage/index.ts';
import { FEATURE_CHECKS, type Report } from '../../../src/report/index.ts';
import { PRICE_BINS, alerting, finding, report, scenarioDay } from './fixtures.ts';

const DATES = ['2031-05-08', '2031-05-09', '2031-05-10'] as const;
const SCENARIO = DATES.map((d, i) => scenarioDay(i as 0 | 1 | 2, d));

interface Fake {
  deps: StatusPageDeps;
  historyCalls: StatusPageHistoryQuery[];
}

/** Deps over a list of reports, as the store would answer (history oldest first). */
function fake(reports: Report[], options: { storedDates?: boolean; title?: string } = {}): Fake {
  const historyCalls: StatusPageHistoryQuery[] = [];
  const sorted = [...reports].sort((a, b) => a.runDate.localeCompare(b.runDate));
  const deps: StatusPageDeps = {
    latestReport: async () => sorted[sorted.length - 1] ?? null,
    reportFor: async (d) => sorted.find((r) => r.runDate === d) ?? null,
    history: async (q) => {
      historyCalls.push(q);
      return sorted
        .flatMap((r) =>
          r.findings
            .filter((f) => f.feature === q.feature && f.check === q.check && (q.rule === undefined || f.rule === q.rule))
            .map((f) => ({ runDate: r.runDate, value: f.value, status: f.status })),
        )
        .slice(-q.limit);
    },
    ...(options.storedDates === false ? {} : { storedDates: async (from: string, to: string) => sorted.map((r) => r.runDate).filter((d) => d >= from && d <= to) }),
    ...(options.title === undefined ? {} : { title: options.title }),
  };
  return { deps, historyCalls };
}

async function get(deps: StatusPageDeps, target: string): Promise<StatusPageResult> {
  const q = target.indexOf('?');
  const res = await createStatusPage(deps)(q < 0 ? target : target.slice(0, q), new URLSearchParams(q < 0 ? '' : target.slice(q + 1)));
  if (res === null) throw new Error(`no page for ${target}`);
  return res;
}

const stripTags = (s: string): string =>
  s
    .replace(/<[^>]*>/g, ' ')
    .replace(/&lt;/g, '<')
    .replace(/&gt;/g, '>')
    .replace(/&quot;/g, '"')
    .replace(/&#39;/g, "'")
    .replace(/&amp;/g, '&')
    .replace(/\s+/g, ' ')
    .trim();

/** Rows of the feature grid: [feature, worst, ...one text per check column], plus the header. */
function grid(body: string): { header: string[]; rows: string[][] } {
  const table = /<table class="grid">([\s\S]*?)<\/table>/.exec(body);
  if (table === null) return { header: [], rows: [] };
  const cells = (tr: string): string[] => [...tr.matchAll(/<t[hd]\b[^>]*>([\s\S]*?)<\/t[hd]>/g)].map((m) => stripTags(m[1]!));
  const trs = [...table[1]!.matchAll(/<tr>([\s\S]*?)<\/tr>/g)].map((m) => m[1]!);
  return { header: cells(trs[0]!), rows: trs.slice(1).map(cells) };
}

function cell(body: string, feature: string, column: string): string {
  const g = grid(body);
  const col = g.header.indexOf(column);
  const row = g.rows.find((r) => r[0] === feature);
  if (col < 0 || row === undefined) throw new Error(`no cell ${feature} / ${column}`);
  return row[col]!;
}

/** The <svg> whose aria-labelledby starts with `id`. */
function svgOf(body: string, id: string): string {
  const m = new RegExp(`<svg [^>]*aria-labelledby="${id}-t[\\s\\S]*?</svg>`).exec(body);
  if (m === null) throw new Error(`no svg ${id}`);
  return m[0];
}

function thresholdY(svg: string, level: 'warn' | 'critical' | 'baseline'): number {
  const m = new RegExp(`<line class="thr-line" data-level="${level}"[^>]*\\sy1="([^"]+)"`).exec(svg);
  if (m === null) throw new Error(`no ${level} line`);
  return Number(m[1]);
}

/** The documented mapping of LINE_CHART: y(v) = top + plotHeight * (1 - v / yMax), to 0.1 unit. */
function expectedY(v: number, yMax: number): number {
  const plotH = LINE_CHART.height - LINE_CHART.top - LINE_CHART.bottom;
  return Math.round((LINE_CHART.top + plotH * (1 - v / yMax)) * 10) / 10;
}

describe('overview', () => {
  it('is an HTML5 document with a title, a language, a content type and a policy that forbids loading anything', async () => {
    const { deps } = fake(SCENARIO, { title: 'hardware search, production' });
    const res = await get(deps, '/');
    expect(res.status).toBe(200);
    expect(res.contentType).toBe('text/html; charset=utf-8');
    expect(res.headers['Content-Security-Policy']).toBe(CONTENT_SECURITY_POLICY);
    expect(CONTENT_SECURITY_POLICY).toContain("default-src 'none'");
    expect(res.body.startsWith('<!doctype html>')).toBe(true);
    expect(res.body).toContain('<html lang="en">');
    expect(res.body).toMatch(/<title>Overview 2031-05-10: ✖ critical · hardware search, production · Plumbline<\/title>/);
  });

  it('shows the latest run: date, overall status, and each cell as symbol + word + value', async () => {
    const { deps } = fake(SCENARIO);
    const { body } = await get(deps, '/');
    expect(body).toMatch(/<h1 id="run-h">Run of 2031-05-10 <span class="badge s-critical">✖ critical<\/span><\/h1>/);
    const g = grid(body);
    expect(g.header.slice(0, 2)).toEqual(['Feature', 'Worst']);
    // The contract's order, only the checks this report has.
    expect(g.header.slice(2)).toEqual(['PSI', 'KS D', 'nulls', 'out of range', 'constant', 'new categories', 'rule violations', 'flat lists']);
    // Worst first, report order within a status.
    expect(g.rows.map((r) => r[0])).toEqual(['price_rel', 'title_match', 'ship_days', 'color_family']);
    expect(cell(body, 'price_rel', 'PSI')).toBe('✖ critical 0.31 alerting');
    expect(cell(body, 'price_rel', 'KS D')).toBe('▲ warn 0.12');
    expect(cell(body, 'price_rel', 'nulls')).toBe('✓ ok 0.2%');
    expect(cell(body, 'price_rel', 'rule violations')).toBe('– not checked');
    expect(cell(body, 'title_match', 'rule violations')).toBe('✖ critical 9% minmax alerting');
    expect(cell(body, 'color_family', 'constant')).toBe('✓ ok no');
    expect(cell(body, 'ship_days', 'Worst')).toBe('✓ ok');
    // Table headers carry their scope.
    expect(body).toContain('<th scope="col">Feature</th>');
    expect(body).toMatch(/<th scope="row"><a href="\/feature\/price_rel\?date=2031-05-10">price_rel<\/a><\/th>/);
  });

  it('writes every status in words, including warn on a day that has one', async () => {
    const { deps } = fake(SCENARIO);
    const { body } = await get(deps, '/?date=2031-05-09');
    expect(body).toContain('Run of 2031-05-09');
    expect(cell(body, 'price_rel', 'PSI')).toBe('▲ warn 0.14');
    expect(cell(body, 'title_match', 'rule violations')).toBe('▲ warn 3% minmax');
    for (const word of ['✖ critical', '▲ warn', '✓ ok', '– not checked']) expect(stripTags(body)).toContain(word);
    // Status colours come with the class; the word is always there too.
    expect(body).toMatch(/<td class="c s-warn"[^>]*><span class="st">▲ warn<\/span>/);
  });

  it('links to each feature page, to the JSON report, and to the stored dates', async () => {
    const { deps } = fake(SCENARIO);
    const { body } = await get(deps, '/?date=2031-05-09');
    for (const f of ['price_rel', 'title_match', 'ship_days', 'color_family']) expect(body).toContain(`href="/feature/${f}?date=2031-05-09"`);
    expect(body).toContain('href="/api/v1/reports/2031-05-09"');
    expect(body).toContain('<a href="/?date=2031-05-08" rel="prev">‹ 2031-05-08</a>');
    expect(body).toContain('<a href="/?date=2031-05-10" rel="next">2031-05-10 ›</a>');
    expect(body).toContain('<span aria-current="page">2031-05-09</span>');
  });

  it('has a whole-day section with counts and the dataset checks', async () => {
    const { deps } = fake(SCENARIO);
    const { body } = await get(deps, '/');
    const section = /<section class="card" aria-labelledby="dataset-h">([\s\S]*?)<\/section>/.exec(body)![1]!;
    const text = stripTags(section);
    expect(text).toContain('792,000 rows (baseline 800,000 a day)');
    expect(text).toContain('31,700 lists (baseline 32,000 a day)');
    expect(text).toContain('rows vs baseline row_count_ratio ✓ ok 0.99× 800,000 792,000');
    expect(text).toContain('list size PSI list_size_psi ✓ ok 0.02 25 25');
    expect(text).toContain('duplicate items duplicate_item_ratio ✖ critical alerting 3% 0.1% 3% warn at +0.5%, critical at +2% over baseline');
  });

  it('hides features whose checks are all ok behind a plain ?problems=1 link', async () => {
    const { deps } = fake(SCENARIO);
    const all = await get(deps, '/');
    expect(all.body).toContain('<a href="/?date=2031-05-10&amp;problems=1">Only problems (2)</a>');
    expect(all.body).toContain('<a href="/?date=2031-05-10" aria-current="page">All features (4)</a>');
    const problems = await get(deps, '/?date=2031-05-10&problems=1');
    expect(grid(problems.body).rows.map((r) => r[0])).toEqual(['price_rel', 'title_match']);
    expect(problems.body).toContain('2 features with every check ok hidden');
    expect(problems.body).not.toContain('href="/feature/ship_days');
    expect(problems.body).toContain('<a href="/?date=2031-05-10&amp;problems=1" aria-current="page">Only problems (2)</a>');
    // The whole-day section stays.
    expect(problems.body).toContain('duplicate_item_ratio');
  });

  it('says so when the filter leaves nothing', async () => {
    const { deps } = fake([report('2031-05-10', [finding({ feature: 'calm', check: 'psi', value: 0.01, status: 'ok' })])]);
    const { body } = await get(deps, '/?problems=1');
    expect(body).toContain('No feature has a problem on 2031-05-10.');
    expect(body).not.toContain('<table class="grid">');
  });

  it('works without a list of stored dates', async () => {
    const { deps } = fake(SCENARIO, { storedDates: false });
    const { body, status } = await get(deps, '/');
    expect(status).toBe(200);
    expect(body).toContain('The list of stored dates is not available.');
  });

  it('says that nothing ran yet when the store is empty', async () => {
    const { deps } = fake([]);
    const res = await get(deps, '/');
    expect(res.status).toBe(200);
    expect(res.body).toContain('No run stored yet');
  });
});

describe('escaping', () => {
  const NASTY = `<img src=x onerror="alert('x')">&amp;</td><script>alert(1)</script>`;
  const nastyReport = report('2031-05-10', [
    finding({
      feature: NASTY,
      check: 'psi',
      value: 0.4,
      status: 'critical',
      summary: `PSI 0.4 </p><script>alert("summary")</script>`,
      evidence: {
        bins: [
          { bin: `category "<b onmouseover=alert(2)>x</b>"`, baselineShare: 0.2, currentShare: 0.5, contribution: 0.27 },
          { bin: `category "a&b"`, baselineShare: 0.5, currentShare: 0.3, contribution: 0.1 },
        ],
        note: '<iframe src="https://example.invalid/">',
      },
    }),
    finding({ feature: NASTY, check: 'new_category_ratio', value: 0.02, status: 'warn', evidence: { unseen: ['<svg onload=alert(3)>'] } }),
  ]);
  const ESCAPED_NAME = '&lt;img src=x onerror=&quot;alert(&#39;x&#39;)&quot;&gt;&amp;amp;&lt;/td&gt;&lt;script&gt;alert(1)&lt;/script&gt;';

  it('escapes feature names, summaries and category names on the overview', async () => {
    const { body } = await get(fake([nastyReport]).deps, '/');
    expect(body).not.toMatch(/<script/i);
    expect(body).not.toMatch(/<img/i);
    expect(body).toContain(`>${ESCAPED_NAME}</a></th>`);
    // The link percent-encodes the name; what is left of HTML syntax is escaped.
    expect(body).toContain(`href="/feature/${encodeURIComponent(NASTY).replace(/'/g, '&#39;')}?date=2031-05-10"`);
    expect(body).toContain('PSI 0.4 &lt;/p&gt;&lt;script&gt;alert(&quot;summary&quot;)&lt;/script&gt;');
  });

  it('escapes them on the feature page, in the SVG titles and the evidence too', async () => {
    const res = await get(fake([nastyReport]).deps, `/feature/${encodeURIComponent(NASTY)}`);
    expect(res.status).toBe(200);
    const { body } = res;
    expect(body).not.toMatch(/<script|<img|<iframe|<b |<svg onload/i);
    expect(body).toContain(`<h1 id="feature-h"><span>${ESCAPED_NAME}</span>`);
    expect(body).toContain(`<title id="h-psi-t">Bins of ${ESCAPED_NAME} that moved most: baseline and current shares</title>`);
    expect(body).toContain('category &quot;&lt;b onmouseover=alert(2)&gt;x&lt;/b&gt;&quot;');
    expect(body).toContain('category &quot;a&amp;b&quot;');
    expect(body).toContain('&lt;iframe src=&quot;https://example.invalid/&quot;&gt;');
    expect(body).toContain('<code>&lt;svg onload=alert(3)&gt;</code>');
  });

  it('loads nothing from elsewhere: every link and source is on this server', async () => {
    for (const target of ['/', '/feature/price_rel', '/feature/title_match']) {
      const { body } = await get(fake(SCENARIO).deps, target);
      const urls = [...body.matchAll(/\s(?:href|src|action)="([^"]*)"/g)].map((m) => m[1]!);
      expect(urls.length).toBeGreaterThan(3);
      for (const u of urls) expect(u === 'data:,' || u.startsWith('/')).toBe(true);
      expect(body).not.toMatch(/\ssrc=/);
      expect(body).not.toMatch(/@import|url\(/);
    }
  });
});

describe('feature page', () => {
  it('asks the store for each charted check, with the rule of the rule check', async () => {
    const f = fake(SCENARIO);
    await get(f.deps, '/feature/price_rel');
    await get(f.deps, '/feature/title_match?date=2031-05-09');
    expect(f.historyCalls).toEqual([
      { feature: 'price_rel', check: 'psi', rule: undefined, limit: HISTORY_LIMIT },
      { feature: 'price_rel', check: 'ks', rule: undefined, limit: HISTORY_LIMIT },
      { feature: 'title_match', check: 'psi', rule: undefined, limit: HISTORY_LIMIT },
      { feature: 'title_match', check: 'rule_violation_ratio', rule: 'minmax', limit: HISTORY_LIMIT },
      { feature: 'title_match', check: 'flat_list_ratio', rule: undefined, limit: HISTORY_LIMIT },
    ]);
  });

  it('draws PSI and KS D over the stored days with threshold lines where the documented scale puts them', async () => {
    const { body } = await get(fake(SCENARIO).deps, '/feature/price_rel');
    const psi = svgOf(body, 'c-psi');
    // PSI values 0.04, 0.14, 0.31; lines at 0.1 and 0.25. yMax = niceCeiling(1.1 * 0.31 = 0.341) = 0.5
    // (the smallest of 1, 2, 2.5, 5 times a power of ten that is >= 0.341).
    expect(psi).toContain('data-ymax="0.5"');
    expect(thresholdY(psi, 'critical')).toBe(expectedY(0.25, 0.5)); // 14 + 156 * 0.5 = 92
    expect(thresholdY(psi, 'warn')).toBe(expectedY(0.1, 0.5)); // 14 + 156 * 0.8 = 138.8
    expect(expectedY(0.25, 0.5)).toBe(92);
    expect(psi).toMatch(/<text [^>]*class="thr-label"[^>]*>critical 0.25<\/text>/);
    expect(psi).toMatch(/<text [^>]*class="thr-label"[^>]*>warn 0.1<\/text>/);
    // One marker per stored day, shaped by status (circle ok, triangle warn, square critical).
    expect(psi.match(/class="mk mk-ok"/g)).toHaveLength(1);
    expect(psi.match(/class="mk mk-warn"/g)).toHaveLength(1);
    expect(psi.match(/class="mk mk-critical"/g)).toHaveLength(1);
    expect(psi).toContain('<title>2031-05-10: 0.31 (critical)</title>');
    // The newest point sits on the right edge of the plot at its value.
    expect(psi).toContain(`x="${LINE_CHART.width - LINE_CHART.right - 4.5}" y="${expectedY(0.31, 0.5) - 4.5}"`);
    expect(psi).toMatch(/^<svg class="chart line-chart" viewBox="0 0 560 200" role="img" aria-labelledby="c-psi-t c-psi-d"[^>]*>/);
    expect(psi).toContain('<title id="c-psi-t">PSI of price_rel over 3 stored days</title>');

    const ks = svgOf(body, 'c-ks');
    // KS D values 0.02, 0.06, 0.12; lines at 0.1 and 0.2. yMax = niceCeiling(1.1 * 0.2 = 0.22) = 0.25.
    expect(ks).toContain('data-ymax="0.25"');
    expect(thresholdY(ks, 'critical')).toBe(expectedY(0.2, 0.25)); // 14 + 156 * 0.2 = 45.2
    expect(thresholdY(ks, 'warn')).toBe(expectedY(0.1, 0.25)); // 14 + 156 * 0.6 = 107.6
  });

  it('charts within-list ratios with thresholds on top of the baseline, and a baseline line', async () => {
    const { body } = await get(fake(SCENARIO).deps, '/feature/title_match');
    const rule = svgOf(body, 'c-rule_violation_ratio');
    // Values 0.4%, 3%, 9%; baseline 0.4%, warn +2%, critical +5% => lines at 2.4% and 5.4%.
    // yMax = niceCeiling(1.1 * 0.09 = 0.099) = 0.1.
    expect(rule).toContain('data-ymax="0.1"');
    expect(thresholdY(rule, 'warn')).toBe(expectedY(0.024, 0.1)); // 132.6
    expect(thresholdY(rule, 'critical')).toBe(expectedY(0.054, 0.1)); // 85.8
    expect(thresholdY(rule, 'baseline')).toBe(expectedY(0.004, 0.1));
    expect(rule).toContain('>critical 5.4%</text>');
    expect(body).toContain('rule violations (minmax): 9%');
    expect(svgOf(body, 'c-flat_list_ratio')).toContain('data-level="critical"');
  });

  it('marks the shown date on the chart when it is not the newest', async () => {
    const { body } = await get(fake(SCENARIO).deps, '/feature/price_rel?date=2031-05-09');
    const psi = svgOf(body, 'c-psi');
    const middle = LINE_CHART.left + (LINE_CHART.width - LINE_CHART.left - LINE_CHART.right) / 2;
    expect(psi).toContain(`<line class="cursor" x1="${middle}" x2="${middle}"`);
    expect(svgOf((await get(fake(SCENARIO).deps, '/feature/price_rel')).body, 'c-psi')).not.toContain('class="cursor"');
  });

  it('shows baseline and current on the same bins, in bin order, labelled as the bins that moved most', async () => {
    const { body } = await get(fake(SCENARIO).deps, '/feature/price_rel');
    expect(body).toContain('Showing the 5 bins that moved most of the 11 bins in use');
    const hist = svgOf(body, 'h-psi');
    const labels = [...hist.matchAll(/class="bin-label">([^<]*)</g)].map((m) => m[1]);
    expect(labels).toEqual(['(-inf, 0.6]', '(0.9, 1)', '[1, 1]', '(1.4, +inf)', 'missing']);
    // The largest share shown (28%) spans the bar area; the others in proportion.
    const barMax = BIN_CHART.width - BIN_CHART.label - BIN_CHART.right; // 326
    expect(hist).toMatch(new RegExp(`class="bar-current" x="170" y="[^"]+" width="${barMax}"`));
    expect(hist).toMatch(new RegExp(`class="bar-baseline" x="170" y="[^"]+" width="${Math.round(((barMax * 0.1) / 0.28) * 10) / 10}"`));
    // The table keeps the report's order: largest PSI term first.
    const table = /<caption class="vh">Bins that moved most[\s\S]*?<\/table>/.exec(body)![0];
    const rows = [...table.matchAll(/<tr><th scope="row"><code>([^<]*)<\/code><\/th><td class="num">([^<]*)<\/td><td class="num">([^<]*)<\/td><td class="num">([^<]*)<\/td><td class="num">([^<]*)<\/td>/g)].map((m) => m.slice(1));
    expect(rows).toEqual(PRICE_BINS.map((b) => [b.bin.replace(/&/g, '&amp;'), expect.any(String), expect.any(String), expect.any(String), expect.any(String)]));
    expect(rows[0]).toEqual(['(1.4, +inf)', '10%', '28%', '+18 pts', '0.106']);
  });

  it('lists every finding of the feature with its summary and evidence', async () => {
    const { body } = await get(fake(SCENARIO).deps, '/feature/price_rel');
    const cards = [...body.matchAll(/<article class="finding f-(\w+)">([\s\S]*?)<\/article>/g)];
    expect(cards.map((c) => c[1])).toEqual(['critical', 'warn', 'ok', 'ok']);
    const psiCard = stripTags(cards[0]![2]!);
    expect(psiCard).toContain('PSI 0.31 (critical; warn >= 0.1, critical >= 0.25; noise floor 0.002)');
    expect(psiCard).toContain('alert alerting at critical since 2031-05-10; 1 run in a row at warn or worse, 1 at critical');
    expect(psiCard).toContain('noise floor 0.002');
    expect(psiCard).toContain('baseline values compared (n) 100,000');
    const ksCard = stripTags(cards[1]![2]!);
    expect(ksCard).toContain('adjusted p-value (Benjamini-Hochberg) 6.0e-12');
    expect(stripTags(cards[3]![2]!)).toContain('range {"min":0,"max":50}');
    expect(body).toContain('href="/?date=2031-05-10">back to the overview</a>');
    expect(body).toContain('href="/api/v1/reports/2031-05-10">JSON report of 2031-05-10</a>');
  });

  it('says when there is no history or no bin evidence instead of drawing an empty chart', async () => {
    const lone = report('2031-05-10', [finding({ feature: 'fresh', check: 'ks', value: 0.05, status: 'ok' })]);
    const deps: StatusPageDeps = { ...fake([lone]).deps, history: async () => [] };
    const { body } = await get(deps, '/feature/fresh');
    expect(body).toContain('No PSI finding for this feature on 2031-05-10');
    expect(body).toContain('No stored values to chart yet.');
    expect(body).not.toContain('<svg');
  });
});

describe('errors', () => {
  it('answers 404 pages for unknown features, dates and paths', async () => {
    const { deps } = fake(SCENARIO);
    const feature = await get(deps, '/feature/no_such_feature');
    expect(feature.status).toBe(404);
    expect(feature.contentType).toBe('text/html; charset=utf-8');
    expect(feature.body).toContain('<h1>Feature not found</h1>');
    expect(feature.body).toContain('href="/feature/price_rel?date=2031-05-10"');

    const date = await get(deps, '/?date=2031-06-01');
    expect(date.status).toBe(404);
    expect(date.body).toContain('No run stored for 2031-06-01');

    const featureDate = await get(deps, '/feature/price_rel?date=2030-01-01');
    expect(featureDate.status).toBe(404);

    const path = await get(deps, '/nowhere');
    expect(path.status).toBe(404);
    expect(path.body).toContain('Page not found');
  });

  it('answers 400 for a date that is not a calendar date, without repeating it', async () => {
    const res = await get(fake(SCENARIO).deps, '/?date=2031-02-30%3Cb%3E');
    expect(res.status).toBe(400);
    expect(res.body).not.toContain('2031-02-30');
    expect((await get(fake(SCENARIO).deps, '/?date=2031-02-30')).status).toBe(400);
  });

  it('leaves API paths to the HTTP server', async () => {
    expect(await createStatusPage(fake(SCENARIO).deps)('/api/v1/nothing', new URLSearchParams())).toBeNull();
  });

  it('does not choke on a malformed percent-encoding', async () => {
    const res = await get(fake(SCENARIO).deps, '/feature/%E0%A4%A');
    expect(res.status).toBe(404);
  });
});

describe('chart scale', () => {
  it('rounds the axis maximum up to 1, 2, 2.5 or 5 times a power of ten', () => {
    expect(niceCeiling(0.341)).toBe(0.5);
    expect(niceCeiling(0.22)).toBe(0.25);
    expect(niceCeiling(0.099)).toBe(0.1);
    expect(niceCeiling(0.1)).toBe(0.1);
    expect(niceCeiling(1.3)).toBe(2);
    expect(niceCeiling(6)).toBe(10);
    expect(niceCeiling(0.0031)).toBe(0.005);
    expect(niceCeiling(0)).toBe(1);
  });
});

describe('size', () => {
  const checks = FEATURE_CHECKS;
  const day = (date: string, i: number): Report =>
    report(
      date,
      Array.from({ length: 50 }, (_, k) =>
        checks.map((check) =>
          finding({
            feature: `feature_number_${String(k).padStart(2, '0')}`,
            check,
            rule: check === 'rule_violation_ratio' ? 'zscore' : null,
            value: 0.01 * ((k + i) % 30),
            status: (k + i) % 7 === 0 ? 'critical' : (k + i) % 5 === 0 ? 'warn' : 'ok',
            summary: `${check} summary with a typical length for a finding of this kind, ${k}`,
            evidence: { baseline: 0.01, current: 0.02, n: 100_000, m: 250_000, bins: check === 'psi' ? PRICE_BINS : undefined },
            alert: (k + i) % 7 === 0 ? alerting('critical', date, 3) : {},
          }),
        ),
      ).flat(),
    );
  const dates = Array.from({ length: HISTORY_LIMIT }, (_, i) => new Date(Date.UTC(2031, 0, 1 + i)).toISOString().slice(0, 10));
  const reports = dates.map((d, i) => day(d, i));

  it('keeps the overview of 50 features and the feature page with 90 stored days under 200 KB', async () => {
    const { deps } = fake(reports);
    const overview = await get(deps, '/');
    expect(grid(overview.body).rows).toHaveLength(50);
    expect(Buffer.byteLength(overview.body)).toBeLessThan(200 * 1024);
    const feature = await get(deps, '/feature/feature_number_03');
    expect(svgOf(feature.body, 'c-psi').match(/class="mk /g)).toHaveLength(HISTORY_LIMIT);
    expect(Buffer.byteLength(feature.body)).toBeLessThan(200 * 1024);
  });
});

describe('ranking findings on the status page', () => {
  const day = report('2031-05-11', [
    finding({
      feature: 'title_match',
      check: 'position_rank_correlation',
      value: 0.773,
      score: 1.543,
      status: 'critical',
      thresholds: { type: 'above', warn: 0.1, critical: 0.2 },
      summary: 'mean within-list rank correlation with the position 0.773 (baseline -0.77, change +1.543)',
      evidence: { baseline: -0.77, current: 0.773, change: 1.543, noise: 0.0064, z: 242.6, lists: 6102, oppositeSignShare: 1, baselineOppositeSignShare: 0.001 },
    }),
    finding({ feature: 'title_match', check: 'psi', value: 0.001, status: 'ok' }),
    finding({
      feature: null,
      check: 'mean_reciprocal_rank',
      value: 0.536,
      score: 0.112,
      status: 'warn',
      thresholds: { type: 'above', warn: 0.03, critical: 0.06 },
      summary: 'mean reciprocal rank of the first positive of 2031-05-11 0.536 (baseline 0.648)',
      evidence: { baseline: 0.648, current: 0.536, outcomeDate: '2031-05-11', lists: 5120 },
    }),
    finding({
      feature: null,
      check: 'positive_position_psi',
      value: 0.062,
      status: 'critical',
      thresholds: { type: 'above', warn: 0.02, critical: 0.05 },
      evidence: { baseline: 0.305, current: 0.245, bins: [{ bin: 'rank 1', baselineShare: 0.305, currentShare: 0.245, contribution: 0.013 }] },
    }),
  ]);

  it('shows the association in the feature grid and on the feature page, judged by a change either way', async () => {
    const deps = fake([day]).deps;
    const overview = await get(deps, '/');
    const g = grid(overview.body);
    expect(g.header).toContain('order association');
    expect(g.rows.find((r) => r[0] === 'title_match')!.join(' | ')).toContain('critical 0.773');
    const page = stripTags((await get(deps, '/feature/title_match')).body);
    expect(page).toContain('order association position_rank_correlation');
    expect(page).toContain('warn at a change of ±0.1, critical at ±0.2 from the baseline, once beyond its noise');
    expect(page).toContain('lists against the baseline’s sign 1');
    expect(page).toContain('change / noise 243');
  });

  it('lists the outcomes with the whole-day checks: MRR in numbers, the click curve by served rank', async () => {
    const body = stripTags((await get(fake([day]).deps, '/')).body);
    expect(body).toContain('MRR mean_reciprocal_rank ▲ warn 0.536 0.648 0.536');
    expect(body).toContain('click curve PSI positive_position_psi ✖ critical 0.062 30.5% 24.5%');
    expect(body).toContain('Ranks whose share of positives moved most Served rank');
  });
});

describe('learned thresholds and first-run alerts', () => {
  const date = '2031-05-10';
  const learnedKs = finding({
    feature: 'price_rel',
    check: 'ks',
    value: 0.052,
    status: 'warn',
    thresholds: { type: 'above', warn: 0.034, critical: 0.068, learned: true },
    evidence: {
      learnedThreshold: { method: 'leave_one_out', statistic: 'ks', days: 27, quantile: 0.95, quantileValue: 0.0227, margin: 1.5, criticalMultiple: 2, floor: 0.03, fixed: { warn: 0.1, critical: 0.2 } },
    },
  });
  const overflow = finding({
    feature: 'price_rel',
    check: 'extreme_value_ratio',
    value: 0.1,
    status: 'critical',
    thresholds: { type: 'above', warn: 0.001, critical: 0.01 },
    evidence: { alertRule: 'immediate', mostExtreme: 1e308 },
    alert: { ...alerting('critical', date, 1), rule: 'immediate' },
  });
  const deps = fake([report(date, [learnedKs, overflow])]).deps;

  it('shows the learned threshold next to the value, on the overview and on the feature page', async () => {
    expect(cell((await get(deps, '/')).body, 'price_rel', 'KS D')).toBe('▲ warn 0.052 learned warn 0.034');
    const page = stripTags((await get(deps, '/feature/price_rel')).body);
    expect(page).toContain('judged by warn at 0.034, critical at 0.068 (learned from the baseline’s day-to-day variation)');
    expect(page).toContain('threshold learned ks of each of 27 baseline days against the rest of the window; its 0.95 quantile 0.0227 × 1.5 (never below 0.03) gives warn, × 2 more critical; the fixed thresholds would be 0.1 / 0.2');
  });

  it('says when a finding alerted on its first run, far beyond its critical threshold', async () => {
    const page = stripTags((await get(deps, '/feature/price_rel')).body);
    expect(page).toContain('on its first run, far beyond the critical threshold');
    expect(page).toContain('alerting by first run: far beyond the critical threshold');
    expect(page).toContain('beyond extremes');
  });
});
