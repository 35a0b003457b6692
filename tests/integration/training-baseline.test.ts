/**
 * The training set as a baseline (baseline.source): a day that matches recent traffic but
 * not the relation the model was fitted on is caught (training-serving skew), and a day
 * that matches the training relation but not a drifted recent window is quiet against it.
 * On a PostgreSQL server (both engines) and on PGlite (stream).
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { addDays, type ScenarioOptions } from '../../demo-data/scenario.ts';
import { loadScenario } from '../../demo-data/load.ts';
import type { Config } from '../../src/config/index.ts';
import { ConfigError } from '../../src/errors.ts';
import type { Report } from '../../src/report/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { startPglite, type PgliteServer } from '../support/pglite.ts';
import { runDays } from '../support/run-days.ts';
import { scenarioConfig } from '../support/scenario-config.ts';

const START = '2025-10-06';
/** Days 0..6: the training period; 7..13: recent traffic; 14: the evaluated day. */
const SCENARIO: ScenarioOptions = { startDate: START, days: 15, listsPerDay: 120, meanListSize: 16, seed: 515 };
const DAY = addDays(START, 14);
const LEVEL = { ok: 0, warn: 1, critical: 2 } as const;

/**
 * Loads two source tables and two training relations:
 * - `serving_a`: every day as generated; `train_skewed`: days 0..6 with price x 2 (the
 *   model was fitted on other prices than it is served);
 * - `serving_b`: days 7..13 with price x 2 (recent traffic drifted), day 14 as generated;
 *   `train_clean`: days 0..6 as generated (a view with a date range in it).
 */
async function loadTables(client: pg.Client, schema: string): Promise<void> {
  await loadScenario(client, { table: `${schema}.serving_a`, layout: 'wide', scenario: SCENARIO });
  await client.query(`CREATE TABLE ${schema}.serving_b AS SELECT * FROM ${schema}.serving_a`);
  await client.query(`UPDATE ${schema}.serving_b SET price = price * 2 WHERE snapshot_date BETWEEN $1 AND $2`, [addDays(START, 7), addDays(START, 13)]);
  await client.query(`CREATE TABLE ${schema}.train_skewed AS SELECT * FROM ${schema}.serving_a WHERE snapshot_date <= $1`, [addDays(START, 6)]);
  await client.query(`UPDATE ${schema}.train_skewed SET price = price * 2`);
  await client.query(`CREATE VIEW ${schema}.train_clean AS SELECT * FROM ${schema}.serving_a`);
}

function config(table: string, store: string, engine: 'stream' | 'pushdown', training?: { table: string; from?: string; to?: string }): Config {
  const c = scenarioConfig(table, { storeSchema: store, overrides: { baseline: { window: { type: 'trailing', days: 7 }, ...(training !== undefined ? { source: training } : {}) } } });
  return { ...c, source: { ...c.source, engine } };
}

const priceDrift = (r: Report): number => Math.max(...r.findings.filter((f) => f.feature === 'price' && (f.check === 'psi' || f.check === 'ks')).map((f) => LEVEL[f.status]));

