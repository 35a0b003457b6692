/**
 * Reads one day of the source into columns: per-feature typed arrays and per-row list
 * indexes, never one JavaScript object per row. The day is counted and copied inside
 * one REPEATABLE READ READ ONLY transaction, so the count and the rows agree.
 */
import { pipeline } from 'node:stream/promises';
import { Writable } from 'node:stream';
import { copyOut, type PoolClient } from '../db/index.ts';
import { NULL_POSITION, type DayColumns } from '../profile/index.ts';
import { DataError } from '../errors.ts';
import { MISSING_NULL, MISSING_TYPE_ERROR, truncateCategory } from '../stats/index.ts';
import { CopyBinaryParser, type TupleSink } from './copy-binary.ts';
import { relationsOf, type SourcePlan } from './plan.ts';

/** Row-level missing codes, as stats/quality counts them. */
const NULL_VALUE = MISSING_NULL;
const TYPE_ERROR = MISSING_TYPE_ERROR;

// The day's columns are the profile unit's input, so their shape is defined there.
export { NULL_POSITION, type CategoricalColumn, type DayColumns } from '../profile/index.ts';

/**
 * Two 32-bit FNV-1a variants over the same bytes, combined into 53 bits: ids are only
 * compared for equality within one list or one day, where 2^-53 collisions do not matter.
 */
function hashBytes(buf: Buffer, start: number, length: number): number {
  let h1 = 0x811c9dc5;
  let h2 = 0x01000193 ^ length;
  for (let i = start, end = start + length; i < end; i++) {
    const b = buf[i]!;
    h1 = Math.imul(h1 ^ b, 0x01000193);
    h2 = Math.imul(h2 ^ b, 0x5bd1e995);
    h2 ^= h2 >>> 15;
  }
  return (h1 >>> 0) * 2097152 + ((h2 >>> 0) & 0x1fffff);
}

/** Parses a jsonb value's text: a number, null, true/false (1/0) or anything else (type error). */
function parseJsonNumber(buf: Buffer, start: number, length: number): number | null | undefined {
  const first = buf[start];
  if (first === 0x6e /* n */) return null;
  if (first === 0x74 /* t */) return 1;
  if (first === 0x66 /* f */) return 0;
  if (first === 0x22 /* " */ || first === 0x7b /* { */ || first === 0x5b /* [ */) return undefined;
  const v = Number(buf.toString('latin1', start, start + length));
  return Number.isNaN(v) ? undefined : v;
}

const enum Col {
  /** The sample's row count, in every row (count(*) OVER ()): the columns are sized by the first. */
  RowCount,
  ListId,
  ItemId,
  Position,
  Label,
  Float8,
  Json,
  Text,
  Segment,
}

class DaySink implements TupleSink {
  row = 0;
  readonly listIds = new Map<number, number>();
  readonly categoryCodes: (Map<string, number> | null)[];
  readonly segmentCodes: Map<string, number>[];
  /** Per COPY column: what it is, and for features the config feature index. */
  private readonly kind: Col[];
  private readonly feature: number[];

  constructor(
    private readonly plan: SourcePlan,
    private readonly out: DayColumns,
    private readonly maxCategoryLength: number,
    countColumn = false,
  ) {
    this.kind = [...(countColumn ? [Col.RowCount] : []), Col.ListId, Col.ItemId, Col.Position];
    this.feature = [...(countColumn ? [-1] : []), -1, -1, -1];
    if (plan.hasLabel) {
      this.kind.push(Col.Label);
      this.feature.push(-1);
    }
    for (const f of plan.features) {
      this.kind.push(f.decoder === 'float8' ? Col.Float8 : f.decoder === 'jsontext' ? Col.Json : Col.Text);
      this.feature.push(f.index);
    }
    plan.segments.forEach((_, s) => {
      this.kind.push(Col.Segment);
      this.feature.push(s);
    });
    this.categoryCodes = out.categorical.map((c) => (c === null ? null : new Map()));
    this.segmentCodes = (out.segments ?? []).map(() => new Map());
  }

