/**
 * Reading a whole-list sample of a day (a real PostgreSQL server, PLUMBLINE_TEST_DATABASE_URL):
 * a small sample is counted inside its COPY (count(*) OVER ()), a big one by a statement of its
 * own first; both must give the same columns, exactly the rows the sample condition selects,
 * and an empty day when no list is chosen. The table is an invented garden centre's result
 * lists: 200 lists of 20 items.
 */
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { parseConfig, type Config } from '../../src/config/index.ts';
import { listSampleCondition, planSource, readDay, type DayColumns, type SourcePlan } from '../../src/source/index.ts';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';

const url = testDatabaseUrl();
const DAY = '2025-04-07';
const LISTS = 200;
const ITEMS = 20;

describe.skipIf(url === undefined)('reading a whole-list sample of a day (PLUMBLINE_TEST_DATABASE_URL)', () => {
  const src = uniqueSchema('readsample_src');
  const table = `${src}.results`;
  let pool: pg.Pool;
  let client: pg.PoolClient;
  let config: Config;
  let plan: SourcePlan;

  beforeAll(async () => {
    pool = new pg.Pool({ connectionString: url, max: 1 });
    client = await pool.connect();
    await client.query(`CREATE SCHEMA ${src}`);
    await client.query(`CREATE TABLE ${table} (snapshot_date date NOT NULL, list_id text, item_id text, position int, price double precision, shelf text)`);
    await client.query(
      `INSERT INTO ${table} SELECT $1::date, 'search-' || l, 'plant-' || (l * 31 + p) % 997, p, CASE WHEN p = 7 THEN NULL ELSE l * 100 + p END, 'shelf-' || (p % 3)
         FROM generate_series(0, ${LISTS - 1}) AS l, generate_series(1, ${ITEMS}) AS p`,
      [DAY],
    );
    config = parseConfig({
      source: { table },
      features: [{ name: 'price' }, { name: 'shelf', kind: 'categorical' }],
      store: { schema: uniqueSchema('readsample_store') },
    });
    await client.query('BEGIN ISOLATION LEVEL REPEATABLE READ READ ONLY');
    plan = await planSource(client, config);
  });

  afterAll(async () => {
    await client?.query('ROLLBACK');
    await client?.query(`DROP SCHEMA IF EXISTS ${src} CASCADE`);
    client?.release();
    await pool?.end();
  });

  const read = (maxRows: number, inlineCountMaxRows: number, totalRows?: number): Promise<DayColumns> =>
    readDay(client, plan, DAY, { maxRows, featureCount: config.features.length, inlineCountMaxRows, ...(totalRows !== undefined ? { totalRows } : {}) });

  /** What SQL says the sample holds: its rows, lists, the sum of prices and the null prices. */
  async function expected(maxRows: number): Promise<{ rows: number; lists: number; sum: number; nulls: number }> {
    const cond = listSampleCondition('list_id', maxRows / (LISTS * ITEMS));
    const r = await client.query<{ rows: string; lists: string; sum: number | null; nulls: string }>(
      `SELECT count(*)::text AS rows, count(DISTINCT list_id)::text AS lists, sum(price) AS sum, count(*) FILTER (WHERE price IS NULL)::text AS nulls FROM ${table} WHERE snapshot_date = $1 AND ${cond}`,
      [DAY],
    );
    const row = r.rows[0]!;
    return { rows: Number(row.rows), lists: Number(row.lists), sum: row.sum ?? 0, nulls: Number(row.nulls) };
  }

  const summary = (cols: DayColumns): { rows: number; lists: number; sum: number; nulls: number } => {
    const price = cols.numeric[0]!;
    let sum = 0;
    let nulls = 0;
    for (let i = 0; i < cols.rows; i++) {
      if (Number.isNaN(price[i]!)) nulls++;
      else sum += price[i]!;
    }
    return { rows: cols.rows, lists: cols.lists, sum, nulls };
  };

  it('counts a small sample inside its COPY and reads exactly the rows the sample condition selects', async () => {
    const want = await expected(1000);
    expect(want.rows).toBeGreaterThan(0);
    expect(want.rows).toBeLessThan(LISTS * ITEMS);
    for (const total of [undefined, LISTS * ITEMS]) {
      const cols = await read(1000, 200_000, total);
      expect(cols.sampled).toBe(true);
      expect(cols.totalRows).toBe(LISTS * ITEMS);
      expect(summary(cols)).toEqual(want);
      // Every array is sized to the sample, not to the empty start or the whole day.
      for (const a of [cols.listOf, cols.itemHash, cols.position, cols.numeric[0]!, cols.categorical[1]!.codes]) expect(a.length).toBe(want.rows);
      expect(cols.categorical[1]!.dictionary.sort()).toEqual(['shelf-0', 'shelf-1', 'shelf-2']);
    }
  });

  it('gives the same columns whether the sample is counted inside its COPY or first', async () => {
    const inline = await read(1000, 200_000);
    const first = await read(1000, 0);
    expect(first.rows).toBe(inline.rows);
    expect(Array.from(first.numeric[0]!)).toEqual(Array.from(inline.numeric[0]!));
    expect(Array.from(first.position)).toEqual(Array.from(inline.position));
    expect(Array.from(first.listOf)).toEqual(Array.from(inline.listOf));
    expect(Array.from(first.categorical[1]!.codes)).toEqual(Array.from(inline.categorical[1]!.codes));
    expect(Array.from(first.missing[0] ?? [])).toEqual(Array.from(inline.missing[0] ?? []));
    expect(first.missing[0]).not.toBeNull();
  });

  it('returns an empty day when the sample chooses no list', async () => {
    // The smallest list hash, as the sample condition reads it: a fraction below it chooses nothing.
    const r = await client.query<{ h: string }>(`SELECT min(('x' || substr(md5(list_id), 1, 8))::bit(32)::bigint)::text AS h FROM ${table} WHERE snapshot_date = $1`, [DAY]);
    const maxRows = Math.floor((Number(r.rows[0]!.h) / 2 ** 32) * LISTS * ITEMS) - 1;
    expect(maxRows).toBeGreaterThan(0);
    expect((await expected(maxRows)).rows).toBe(0);
    for (const inlineMax of [200_000, 0]) {
      const cols = await read(maxRows, inlineMax);
      expect(cols.rows).toBe(0);
      expect(cols.numeric[0]!.length).toBe(0);
    }
  });
});
