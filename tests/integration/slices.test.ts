/**
 * Slices end to end on a real PostgreSQL server (both engines) and on PGlite (stream): a
 * shift confined to the top 10 positions and a shift confined to one market of about 6 % of
 * the lists (tests/support/slice-days.ts) are caught by the slice checks and not by the
 * whole-day checks, clean days with weekly seasonality stay quiet, and the two engines agree
 * on every slice finding.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, scenarioDates, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import type { Config } from '../../src/config/index.ts';
import type { Finding, Report } from '../../src/report/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { startPglite, type PgliteServer } from '../support/pglite.ts';
import { runDays } from '../support/run-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';
import { CLEAN_DAYS, SEGMENT_SHIFT_DAY, SLICE_BASELINE_DAYS, SLICE_START, TOP_SHIFT_DAY, cleanDay, loadSliceScenario, sliceScenario } from '../support/slice-days.ts';

const url = testDatabaseUrl();
const LEVEL = { ok: 0, warn: 1, critical: 2 } as const;

function sliceConfig(table: string, store: string, engine: 'stream' | 'pushdown', minRows = 1000): Config {
  const config = scenarioConfig(table, {
    storeSchema: store,
    overrides: {
      baseline: { window: { type: 'trailing', days: SLICE_BASELINE_DAYS } },
      slices: { topK: [10], segments: [{ column: 'market', maxValues: 4, minRows }] },
    },
  });
  return { ...config, source: { ...config.source, engine } };
}

const find = (r: Report, slice: string, feature: string | null, check: string): Finding | undefined => r.findings.find((f) => (f.slice ?? 'all') === slice && f.feature === feature && f.check === check);
const level = (f: Finding | undefined): number => (f === undefined ? -1 : LEVEL[f.status]);
/** The worst status of a feature's drift findings (psi, ks) in a slice. */
const drift = (r: Report, slice: string, feature: string): number => Math.max(level(find(r, slice, feature, 'psi')), level(find(r, slice, feature, 'ks')));

/** The shifts are caught in their slice and not in the whole day. */
function expectShiftsCaught(reports: Map<string, Report>, engine: string, segment = true): void {
  const top = reports.get(TOP_SHIFT_DAY)!;
  expect(drift(top, 'top10', 'text_match'), `${engine}: top10 text_match`).toBeGreaterThanOrEqual(LEVEL.warn);
  expect(drift(top, 'all', 'text_match'), `${engine}: whole-day text_match`).toBe(LEVEL.ok);
  if (!segment) return;
  const seg = reports.get(SEGMENT_SHIFT_DAY)!;
  expect(drift(seg, 'segment:market=isle', 'price'), `${engine}: isle price`).toBeGreaterThanOrEqual(LEVEL.warn);
  expect(drift(seg, 'all', 'price'), `${engine}: whole-day price`).toBe(LEVEL.ok);
  // The slice that caught it is named in the finding and listed in the report.
  expect(seg.slices?.find((s) => s.slice === 'segment:market=isle')?.baselineDays).toBe(SLICE_BASELINE_DAYS);
}

