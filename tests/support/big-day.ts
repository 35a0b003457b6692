/**
 * A small source table on the real PostgreSQL server for tests that run the CLI as a
 * process: a few baseline days and one day just over the worker-thread threshold
 * (PARALLEL_MIN_ROWS), made by generate_series in the server so it takes about a second.
 */
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { afterAll, beforeAll } from 'vitest';
import { PARALLEL_MIN_ROWS } from '../../src/profile/index.ts';
import { uniqueSchema } from './pg.ts';

export interface BigDay {
  /** Schema holding the source table (dropped by `drop`). */
  sourceSchema: string;
  /** Schema for Plumbline's own tables (dropped by `drop`). */
  storeSchema: string;
  /** The date over the threshold. */
  bigDate: string;
  bigRows: number;
  /** A config document for this table (plain data, written to a file by the test). */
  config: Record<string, unknown>;
  drop(): Promise<void>;
}

/** Rows of lists of 50; the big day has a few lists more than the threshold needs. */
const LIST_SIZE = 50;

export async function createBigDay(url: string, prefix: string): Promise<BigDay> {
  const sourceSchema = uniqueSchema(`${prefix}_src`);
  const storeSchema = uniqueSchema(`${prefix}_store`);
  const bigLists = Math.ceil(PARALLEL_MIN_ROWS / LIST_SIZE) + 10;
  const bigDate = '2026-03-08';
  const client = new pg.Client({ connectionString: url });
  await client.connect();
  try {
    await client.query(`CREATE SCHEMA ${sourceSchema}`);
    await client.query(`CREATE TABLE ${sourceSchema}.ranked_items (
      snapshot_date date NOT NULL, list_id bigint, item_id bigint, position int, region text,
      relevance_hint double precision, freshness_days double precision, seller_rating double precision)`);
    // Seven baseline days of 200 lists, then the big day: values are smooth functions of
    // the row number, so every feature varies inside lists and between days alike. The region
    // is a list-level column for configs with segment slices.
    const insert = `INSERT INTO ${sourceSchema}.ranked_items
      SELECT $1::date, l, l * 1000 + p, p, (ARRAY['coast', 'hills', 'plain'])[1 + l % 3],
             ((l * 7 + p * 13) % 97) / 97.0, ((l + p * 3) % 31)::double precision, 1 + ((l * p) % 40) / 10.0
      FROM generate_series(1, $2::int) AS l, generate_series(1, ${LIST_SIZE}) AS p`;
    for (let d = 1; d <= 7; d++) await client.query(insert, [`2026-03-0${d}`, 200]);
    await client.query(insert, [bigDate, bigLists]);
  } finally {
    await client.end();
  }
  return {
    sourceSchema,
    storeSchema,
    bigDate,
    bigRows: bigLists * LIST_SIZE,
    config: {
      source: { table: `${sourceSchema}.ranked_items` },
      features: [{ name: 'relevance_hint', range: { min: 0, max: 1 } }, { name: 'freshness_days' }, { name: 'seller_rating' }],
      baseline: { window: { type: 'trailing', days: 7 } },
      store: { schema: storeSchema },
    },
    async drop() {
      const c = new pg.Client({ connectionString: url });
      await c.connect();
      try {
        await c.query(`DROP SCHEMA IF EXISTS ${sourceSchema} CASCADE`);
        await c.query(`DROP SCHEMA IF EXISTS ${storeSchema} CASCADE`);
      } finally {
        await c.end();
      }
    },
  };
}

/**
 * Registers the file's beforeAll/afterAll: a big day (createBigDay) and a temporary folder
 * for config files, both removed after the file. Read `day` and `dir` inside tests.
 */
export function useBigDay(url: string, prefix: string): { readonly day: BigDay; readonly dir: string } {
  let day: BigDay | undefined;
  let dir: string | undefined;
  beforeAll(async () => {
    day = await createBigDay(url, prefix);
    dir = mkdtempSync(join(tmpdir(), `plumbline-${prefix}-`));
  });
  afterAll(async () => {
    await day?.drop();
    if (dir !== undefined) rmSync(dir, { recursive: true, force: true });
  });
  return {
    get day(): BigDay {
      if (day === undefined) throw new Error('the big day exists only between beforeAll and afterAll');
      return day;
    },
    get dir(): string {
      if (dir === undefined) throw new Error('the folder exists only between beforeAll and afterAll');
      return dir;
    },
  };
}
