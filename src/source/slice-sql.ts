/**
 * Slices and other baselines in SQL: the pushdown engine's row conditions for a slice and
 * its tallies of segment values, and the training relation used as a baseline.
 * Identifiers come from the config (checked against the catalogue by planSource, then
 * quoted); values (dates, positions, segment values) are bound parameters.
 */
import type { Config } from '../config/index.ts';
import { quoteIdent, type PoolClient } from '../db/index.ts';
import { ConfigError } from '../errors.ts';
import type { SegmentTally, SliceDef } from '../profile/index.ts';
import { planSource, type SourcePlan } from './plan.ts';
import type { RowFilter } from './pushdown.ts';

/** The rows of a slice, as a condition for the pushdown statements. */
export function sliceFilter(config: Config, def: SliceDef): RowFilter {
  if (def.kind === 'top') {
    const pos = `(${quoteIdent(config.source.columns.position)})::int4`;
    return (bind) => `${pos} < ${bind(def.below, 'int4')}`;
  }
  const col = `(${quoteIdent(def.column)})::text`;
  if (def.value !== null) {
    const value = def.value;
    return (bind) => `${col} = ${bind(value, 'text')}`;
  }
  return (bind) => `(${col} IS NULL OR NOT (${col} = ANY(${bind(def.chosen, 'text[]')})))`;
}

/**
 * The most frequent values of each segment column on a day, ranked as planSlices wants
 * them (rows descending, then byte order: COLLATE "C"). Only the first 4 x maxValues values
 * come back: enough unless many labels of long values coincide (see planSlices).
 */
export async function tallySegmentsSql(client: PoolClient, config: Config, plan: SourcePlan, date: string, totalRows: number): Promise<SegmentTally[]> {
  const out: SegmentTally[] = [];
  for (const seg of config.slices.segments) {
    const col = `(${quoteIdent(seg.column)})::text`;
    const res = await client.query<{ v: string; n: string }>(
      `SELECT ${col} AS v, count(*)::text AS n FROM ${plan.relation}
        WHERE ${plan.dateColumn} = $1::date AND ${col} IS NOT NULL
        GROUP BY 1 ORDER BY count(*) DESC, ${col} COLLATE "C" LIMIT $2`,
      [date, 4 * seg.maxValues],
    );
    // Already in planSlices' order (profile/slices.ts compareTally): byte order is COLLATE "C".
    out.push({ ranked: res.rows.map((r) => ({ value: r.v, rows: Number(r.n) })), totalRows });
  }
  return out;
}

/**
 * The plan of the baseline relation (baseline.source.table): the same columns as the
 * source, checked against the catalogue; problems name the baseline setting.
 */
export async function planBaselineRelation(client: PoolClient, config: Config): Promise<SourcePlan> {
  const rel = config.baseline.source;
  if (rel === undefined) throw new Error('planBaselineRelation needs baseline.source');
  try {
    return await planSource(client, { ...config, source: { ...config.source, table: rel.table } });
  } catch (err) {
    if (!(err instanceof ConfigError)) throw err;
    const problems = (err.problems.length > 0 ? err.problems : [err.message]).map((p) => `baseline.source.table (${rel.table}): ${p}`);
    throw new ConfigError(`the baseline relation does not match the config (${problems.length} problem${problems.length === 1 ? '' : 's'})`, problems, { cause: err });
  }
}

/** Rows per date of a relation between from and to (either may be null: open), from one grouped query. */
export async function countDaysBetween(client: PoolClient, plan: SourcePlan, from: string | null, to: string | null): Promise<Map<string, number>> {
  const res = await client.query<{ d: string; rows: string }>(
    `SELECT ${plan.dateColumn}::text AS d, count(*)::text AS rows FROM ${plan.relation}
      WHERE ($1::date IS NULL OR ${plan.dateColumn} >= $1::date) AND ($2::date IS NULL OR ${plan.dateColumn} <= $2::date) AND ${plan.dateColumn} IS NOT NULL
      GROUP BY 1 ORDER BY 1`,
    [from, to],
  );
  return new Map(res.rows.map((r) => [r.d, Number(r.rows)]));
}