  /** The fast path: features read as float8 are decoded inline; the rest go through field(). */
  tuple(buf: Buffer, view: DataView, start: number, fieldCount: number): void {
    const kind = this.kind;
    const numeric = this.out.numeric;
    const feature = this.feature;
    const row = this.row;
    let p = start;
    for (let c = 0; c < fieldCount; c++) {
      const len = view.getInt32(p);
      p += 4;
      if (len === 8 && kind[c] === Col.Float8) {
        numeric[feature[c]!]![row] = view.getFloat64(p);
      } else if (len < 0) this.field(c, buf, -1, 0);
      else this.field(c, buf, p, len);
      if (len > 0) p += len;
    }
  }

  field(column: number, buf: Buffer, start: number, length: number): void {
    const row = this.row;
    const isNull = start < 0;
    switch (this.kind[column]) {
      case Col.RowCount: {
        if (row === 0) {
          // In place: tuple() holds the column list, whose entries are replaced here.
          const rows = Number(buf.readBigInt64BE(start));
          allocateColumns(this.out, this.plan, rows);
        }
        return;
      }
      case Col.Float8: {
        if (isNull) {
          const fi = this.feature[column]!;
          this.out.numeric[fi]![row] = Number.NaN;
          this.markMissing(fi, row, NULL_VALUE);
        } else this.out.numeric[this.feature[column]!]![row] = buf.readDoubleBE(start);
        return;
      }
      case Col.ListId: {
        if (isNull) {
          this.out.listOf[row] = -1;
          return;
        }
        const h = hashBytes(buf, start, length);
        let idx = this.listIds.get(h);
        if (idx === undefined) {
          idx = this.listIds.size;
          this.listIds.set(h, idx);
        }
        this.out.listOf[row] = idx;
        return;
      }
      case Col.ItemId:
        this.out.itemHash[row] = isNull ? Number.NaN : hashBytes(buf, start, length);
        return;
      case Col.Position:
        this.out.position[row] = isNull ? NULL_POSITION : buf.readInt32BE(start);
        return;
      case Col.Label:
        this.out.label![row] = isNull ? Number.NaN : buf.readDoubleBE(start);
        return;
      case Col.Json: {
        const fi = this.feature[column]!;
        const v = isNull ? null : parseJsonNumber(buf, start, length);
        if (v === null) {
          this.out.numeric[fi]![row] = Number.NaN;
          this.markMissing(fi, row, NULL_VALUE);
        } else if (v === undefined) {
          this.out.numeric[fi]![row] = Number.NaN;
          this.markMissing(fi, row, TYPE_ERROR);
        } else this.out.numeric[fi]![row] = v;
        return;
      }
      case Col.Text: {
        const fi = this.feature[column]!;
        const cat = this.out.categorical[fi]!;
        if (isNull) {
          cat.codes[row] = -1;
          return;
        }
        // Only the first maxCategoryLength characters matter (at most 4 bytes each in UTF-8).
        const max = this.maxCategoryLength;
        const value = truncateCategory(buf.toString('utf8', start, start + Math.min(length, 4 * max + 4)), max);
        const codes = this.categoryCodes[fi]!;
        let code = codes.get(value);
        if (code === undefined) {
          code = cat.dictionary.length;
          codes.set(value, code);
          cat.dictionary.push(value);
        }
        cat.codes[row] = code;
        return;
      }
      case Col.Segment: {
        const s = this.feature[column]!;
        const seg = this.out.segments![s]!;
        if (isNull) {
          seg.codes[row] = -1;
          return;
        }
        const value = buf.toString('utf8', start, start + length);
        const codes = this.segmentCodes[s]!;
        let code = codes.get(value);
        if (code === undefined) {
          code = seg.dictionary.length;
          codes.set(value, code);
          seg.dictionary.push(value);
        }
        seg.codes[row] = code;
        return;
      }
    }
  }

  private markMissing(fi: number, row: number, code: number): void {
    let m = this.out.missing[fi];
    if (m === null || m === undefined) {
      // Shared, like the values, so worker threads read it without a copy.
      m = new Uint8Array(new SharedArrayBuffer(this.out.numeric[fi]!.length));
      this.out.missing[fi] = m;
    }
    m[row] = code;
  }