describe.skipIf(url === undefined)('slices on the PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const src = uniqueSchema('sl_src');
  const table = `${src}.impressions`;
  const stores: string[] = [];
  let admin: pg.Client;
  let stream: Map<string, Report>;
  let pushdown: Map<string, Report>;
  const cleanDates = Array.from({ length: CLEAN_DAYS }, (_, i) => cleanDay(i));

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await loadSliceScenario(admin, table, { listsPerDay: 800, meanListSize: 40 }, 'copy');
    const s1 = uniqueSchema('sl_stream');
    const s2 = uniqueSchema('sl_push');
    stores.push(s1, s2);
    stream = await runDays(sliceConfig(table, s1, 'stream'), url!, [...cleanDates, TOP_SHIFT_DAY, SEGMENT_SHIFT_DAY]);
    pushdown = await runDays(sliceConfig(table, s2, 'pushdown'), url!, [TOP_SHIFT_DAY, SEGMENT_SHIFT_DAY]);
  }, 600_000);

  afterAll(async () => {
    await admin?.query([src, ...stores].map((s) => `DROP SCHEMA IF EXISTS "${s}" CASCADE`).join('; '));
    await admin?.end();
  });

  it('checks the top 10 positions, each market with enough rows, and the pooled rest, each against its own baseline', () => {
    const r = stream.get(cleanDates[0]!)!;
    expect(r.slices?.map((s) => s.slice)).toEqual(['top10', 'segment:market=north', 'segment:market=south', 'segment:market=east', 'segment:market=isle', 'segment:market:other']);
    // The pooled rest reaches minRows on some days only: its baseline has those days.
    for (const s of r.slices!.slice(0, -1)) expect(s.baselineDays, s.slice).toBe(SLICE_BASELINE_DAYS);
    expect(r.slices!.at(-1)!.baselineDays).toBeGreaterThan(0);
    // Every slice has the feature checks of the whole day, and no dataset-level checks.
    const features = new Set(r.findings.filter((f) => f.slice === 'all' && f.feature !== null).map((f) => `${f.feature} ${f.check} ${f.rule}`));
    for (const s of r.slices!) {
      const own = r.findings.filter((f) => f.slice === s.slice);
      expect(own.every((f) => f.feature !== null)).toBe(true);
      expect(new Set(own.map((f) => `${f.feature} ${f.check} ${f.rule}`))).toEqual(features);
    }
  });

  it('raises no slice finding above warn on more than 1 % of slice-feature-days of clean days (a week, weekend included)', () => {
    let sliceFeatureDays = 0;
    const critical: string[] = [];
    for (const d of cleanDates) {
      const r = stream.get(d)!;
      const pairs = new Set(r.findings.filter((f) => f.slice !== 'all').map((f) => `${f.slice} ${f.feature}`));
      sliceFeatureDays += pairs.size;
      const bad = new Set(r.findings.filter((f) => f.slice !== 'all' && f.status === 'critical').map((f) => `${d} ${f.slice} ${f.feature}: ${f.summary}`));
      critical.push(...bad);
    }
    expect(sliceFeatureDays).toBeGreaterThan(500);
    expect(critical.length, critical.join('\n')).toBeLessThanOrEqual(0.01 * sliceFeatureDays);
  });

  it('stream engine: catches the top-10 shift in top10 and the market shift in its market, not in the whole day', () => {
    expectShiftsCaught(stream, 'stream');
  });

  it('pushdown engine: catches both in their slices, not in the whole day', () => {
    expectShiftsCaught(pushdown, 'pushdown');
    expect(find(pushdown.get(TOP_SHIFT_DAY)!, 'top10', 'text_match', 'ks')?.evidence['ksMethod']).toBe('binned');
  });

  it('counts a slice exactly in both engines: rows, lists, quality and within-list ratios', () => {
    for (const d of [TOP_SHIFT_DAY, SEGMENT_SHIFT_DAY]) {
      const s = stream.get(d)!;
      const p = pushdown.get(d)!;
      expect(p.slices?.map(({ baselineDays: _b, ...rest }) => rest)).toEqual(s.slices?.map(({ baselineDays: _b, ...rest }) => rest));
      for (const f of s.findings.filter((x) => x.slice !== 'all' && ['null_ratio', 'out_of_range_ratio', 'nonfinite_ratio', 'flat_list_ratio', 'rule_violation_ratio'].includes(x.check))) {
        const g = find(p, f.slice!, f.feature, f.check);
        expect(g?.value, `${d} ${f.slice} ${f.feature} ${f.check}`).toBe(f.value);
      }
    }
  });
});

/**
 * The two engines give the same slice findings when the day fits in the pushdown engine's
 * sample (then both build each slice's baseline from the same values): PSI over the same
 * bins to the last bit, quality, within-list and value checks identical, KS D within the
 * pushdown engine's reported bound.
 */
