/**
 * Data that used to crash or fool a run, in both engines (stream and pushdown) on a real
 * PostgreSQL server (PLUMBLINE_TEST_DATABASE_URL): category values named after members of
 * Object.prototype, finite values near the top of the float64 range, NULL item ids and labels,
 * 100,000 distinct categories and 10 kB category strings in a day, and a first run without any
 * baseline day. Extreme values are data to report, never a reason to fail.
 *
 * The table is built here by SQL (an invented shop's result lists, 200 lists of 5 items a
 * day), so every expected count below follows from the statements that insert the rows.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseConfig, type Config } from '../../src/config/index.ts';
import { createPool } from '../../src/db/index.ts';
import type { CategoricalProfile } from '../../src/profile/index.ts';
import type { Finding, Report } from '../../src/report/index.ts';
import { profileFingerprint } from '../../src/run/index.ts';
import { Store } from '../../src/store/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { runDays } from '../support/run-days.ts';

const url = testDatabaseUrl();
const [D1, D2, D3, D4, D5] = ['2025-05-01', '2025-05-02', '2025-05-03', '2025-05-04', '2025-05-05'] as const;
const ENGINES = ['stream', 'pushdown'] as const;
const PROTO_NAMES = ['constructor', 'toString', '__proto__', 'valueOf'];

const find = (r: Report, feature: string | null, check: string): Finding => {
  const f = r.findings.find((x) => x.feature === feature && x.check === check);
  if (f === undefined) throw new Error(`no ${check} finding for ${feature ?? 'the dataset'} on ${r.runDate}`);
  return f;
};

describe.skipIf(url === undefined)('bad data in both engines (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const src = uniqueSchema('bad_src');
  const table = `${src}.results`;
  const stores: string[] = [];
  let admin: pg.Client;
  const reports: Record<(typeof ENGINES)[number], Map<string, Report>> = { stream: new Map(), pushdown: new Map() };
  const configs: Partial<Record<(typeof ENGINES)[number], Config>> = {};

  /**
   * One day of `lists` lists of 5 items. z is the per-list z-score of the position (population
   * sd of 1..5 is sqrt(2)); price is uniform; colour cycles through the prototype names; the
   * first item of every even list is clicked, so half the lists have no positive label.
   */
  async function insertDay(date: string, lists: number): Promise<void> {
    await admin.query(
      `INSERT INTO ${table}
       SELECT $1::date, 'q' || l, 'i' || l || '-' || p, p, CASE WHEN p = 1 AND l % 2 = 0 THEN 1 ELSE 0 END,
              (p - 3) / sqrt(2::float8), random() * 100, (ARRAY['constructor', 'toString', '__proto__', 'valueOf'])[1 + (l + p) % 4]
         FROM generate_series(0, $2::int - 1) AS l, generate_series(1, 5) AS p`,
      [date, lists],
    );
  }

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await admin.query(`CREATE SCHEMA ${src}`);
    await admin.query(
      `CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, clicked float8, z float8, price float8, colour text)`,
    );
    for (const d of [D1, D2, D3, D4]) await insertDay(d, 200);
    // D4, the broken day. z: one large value in each of lists 0..3 (the rule cannot hold there).
    await admin.query(`UPDATE ${table} SET z = (ARRAY[1e154, 1e200, 1e308, -1e308]::float8[])[1 + substr(list_id, 2)::int] WHERE snapshot_date = $1 AND list_id IN ('q0', 'q1', 'q2', 'q3') AND position = 5`, [D4]);
    // price: the extremes of the float64 range in list 4, any feature must take them. (Two
    // +1e308 and one -1e308: their sum is 1e308 in any order, so both engines' means agree.)
    await admin.query(`UPDATE ${table} SET price = (ARRAY[1e308, 1e308, -1e308, 1e200, 1e154]::float8[])[position] WHERE snapshot_date = $1 AND list_id = 'q4'`, [D4]);
    // 10 rows without an item id, 50 rows without a label (all inside lists), 10 rows of a new category.
    await admin.query(`UPDATE ${table} SET item_id = NULL WHERE snapshot_date = $1 AND list_id IN ('q10', 'q11') `, [D4]);
    await admin.query(`UPDATE ${table} SET clicked = NULL WHERE snapshot_date = $1 AND substr(list_id, 2)::int BETWEEN 20 AND 29`, [D4]);
    await admin.query(`UPDATE ${table} SET colour = 'hasOwnProperty' WHERE snapshot_date = $1 AND list_id IN ('q30', 'q31')`, [D4]);
    // D5: 100,000 distinct categories in 20,000 lists, and 100 values of 10 kB each.
    await admin.query(
      `INSERT INTO ${table}
       SELECT $1::date, 'q' || (g / 5), 'i' || g, 1 + g % 5, (g % 5 = 0)::int, ((g % 5) + 1 - 3) / sqrt(2::float8), random() * 100,
              CASE WHEN g < 100 THEN 'L' || g || '-' || repeat('y', 10000) ELSE 'c' || g END
         FROM generate_series(0, 99999) AS g`,
      [D5],
    );
    await admin.query(`ANALYZE ${table}`);

    for (const engine of ENGINES) {
      const schema = uniqueSchema(`bad_${engine}`);
      stores.push(schema);
      const config = parseConfig({
        source: { table, engine, columns: { label: 'clicked' } },
        features: [{ name: 'z', withinList: { rule: 'zscore' } }, { name: 'price' }, { name: 'colour', kind: 'categorical' }],
        baseline: { window: { type: 'trailing', days: 3 }, sampleSize: 1000 },
        store: { schema },
      });
      configs[engine] = config;
      reports[engine] = await runDays(config, url!, [D1, D4, D5]);
    }
  }, 300_000);

  afterAll(async () => {
    for (const s of [src, ...stores]) await admin?.query(`DROP SCHEMA IF EXISTS "${s}" CASCADE`);
    await admin?.end();
  });

  it('a first run without any baseline day alerts on nothing: checks against the baseline say "no baseline yet"', () => {
    for (const engine of ENGINES) {
      const r = reports[engine].get(D1)!;
      expect(r.baseline.days, engine).toEqual([]);
      expect(r.findings.filter((f) => f.status !== 'ok').map((f) => `${f.feature} ${f.check}`), engine).toEqual([]);
      expect(r.findings.some((f) => f.alert.alerting), engine).toBe(false);
      // Half the lists have no click: against a baseline of 0 % this paged before.
      const noPositive = find(r, null, 'no_positive_list_ratio');
      expect(noPositive, engine).toMatchObject({ value: 0.5, score: 0, status: 'ok' });
      expect(noPositive.summary, engine).toContain('no baseline yet');
      for (const check of ['duplicate_item_ratio', 'null_item_id_ratio', 'null_label_ratio', 'singleton_list_ratio']) {
        expect(find(r, null, check).summary, `${engine} ${check}`).toContain('no baseline yet');
      }
      expect(find(r, 'price', 'null_ratio').summary, engine).toContain('no baseline yet');
      // A declared within-list rule is judged without a baseline: these lists are all z-scored.
      expect(find(r, 'z', 'rule_violation_ratio'), engine).toMatchObject({ value: 0, status: 'ok' });
    }
  });

  it('category values named constructor, toString, __proto__ and valueOf are counted like any other, in both engines', async () => {
    for (const engine of ENGINES) {
      const r = reports[engine].get(D4)!;
      const psi = find(r, 'colour', 'psi');
      const labels = (psi.evidence['bins'] as { bin: string }[]).map((b) => b.bin);
      for (const name of PROTO_NAMES) expect(labels, engine).toContain(`category ${JSON.stringify(name)}`);
      // 10 of 1000 rows are hasOwnProperty, a category the baseline never saw.
      expect(find(r, 'colour', 'new_category_ratio'), engine).toMatchObject({ value: 0.01, status: 'warn', evidence: { unseen: ['hasOwnProperty'], unseenCount: 1 } });
      // The stored day profile keeps them too (jsonb and back).
      const pool = createPool({ url: url!, applicationName: 'plumbline-test', statementTimeoutMs: 10_000, connectionTimeoutMs: 5000, max: 1, onError: () => {} });
      try {
        const store = new Store(pool, configs[engine]!.store.schema);
        const day = (await store.loadDayProfiles(profileFingerprint(configs[engine]!), [D4])).get(D4)!;
        const colour = day.features['colour'] as CategoricalProfile;
        // 200 lists x 5 positions, colour by (list + position) % 4, less the 10 rows rewritten above.
        const total = [...colour.categories.values()].reduce((a, b) => a + b, 0);
        expect(total, engine).toBe(1000);
        expect(colour.categories.get('hasOwnProperty'), engine).toBe(10);
        for (const name of PROTO_NAMES) expect(colour.categories.get(name), `${engine} ${name}`).toBeGreaterThan(200);
        expect(Object.getPrototypeOf(colour.categories), engine).toBe(Map.prototype);
      } finally {
        await pool.end();
      }
    }
    // Both engines agree on the categorical findings to the last bit.
    for (const check of ['psi', 'new_category_ratio', 'category_cardinality']) {
      expect(find(reports.pushdown.get(D4)!, 'colour', check).value, check).toBe(find(reports.stream.get(D4)!, 'colour', check).value);
    }
  });

  it('values of 1e154, 1e200 and +-1e308 are reported, not a failed run, in both engines', () => {
    for (const engine of ENGINES) {
      const r = reports[engine].get(D4)!;
      // Lists q0..q3 each hold one large z value: 4 of the 200 lists break the zscore rule.
      expect(find(r, 'z', 'rule_violation_ratio'), engine).toMatchObject({ value: 4 / 200, status: 'warn', evidence: { violations: 4 } });
      for (const feature of ['z', 'price']) {
        for (const f of r.findings.filter((x) => x.feature === feature)) {
          expect(Number.isFinite(f.value), `${engine} ${feature} ${f.check}`).toBe(true);
          const mean = f.evidence['current'];
          if (f.check === 'psi' || f.check === 'ks') expect(Number.isFinite(mean as number), `${engine} ${feature} ${f.check} mean`).toBe(true);
        }
      }
      expect(find(r, 'price', 'nonfinite_ratio'), engine).toMatchObject({ value: 0, status: 'ok' });
    }
    // The mean of price: (1e308 + 1e308 - 1e308 + 1e200 + 1e154 + 995 ordinary values) / 1000, about 1e305.
    const mean = (e: (typeof ENGINES)[number]): number => find(reports[e].get(D4)!, 'price', 'psi').evidence['current'] as number;
    expect(mean('stream') / 1e305).toBeCloseTo(1, 12);
    expect(mean('pushdown') / mean('stream')).toBeCloseTo(1, 12);
    expect(find(reports.pushdown.get(D4)!, 'z', 'rule_violation_ratio').value).toBe(find(reports.stream.get(D4)!, 'z', 'rule_violation_ratio').value);
  });

  it('NULL item ids and NULL labels are counted, in both engines (null labels are left out of the positive rate, not negatives)', () => {
    for (const engine of ENGINES) {
      const r = reports[engine].get(D4)!;
      expect(find(r, null, 'null_item_id_ratio'), engine).toMatchObject({ value: 10 / 1000, status: 'critical', evidence: { rows: 10 } });
      expect(find(r, null, 'null_label_ratio'), engine).toMatchObject({ value: 50 / 1000, status: 'critical', evidence: { rows: 50 } });
      // Positive rate over the 950 labelled rows: lists 20..29 lose their labels, five of them their click (95 positives left of 100).
      expect(find(r, null, 'label_positive_ratio').evidence['current'], engine).toBeCloseTo(95 / 950, 12);
      // A null item id is never a duplicate.
      expect(find(r, null, 'duplicate_item_ratio'), engine).toMatchObject({ value: 0, status: 'ok' });
    }
  });

  it('100,000 distinct categories and 10 kB values give a category_cardinality finding, bounded profiles and cut evidence', async () => {
    for (const engine of ENGINES) {
      const r = reports[engine].get(D5)!;
      const card = find(r, 'colour', 'category_cardinality');
      // 100,000 distinct values (the 10 kB ones differ in their first characters, so cutting keeps them apart).
      expect(card, engine).toMatchObject({ value: 100_000, status: 'critical', evidence: { current: 100_000, keptCategories: 1000 } });
      const unseen = find(r, 'colour', 'new_category_ratio').evidence['unseen'] as string[];
      for (const u of unseen) expect(u.length, engine).toBeLessThanOrEqual(201);
      const pool = createPool({ url: url!, applicationName: 'plumbline-test', statementTimeoutMs: 10_000, connectionTimeoutMs: 5000, max: 1, onError: () => {} });
      try {
        const store = new Store(pool, configs[engine]!.store.schema);
        const colour = (await store.loadDayProfiles(profileFingerprint(configs[engine]!), [D5])).get(D5)!.features['colour'] as CategoricalProfile;
        expect(colour.categories.size, engine).toBe(1000);
        expect(colour.distinct, engine).toBe(100_000);
        expect(colour.otherRows, engine).toBe(100_000 - 1000);
        for (const k of colour.categories.keys()) expect(k.length, engine).toBeLessThanOrEqual(201);
        const cut = [...colour.categories.keys()].filter((k) => k.endsWith('\u2026'));
        expect(cut.length, engine).toBeGreaterThan(0);
        expect(cut[0]!.length, engine).toBe(201);
      } finally {
        await pool.end();
      }
    }
    expect(find(reports.pushdown.get(D5)!, 'colour', 'psi').value).toBe(find(reports.stream.get(D5)!, 'colour', 'psi').value);
  });
});