  endTuple(): void {
    if (++this.row > this.out.rows) throw new DataError(`the source returned more rows for ${this.out.date} than it counted (${this.out.rows}); is it being written to?`);
  }
}

export interface ReadDayOptions {
  /** Keep at most about this many rows, as whole lists chosen by a hash of the list id. */
  maxRows: number;
  featureCount: number;
  /** Category values are cut to this many characters (source.maxCategoryLength); default 200. */
  maxCategoryLength?: number;
  /** The day's row count when the caller counted it in the same snapshot (the pushdown engine): saves a scan. */
  totalRows?: number;
  /** A sample of at most this many rows (maxRows) is counted inside its COPY; default 200,000. */
  inlineCountMaxRows?: number;
}

/**
 * The whole-list sample's condition: the first 32 bits of the md5 of the list id, read as a
 * fraction of 2^32, below `fraction`. Stable across PostgreSQL versions and runs. Written as a
 * comparison of four bytes with a constant (h < ceil(fraction x 2^32) for the integer h is the
 * same test as h / 2^32 < fraction): one md5 per row, no cast through text or bit strings, so
 * postgres_fdw ships it to the shards, and the same lists are chosen on one server and on shards.
 */
export function listSampleCondition(listId: string, fraction: number): string {
  const threshold = Math.ceil(fraction * 4294967296);
  if (threshold >= 4294967296) return 'TRUE';
  if (threshold <= 0) return 'FALSE';
  return `decode(substr(md5(${listId}::text), 1, 8), 'hex') < '\\x${threshold.toString(16).padStart(8, '0')}'::bytea`;
}

/** Largest sample (source rows) counted inside its COPY rather than by a statement of its own. */
const INLINE_COUNT_MAX_ROWS = 200_000;

/** Sizes `out`'s row arrays for `rows` rows, replacing what it held (the feature lists in place). */
function allocateColumns(out: DayColumns, plan: SourcePlan, rows: number): void {
  out.rows = rows;
  out.listOf = new Int32Array(rows);
  out.itemHash = new Float64Array(rows);
  out.position = new Int32Array(rows);
  out.label = plan.hasLabel ? new Float64Array(rows) : null;
  if (plan.segments.length > 0) out.segments = plan.segments.map(() => ({ codes: new Int32Array(rows), dictionary: [] }));
  for (const f of plan.features) {
    if (f.decoder === 'text') out.categorical[f.index] = { codes: new Int32Array(rows), dictionary: [] };
    // SharedArrayBuffer: worker threads profile these columns without copying them.
    else out.numeric[f.index] = new Float64Array(new SharedArrayBuffer(rows * 8));
  }
}

/**
 * Reads one day. `client` must be inside a read-only REPEATABLE READ transaction (the
 * count and the COPY then see the same snapshot).
 */