describe.skipIf(url === undefined)('both engines agree on slices (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const START = '2025-09-01';
  const SCENARIO: ScenarioOptions = { startDate: START, days: 9, listsPerDay: 80, meanListSize: 14, seed: 31, faults: [{ date: addDays(START, 8), kind: 'unit_change', feature: 'price', amount: 100 }] };
  const src = uniqueSchema('sla_src');
  const table = `${src}.impressions`;
  const stores: string[] = [];
  let admin: pg.Client;
  const reports: Record<'stream' | 'pushdown', Map<string, Report>> = { stream: new Map(), pushdown: new Map() };

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await loadScenario(admin, { table, layout: 'wide', scenario: SCENARIO });
    for (const engine of ['stream', 'pushdown'] as const) {
      const store = uniqueSchema(`sla_${engine}`);
      stores.push(store);
      const base = scenarioConfig(table, {
        storeSchema: store,
        // plant_family is an item feature; as a segment column it slices rows all the same.
        overrides: { baseline: { window: { type: 'trailing', days: 7 } }, slices: { topK: [5], firstPosition: 1, segments: [{ column: 'plant_family', maxValues: 2, minRows: 100 }] } },
      });
      reports[engine] = await runDays({ ...base, source: { ...base.source, engine } }, url!, [addDays(START, 7), addDays(START, 8)]);
    }
  }, 240_000);

  afterAll(async () => {
    await admin?.query([src, ...stores].map((s) => `DROP SCHEMA IF EXISTS "${s}" CASCADE`).join('; '));
    await admin?.end();
  });

  it('agrees on every slice finding', () => {
    let compared = 0;
    for (const d of [addDays(START, 7), addDays(START, 8)]) {
      const s = reports.stream.get(d)!;
      const p = reports.pushdown.get(d)!;
      expect(p.slices).toEqual(s.slices);
      const names = s.slices!.map((x) => x.slice);
      expect(names[0]).toBe('top5');
      expect(names.slice(1, 3).every((n) => /^segment:plant_family=(succulent|aroid|fern|cactus|herb|carnivorous)$/.test(n))).toBe(true);
      expect(names[3]).toBe('segment:plant_family:other');
      const key = (f: Finding): string => `${f.slice} ${f.feature} ${f.check} ${f.rule}`;
      const pf = new Map(p.findings.map((f) => [key(f), f]));
      expect([...pf.keys()].sort()).toEqual(s.findings.map(key).sort());
      for (const f of s.findings.filter((x) => x.slice !== 'all')) {
        const g = pf.get(key(f))!;
        const k = key(f);
        if (f.check === 'ks') {
          expect(g.value, k).toBeLessThanOrEqual(f.value + 1e-12);
          expect(f.value, k).toBeLessThanOrEqual(g.value + (g.evidence['dErrorBound'] as number) + 1e-12);
        } else {
          expect(g.value, k).toBe(f.value);
          expect(g.status, k).toBe(f.status);
        }
        compared++;
      }
    }
    expect(compared).toBeGreaterThan(100);
    // The unit change is caught in every slice, by both engines.
    for (const engine of ['stream', 'pushdown'] as const) {
      const r = reports[engine].get(addDays(START, 8))!;
      for (const s of r.slices!) expect(find(r, s.slice, 'price', 'psi')?.status, `${engine} ${s.slice}`).toBe('critical');
    }
  });
});

describe('slices on PGlite (stream engine)', () => {
  let lite: PgliteServer;
  let reports: Map<string, Report>;
  const src = 'sl_lite';

  beforeAll(async () => {
    lite = await startPglite();
    const client = new pg.Client({ connectionString: lite.url });
    await client.connect();
    try {
      // The baseline days and the top-10 shift day only (PGlite loads rows slowly).
      const dates = [...scenarioDates(sliceScenario(1, 40)).slice(0, SLICE_BASELINE_DAYS), TOP_SHIFT_DAY];
      expect(dates[0]).toBe(SLICE_START);
      await loadSliceScenario(client, `${src}.impressions`, { listsPerDay: 250, meanListSize: 40 }, 'unnest', dates);
    } finally {
      await client.end();
    }
    reports = await runDays(sliceConfig(`${src}.impressions`, 'sl_lite_store', 'stream', 500), lite.url, [TOP_SHIFT_DAY]);
  }, 300_000);

  afterAll(async () => {
    await lite?.stop();
  });

  it('catches the top-10 shift in top10 and not in the whole day', () => {
    expectShiftsCaught(reports, 'pglite', false);
    expect(reports.get(TOP_SHIFT_DAY)!.findings.find((f) => f.slice === 'top10' && f.feature === 'text_match' && f.check === 'psi')?.summary).toMatch(/^PSI/);
  });
});
