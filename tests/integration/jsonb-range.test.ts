/**
 * jsonb feature values outside the range of a double, in both engines on a real PostgreSQL
 * server (PLUMBLINE_TEST_DATABASE_URL). The stream engine reads a jsonb number's text as
 * JavaScript's Number() does (1e400 is Infinity, 1e-400 is 0); the pushdown engine must count
 * the same values the same way instead of failing the day on a float8 cast (SQLSTATE 22003).
 * The table is an invented bookshop's result lists: 50 lists of 5 items a day.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseConfig } from '../../src/config/index.ts';
import type { Finding, Report } from '../../src/report/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { runDays } from '../support/run-days.ts';

const url = testDatabaseUrl();
const DAYS = ['2025-06-01', '2025-06-02', '2025-06-03'] as const;
const ENGINES = ['stream', 'pushdown'] as const;

const find = (r: Report, feature: string, check: string): Finding => {
  const f = r.findings.find((x) => x.feature === feature && x.check === check);
  if (f === undefined) throw new Error(`no ${check} finding for ${feature} on ${r.runDate}`);
  return f;
};

describe.skipIf(url === undefined)('jsonb numbers beyond the double range (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const src = uniqueSchema('jsonrange_src');
  const table = `${src}.results`;
  const stores: string[] = [];
  let admin: pg.Client;
  const reports: Partial<Record<(typeof ENGINES)[number], Map<string, Report>>> = {};

  beforeAll(async () => {
    admin = new pg.Client({ connectionString: url });
    await admin.connect();
    await admin.query(`CREATE SCHEMA ${src}`);
    await admin.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, features jsonb)`);
    for (const d of DAYS) {
      await admin.query(
        `INSERT INTO ${table} SELECT $1::date, 'q' || l, 'b' || l || '-' || p, p, jsonb_build_object('stock', (l * 7 + p * 3) % 40)
           FROM generate_series(0, 49) AS l, generate_series(1, 5) AS p`,
        [d],
      );
    }
    // The last day: one value past the largest double each way, two that round to 0 and one
    // that rounds to the largest double (the text is kept exactly as written, as jsonb numbers are).
    const odd = ['1e400', '-1e400', '1e-400', '-2e-324', '1.7976931348623158e308'];
    for (const [i, v] of odd.entries()) {
      await admin.query(`UPDATE ${table} SET features = jsonb_build_object('stock', $2::numeric) WHERE snapshot_date = $1 AND list_id = 'q${i}' AND position = 1`, [DAYS[2], v]);
    }
    for (const engine of ENGINES) {
      const schema = uniqueSchema(`jsonrange_${engine}`);
      stores.push(schema);
      const config = parseConfig({
        source: { table, engine, featuresColumn: 'features' },
        features: [{ name: 'stock', key: 'stock' }],
        baseline: { window: { type: 'trailing', days: 2 }, sampleSize: 1000 },
        store: { schema },
      });
      reports[engine] = await runDays(config, url!, DAYS);
    }
  }, 120_000);

  afterAll(async () => {
    for (const s of [src, ...stores]) await admin?.query(`DROP SCHEMA IF EXISTS "${s}" CASCADE`);
    await admin?.end();
  });

  it('counts 1e400 and -1e400 as infinities and 1e-400 as 0 in both engines, and the day runs', () => {
    for (const engine of ENGINES) {
      const r = reports[engine]!.get(DAYS[2])!;
      expect(r.current.rows, engine).toBe(250);
      expect(find(r, 'stock', 'nonfinite_ratio'), engine).toMatchObject({ value: 2 / 250, evidence: { posInf: 1, negInf: 1, nan: 0 } });
      expect(find(r, 'stock', 'type_error_ratio').value, engine).toBe(0);
      expect(find(r, 'stock', 'null_ratio').value, engine).toBe(0);
    }
    // The same statistics from both engines: the finite values (two zeros and 1.7976931348623157e308 among them) agree.
    for (const check of ['nonfinite_ratio', 'psi', 'extreme_value_ratio']) {
      expect(find(reports.pushdown!.get(DAYS[2])!, 'stock', check).value, check).toBe(find(reports.stream!.get(DAYS[2])!, 'stock', check).value);
    }
  });
});
