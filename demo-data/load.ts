/**
 * Loads the demo scenario into PostgreSQL: creates the table and writes the days.
 * Works through anything with a `query(text, values)` method that speaks to one
 * connection: a `pg` Client or PoolClient, or `pg` against PGlite's socket server.
 * (Not a `pg` Pool: each day is one transaction, which needs one connection.)
 */
import { Readable } from 'node:stream';
import { pipeline } from 'node:stream/promises';
import { from as copyFrom } from 'pg-copy-streams';
import { FEATURES, LABEL_COLUMN, SCORE_COLUMN, generateDay, scenarioDates, type Row, type ScenarioOptions } from './scenario.ts';

export interface Queryable {
  query(text: string, values?: unknown[]): Promise<unknown>;
}

export type Layout = 'wide' | 'jsonb';

/**
 * How rows travel:
 * - `unnest` (default): one parameter per column holding an array of a batch's values,
 *   `INSERT ... SELECT * FROM unnest($1::date[], ...)`. Few parameters to bind and one
 *   short statement text: the fastest way measured here, on a server and on PGlite.
 * - `values`: multi-row `INSERT ... VALUES ($1, ...), (...)`, one parameter per cell.
 * - `copy`: `COPY ... FROM STDIN` (text format) through pg-copy-streams. Fastest on a
 *   PostgreSQL server; needs a `pg` Client or PoolClient, and does not work through
 *   PGlite's socket server (the connection loses protocol synchronisation).
 */
export type InsertMethod = 'unnest' | 'values' | 'copy';

export interface LoadOptions {
  /** `table` or `schema.table`, plain identifiers; the schema is created if missing. */
  table: string;
  layout: Layout;
  scenario: ScenarioOptions;
  /** Days to load (default: every day of the scenario). */
  dates?: string[];
  method?: InsertMethod;
  /** Rows per INSERT statement or COPY chunk (default 500 for `values`, 5000 otherwise). */
  batchRows?: number;
}

export interface LoadResult {
  rows: number;
  days: number;
  seconds: number;
}

/** Name of the jsonb column in the `jsonb` layout. */
export const FEATURES_COLUMN = 'features';

const IDENT = /^[A-Za-z_][A-Za-z0-9_]*$/;

function quoteIdent(name: string): string {
  if (!IDENT.test(name) || name.length > 63) throw new RangeError(`not a plain SQL identifier: ${JSON.stringify(name)}`);
  return `"${name}"`;
}

/** Splits and quotes `table` or `schema.table`. */
export function parseTableName(table: string): { schema: string | undefined; name: string; quoted: string } {
  const parts = table.split('.');
  if (parts.length > 2) throw new RangeError(`expected "table" or "schema.table", got ${JSON.stringify(table)}`);
  const name = parts.at(-1) as string;
  const schema = parts.length === 2 ? parts[0] : undefined;
  return { schema, name, quoted: parts.map(quoteIdent).join('.') };
}

interface Column {
  name: string;
  sqlType: string;
  /** Value for the database parameter. */
  get(row: Row): unknown;
}

/** NaN and infinities travel as PostgreSQL's float8 spellings. */
function float8Param(v: unknown): string | number | null {
  if (typeof v !== 'number') return null; // null, or text that a float8 column cannot hold (see README)
  if (Number.isFinite(v)) return v;
  return Number.isNaN(v) ? 'NaN' : v > 0 ? 'Infinity' : '-Infinity';
}

/** JSON has no NaN or infinity: such values become the strings "NaN", "Infinity", "-Infinity". */
function jsonValue(v: string | number | null): string | number | null {
  if (typeof v === 'number' && !Number.isFinite(v)) return Number.isNaN(v) ? 'NaN' : v > 0 ? 'Infinity' : '-Infinity';
  return v;
}

const COPY_ESCAPES: Record<string, string> = { '\\': '\\\\', '\t': '\\t', '\n': '\\n', '\r': '\\r' };

/** COPY text format: \N is null; backslash, tab, newline and carriage return are escaped. */
export function copyField(v: unknown): string {
  if (v === null || v === undefined) return '\\N';
  const s = String(v);
  return /[\\\t\n\r]/.test(s) ? s.replace(/[\\\t\n\r]/g, (c) => COPY_ESCAPES[c] as string) : s;
}

/** What `copy` needs beyond `query(text)`: pg's `query(submittable)`. */
interface CopyCapable {
  query<T>(submittable: T): T;
}

function columnsFor(layout: Layout): Column[] {
  const cols: Column[] = [
    { name: 'snapshot_date', sqlType: 'date', get: (r) => r.snapshot_date },
    { name: 'list_id', sqlType: 'text', get: (r) => r.list_id },
    { name: 'item_id', sqlType: 'text', get: (r) => r.item_id },
    { name: 'position', sqlType: 'integer', get: (r) => r.position },
    { name: LABEL_COLUMN, sqlType: 'smallint', get: (r) => r.clicked },
    { name: SCORE_COLUMN, sqlType: 'double precision', get: (r) => float8Param(r.model_score) },
  ];
  if (layout === 'wide') {
    for (const f of FEATURES) {
      if (f.kind === 'categorical') cols.push({ name: f.name, sqlType: 'text', get: (r) => (r[f.name] === null ? null : String(r[f.name])) });
      else cols.push({ name: f.name, sqlType: 'double precision', get: (r) => float8Param(r[f.name]) });
    }
  } else {
    cols.push({
      name: FEATURES_COLUMN,
      sqlType: 'jsonb',
      get: (r) => {
        const o: Record<string, string | number | null> = {};
        for (const f of FEATURES) o[f.name] = jsonValue(r[f.name]);
        return JSON.stringify(o);
      },
    });
  }
  return cols;
}