function suite(name: string, target: () => { url: string; engines: readonly ('stream' | 'pushdown')[] } | undefined): void {
  describe.skipIf(target() === undefined)(name, () => {
    const schema = uniqueSchema('tb_src');
    const stores: string[] = [];
    const out = new Map<string, Report>();
    let admin: pg.Client;

    beforeAll(async () => {
      const { url, engines } = target()!;
      admin = new pg.Client({ connectionString: url });
      await admin.connect();
      await loadTables(admin, schema);
      const cases: [string, string, { table: string; from?: string; to?: string } | undefined][] = [
        ['a-window', 'serving_a', undefined],
        ['a-training', 'serving_a', { table: `${schema}.train_skewed` }],
        ['b-window', 'serving_b', undefined],
        ['b-training', 'serving_b', { table: `${schema}.train_clean`, from: START, to: addDays(START, 6) }],
      ];
      for (const engine of engines) {
        for (const [key, table, training] of cases) {
          const store = uniqueSchema('tb_store');
          stores.push(store);
          const reports = await runDays(config(`${schema}.${table}`, store, engine, training), url, [DAY]);
          out.set(`${engine} ${key}`, reports.get(DAY)!);
        }
      }
    }, 300_000);

    afterAll(async () => {
      await admin?.query([schema, ...stores].map((s) => `DROP SCHEMA IF EXISTS "${s}" CASCADE`).join('; '));
      await admin?.end();
    });

    it('catches a day that matches recent traffic but not the training relation (skew)', () => {
      for (const engine of target()!.engines) {
        expect(priceDrift(out.get(`${engine} a-window`)!), `${engine}: against the window`).toBe(LEVEL.ok);
        expect(priceDrift(out.get(`${engine} a-training`)!), `${engine}: against the training set`).toBeGreaterThanOrEqual(LEVEL.warn);
      }
    });

    it('stays quiet on a day that matches the training relation but not a drifted recent window', () => {
      for (const engine of target()!.engines) {
        expect(priceDrift(out.get(`${engine} b-window`)!), `${engine}: against the window`).toBeGreaterThanOrEqual(LEVEL.warn);
        expect(priceDrift(out.get(`${engine} b-training`)!), `${engine}: against the training set`).toBe(LEVEL.ok);
      }
    });

    it('says which baseline a run used, and does not compare volumes with a training set', () => {
      const engine = target()!.engines[0]!;
      const w = out.get(`${engine} a-window`)!;
      expect(w.baseline.source).toEqual({ type: 'window' });
      expect(w.findings.some((f) => f.check === 'row_count_ratio')).toBe(true);
      const t = out.get(`${engine} b-training`)!;
      expect(t.baseline.source).toEqual({ type: 'relation', table: `${schema}.train_clean`, from: START, to: addDays(START, 6) });
      expect(t.baseline.window).toEqual({ type: 'relation', from: START, to: addDays(START, 6) });
      expect(t.baseline.days).toEqual(Array.from({ length: 7 }, (_, i) => addDays(START, i)));
      expect(t.findings.some((f) => f.check === 'row_count_ratio' || f.check === 'list_count_ratio')).toBe(false);
      // The whole training relation when no dates are given.
      expect(out.get(`${engine} a-training`)!.baseline.days).toHaveLength(7);
    });

    it('names the setting when the training relation does not exist or lacks a column', async () => {
      const { url } = target()!;
      const store = uniqueSchema('tb_store');
      stores.push(store);
      const missing = runDays(config(`${schema}.serving_a`, store, 'stream', { table: `${schema}.no_such_table` }), url, [DAY]);
      await expect(missing).rejects.toThrow(ConfigError);
      await expect(missing).rejects.toMatchObject({ problems: [expect.stringMatching(/^baseline\.source\.table \(.*no_such_table\): source\.table: table or view/)] });
      await admin.query(`CREATE VIEW ${schema}.train_narrow AS SELECT snapshot_date, list_id, item_id, position, clicked, model_score FROM ${schema}.serving_a`);
      const narrow = runDays(config(`${schema}.serving_a`, store, 'stream', { table: `${schema}.train_narrow` }), url, [DAY]);
      await expect(narrow).rejects.toMatchObject({ problems: expect.arrayContaining([expect.stringMatching(/^baseline\.source\.table \(.*train_narrow\): features\[0\]\.column: column "text_match" does not exist/)]) });
    });
  });
}

const server = testDatabaseUrl();
suite('training set as baseline on the PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL)', () => (server === undefined ? undefined : { url: server, engines: ['stream', 'pushdown'] }));

let lite: PgliteServer | undefined;
describe('training set as baseline on PGlite', () => {
  beforeAll(async () => {
    lite = await startPglite();
  });
  afterAll(async () => {
    await lite?.stop();
  });
  suite('stream engine', () => ({ url: lite?.url ?? 'postgres://unset', engines: ['stream'] }));
});
