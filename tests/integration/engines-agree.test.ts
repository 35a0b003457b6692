/**
 * The same data gives the same report on a PostgreSQL server and on embedded PGlite, in
 * both source layouts (one column per feature, and keys of one jsonb column). PGlite runs
 * everywhere; the server half runs when PLUMBLINE_TEST_DATABASE_URL is set.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import { startEmbeddedPostgres, type EmbeddedPostgres } from '../../src/demo/embedded.ts';
import type { Report } from '../../src/report/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { runDays } from '../support/run-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const START = '2025-09-01';
const SCENARIO: ScenarioOptions = {
  startDate: START,
  days: 9,
  listsPerDay: 60,
  meanListSize: 12,
  seed: 99,
  faults: [
    { date: addDays(START, 7), kind: 'unit_change', feature: 'price', amount: 100 },
    { date: addDays(START, 8), kind: 'type_error', feature: 'review_count', amount: 0.05 },
    { date: addDays(START, 8), kind: 'nonfinite', feature: 'text_match', amount: 0.05 },
  ],
};
const RUN_DATES = [addDays(START, 7), addDays(START, 8)];

/** A report without what legitimately differs between two runs: times, and fingerprints (the table names differ). */
function comparable(r: Report): unknown {
  return { ...r, startedAt: undefined, finishedAt: undefined, configFingerprint: undefined, baseline: { ...r.baseline, fingerprint: undefined } };
}

async function runOn(url: string, layout: 'wide' | 'jsonb'): Promise<Report[]> {
  const src = uniqueSchema('ea_src');
  const store = uniqueSchema('ea_store');
  const table = `${src}.impressions`;
  const admin = new pg.Client({ connectionString: url });
  await admin.connect();
  try {
    await loadScenario(admin, { table, layout, scenario: SCENARIO });
    // Slices too (plant_family is an item feature; as a segment column it slices rows all the same; the jsonb layout has no such column).
    const slices = { topK: [5], segments: layout === 'wide' ? [{ column: 'plant_family', maxValues: 2, minRows: 50 }] : [] };
    const config = scenarioConfig(table, { layout, storeSchema: store, overrides: { baseline: { window: { type: 'trailing', days: 7 } }, slices } });
    return [...(await runDays(config, url, RUN_DATES)).values()];
  } finally {
    await admin.query(`DROP SCHEMA IF EXISTS "${src}" CASCADE; DROP SCHEMA IF EXISTS "${store}" CASCADE`);
    await admin.end();
  }
}

describe('reports agree across databases and layouts', () => {
  let lite: EmbeddedPostgres;
  const results: Record<string, Report[]> = {};

  beforeAll(async () => {
    lite = await startEmbeddedPostgres();
    results['pglite-wide'] = await runOn(lite.url, 'wide');
    results['pglite-jsonb'] = await runOn(lite.url, 'jsonb');
  });
  afterAll(async () => {
    await lite?.stop();
  });

  it('catches the unit change on PGlite', () => {
    const price = results['pglite-wide']![0]!.findings.find((f) => f.feature === 'price' && f.check === 'psi' && f.slice === 'all');
    expect(price?.status).toBe('critical');
  });

  it('checks the slices on PGlite, in both layouts, and catches the unit change in each', () => {
    const wide = results['pglite-wide']![0]!;
    expect(wide.slices?.map((s) => s.slice)).toEqual(['top5', expect.stringMatching(/^segment:plant_family=/), expect.stringMatching(/^segment:plant_family=/), 'segment:plant_family:other']);
    expect(results['pglite-jsonb']![0]!.slices?.map((s) => s.slice)).toEqual(['top5']);
    for (const s of wide.slices!) expect(wide.findings.find((f) => f.slice === s.slice && f.feature === 'price' && f.check === 'psi')?.status, s.slice).toBe('critical');
  });

  it('counts text in a numeric jsonb key as type errors, and reads the rest of the jsonb layout like the wide one', () => {
    const [, wideDay] = results['pglite-wide']!;
    const [, jsonDay] = results['pglite-jsonb']!;
    const typeErrors = jsonDay!.findings.find((f) => f.feature === 'review_count' && f.check === 'type_error_ratio' && f.slice === 'all');
    expect(typeErrors?.status).toBe('critical');
    // JSON has no NaN or Infinity: in the jsonb layout the loader writes them as strings,
    // which are type errors there, while the wide layout sees real NaN/Infinity.
    const nonfiniteWide = wideDay!.findings.find((f) => f.feature === 'text_match' && f.check === 'nonfinite_ratio' && f.slice === 'all');
    expect(nonfiniteWide?.status).toBe('critical');
    const textMatchJson = jsonDay!.findings.find((f) => f.feature === 'text_match' && f.check === 'type_error_ratio' && f.slice === 'all');
    expect(textMatchJson?.status).toBe('critical');
    // A feature no fault touched has the same statistics in both layouts.
    for (const check of ['psi', 'ks', 'flat_list_ratio'] as const) {
      const a = wideDay!.findings.find((f) => f.feature === 'semantic_similarity' && f.check === check && f.slice === 'all');
      const b = jsonDay!.findings.find((f) => f.feature === 'semantic_similarity' && f.check === check && f.slice === 'all');
      expect(b?.value).toBe(a?.value);
    }
  });

  it('judges the ranking checks too, so the reports compared below cover them', () => {
    const day = results['pglite-wide']![1]!;
    const checks = new Set(day.findings.map((f) => f.check));
    for (const c of ['position_rank_correlation', 'score_rank_correlation', 'mean_reciprocal_rank', 'ndcg', 'positive_position_psi']) expect(checks.has(c as never), c).toBe(true);
    // The same per-list values from the jsonb layout (features untouched by that day's faults).
    const a = day.findings.find((f) => f.feature === 'semantic_similarity' && f.check === 'position_rank_correlation')!;
    const b = results['pglite-jsonb']![1]!.findings.find((f) => f.feature === 'semantic_similarity' && f.check === 'position_rank_correlation')!;
    expect(b.value).toBe(a.value);
  });

  const server = testDatabaseUrl();
  it.skipIf(server === undefined)('gives the same reports on the PostgreSQL server as on PGlite (both layouts)', async () => {
    const wide = await runOn(server!, 'wide');
    const jsonb = await runOn(server!, 'jsonb');
    expect(wide.map(comparable)).toEqual(results['pglite-wide']!.map(comparable));
    expect(jsonb.map(comparable)).toEqual(results['pglite-jsonb']!.map(comparable));
  });
});