/** CREATE TABLE statement text for a layout (exported for documentation and tests). */
export function createTableSql(table: string, layout: Layout): string {
  const t = parseTableName(table);
  const cols = columnsFor(layout).map((c) => {
    const notNull = ['snapshot_date', 'item_id', 'position'].includes(c.name) || c.name === FEATURES_COLUMN ? ' NOT NULL' : '';
    return `  ${quoteIdent(c.name)} ${c.sqlType}${notNull}`;
  });
  return `CREATE TABLE IF NOT EXISTS ${t.quoted} (\n${cols.join(',\n')}\n)`;
}

/**
 * Creates the table (and schema) if missing, then writes each day in its own
 * transaction, replacing any rows the table already holds for that day, so loading
 * again is harmless.
 */
export async function loadScenario(client: Queryable, opts: LoadOptions): Promise<LoadResult> {
  const started = performance.now();
  const t = parseTableName(opts.table);
  const method = opts.method ?? 'unnest';
  if (!['unnest', 'values', 'copy'].includes(method)) throw new RangeError(`unknown insert method ${JSON.stringify(method)}`);
  if (opts.layout !== 'wide' && opts.layout !== 'jsonb') throw new RangeError(`unknown layout ${JSON.stringify(opts.layout)}`);
  const batch = opts.batchRows ?? (method === 'unnest' ? 5000 : 500);
  if (!Number.isInteger(batch) || batch < 1) throw new RangeError(`batchRows must be a whole number >= 1, got ${batch}`);
  const cols = columnsFor(opts.layout);
  if (method === 'values' && batch * cols.length > 65_535) throw new RangeError(`batchRows ${batch} needs more than 65535 parameters`);
  const dates = opts.dates ?? scenarioDates(opts.scenario);

  if (t.schema !== undefined) await client.query(`CREATE SCHEMA IF NOT EXISTS ${quoteIdent(t.schema)}`);
  await client.query(createTableSql(opts.table, opts.layout));
  const indexName = `${t.name.slice(0, 40)}_snapshot_date_idx`;
  await client.query(`CREATE INDEX IF NOT EXISTS ${quoteIdent(indexName)} ON ${t.quoted} (snapshot_date)`);

  const colList = cols.map((c) => quoteIdent(c.name)).join(', ');
  const unnestSql = `INSERT INTO ${t.quoted} (${colList}) SELECT * FROM unnest(${cols.map((c, i) => `$${i + 1}::${c.sqlType}[]`).join(', ')})`;
  const valuesSql = new Map<number, string>();
  const valuesSqlFor = (n: number): string => {
    let sql = valuesSql.get(n);
    if (sql === undefined) {
      const tuples: string[] = [];
      for (let r = 0; r < n; r++) tuples.push(`(${cols.map((_, c) => `$${r * cols.length + c + 1}`).join(', ')})`);
      sql = `INSERT INTO ${t.quoted} (${colList}) VALUES ${tuples.join(', ')}`;
      valuesSql.set(n, sql);
    }
    return sql;
  };

  const flush = async (rows: Row[]): Promise<void> => {
    if (rows.length === 0) return;
    if (method === 'unnest') {
      const arrays = cols.map((c) => rows.map((r) => c.get(r)));
      await client.query(unnestSql, arrays);
    } else {
      const values: unknown[] = new Array(rows.length * cols.length);
      let k = 0;
      for (const r of rows) for (const c of cols) values[k++] = c.get(r);
      await client.query(valuesSqlFor(rows.length), values);
    }
  };

  const copyDay = async (date: string): Promise<number> => {
    let count = 0;
    async function* chunks(): AsyncGenerator<string> {
      let lines: string[] = [];
      for (const row of generateDay(opts.scenario, date)) {
        lines.push(cols.map((c) => copyField(c.get(row))).join('\t'));
        count++;
        if (lines.length >= batch) {
          yield `${lines.join('\n')}\n`;
          lines = [];
        }
      }
      if (lines.length > 0) yield `${lines.join('\n')}\n`;
    }
    const sink = (client as unknown as CopyCapable).query(copyFrom(`COPY ${t.quoted} (${colList}) FROM STDIN`));
    await pipeline(Readable.from(chunks()), sink);
    return count;
  };

  let total = 0;
  for (const date of dates) {
    await client.query('BEGIN');
    try {
      await client.query(`DELETE FROM ${t.quoted} WHERE snapshot_date = $1`, [date]);
      if (method === 'copy') {
        total += await copyDay(date);
        await client.query('COMMIT');
        continue;
      }
      let rows: Row[] = [];
      for (const row of generateDay(opts.scenario, date)) {
        rows.push(row);
        if (rows.length >= batch) {
          await flush(rows);
          total += rows.length;
          rows = [];
        }
      }
      await flush(rows);
      total += rows.length;
      await client.query('COMMIT');
    } catch (err) {
      await client.query('ROLLBACK').catch(() => undefined);
      throw err;
    }
  }
  return { rows: total, days: dates.length, seconds: (performance.now() - started) / 1000 };
}