export async function readDay(client: PoolClient, plan: SourcePlan, date: string, options: ReadDayOptions): Promise<DayColumns> {
  const where = `${plan.dateColumn} = $1::date`;
  const totalRows = options.totalRows ?? Number((await client.query<{ n: string }>(`SELECT count(*)::text AS n FROM ${plan.relation} WHERE ${where}`, [date])).rows[0]?.n ?? 0);
  const sampled = totalRows > options.maxRows;
  const fraction = sampled ? options.maxRows / totalRows : 1;
  // A small sample (the pushdown engine's) is counted in the COPY itself, count(*) OVER () in
  // every row, which the server computes over the sample it has just filtered: one pass of the
  // list-id hash over the day instead of two (1M rows: the sample read 2.63 -> 1.72-1.77 s). A
  // big one (the stream engine over source.maxRowsPerDay) is counted first, so that the server
  // need not hold it.
  const countInCopy = sampled && options.maxRows <= (options.inlineCountMaxRows ?? INLINE_COUNT_MAX_ROWS);
  let rows = totalRows;
  if (sampled && !countInCopy) {
    const res = await client.query<{ n: string }>(
      `SELECT count(*)::text AS n FROM ${plan.relation} WHERE ${where} AND ${listSampleCondition(plan.listIdExpression, fraction)}`,
      [date],
    );
    rows = Number(res.rows[0]?.n ?? 0);
  }

  const out: DayColumns = {
    date,
    rows: 0,
    totalRows,
    sampled,
    listOf: new Int32Array(0),
    lists: 0,
    itemHash: new Float64Array(0),
    position: new Int32Array(0),
    label: null,
    numeric: Array.from({ length: options.featureCount }, () => null),
    missing: Array.from({ length: options.featureCount }, () => null),
    categorical: Array.from({ length: options.featureCount }, () => null),
  };
  allocateColumns(out, plan, countInCopy ? 0 : rows);
  if (rows === 0) return out;

  // COPY takes no bind parameters: the date is validated as YYYY-MM-DD before it gets here
  // and the sampling threshold is a number we computed.
  if (!/^\d{4}-\d{2}-\d{2}$/.test(date)) throw new DataError(`not a date: ${JSON.stringify(date)}`);
  const filter = sampled ? `${plan.dateColumn} = DATE '${date}' AND ${listSampleCondition(plan.listIdExpression, fraction)}` : `${plan.dateColumn} = DATE '${date}'`;
  const selectList = countInCopy ? ['count(*) OVER ()::int8', ...plan.selectList] : plan.selectList;
  const sql = `COPY (SELECT ${selectList.join(', ')} FROM ${plan.relation} WHERE ${filter}) TO STDOUT (FORMAT binary)`;
  const sink = new DaySink(plan, out, options.maxCategoryLength ?? 200, countInCopy);
  const parser = new CopyBinaryParser(selectList.length, sink);
  const stream = copyOut(client, sql);
  await pipeline(
    stream,
    new Writable({
      write(chunk: Buffer, _enc, done) {
        try {
          parser.push(chunk);
          done();
        } catch (err) {
          done(err as Error);
        }
      },
      final(done) {
        try {
          parser.end();
          done();
        } catch (err) {
          done(err as Error);
        }
      },
    }),
  );
  if (sink.row !== out.rows) throw new DataError(`the source returned ${sink.row} rows for ${date} but counted ${out.rows}`);
  out.lists = sink.listIds.size;
  return out;
}

/**
 * Rows per date, for the dates that have any, from one grouped query; on foreign partitions
 * (shards) grouped on each partition, so that each shard counts its own rows instead of
 * sending the coordinator a date per row (two 250,000-row days on two shards: 620 -> 80 ms).
 */
export async function countDays(client: PoolClient, plan: SourcePlan, dates: readonly string[]): Promise<Map<string, number>> {
  const result = new Map<string, number>();
  if (dates.length === 0) return result;
  const perRelation = relationsOf(plan).map((rel) => `SELECT ${plan.dateColumn} AS d, count(*) AS n FROM ${rel} WHERE ${plan.dateColumn} = ANY($1::date[]) GROUP BY 1`);
  const res = await client.query<{ d: string; rows: string }>(
    `SELECT d::text AS d, sum(n)::text AS rows FROM (${perRelation.join(' UNION ALL ')}) AS per_relation GROUP BY 1`,
    [dates],
  );
  for (const r of res.rows) result.set(r.d, Number(r.rows));
  return result;
}

/**
 * The oldest snapshot date in the source, or null when it holds no rows. On foreign partitions
 * each shard takes its own minimum (otherwise the coordinator reads dates in order from every
 * shard, a fetch of up to fetch_size rows each).
 */
export async function firstSnapshotDate(client: PoolClient, plan: SourcePlan): Promise<string | null> {
  const perRelation = relationsOf(plan).map((rel) => `SELECT min(${plan.dateColumn}) AS d FROM ${rel}`);
  const res = await client.query<{ d: string | null }>(`SELECT min(d)::text AS d FROM (${perRelation.join(' UNION ALL ')}) AS per_relation`);
  return res.rows[0]?.d ?? null;
}
