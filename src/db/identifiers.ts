/**
 * Identifiers from the config are checked twice: by the config schema (plain identifiers
 * only) and against the catalogue here, then always quoted with pg's escapeIdentifier.
 * No SQL is built by concatenating user text.
 */
import pg from 'pg';
import type { PoolClient } from './pool.ts';

export function quoteIdent(name: string): string {
  return pg.escapeIdentifier(name);
}

/** `schema.table` or `table` -> quoted `"schema"."table"`. */
export function quoteQualified(qualified: string): string {
  return splitQualified(qualified)
    .filter((p): p is string => p !== null)
    .map(quoteIdent)
    .join('.');
}

export function splitQualified(qualified: string): [schema: string | null, name: string] {
  const dot = qualified.indexOf('.');
  return dot < 0 ? [null, qualified] : [qualified.slice(0, dot), qualified.slice(dot + 1)];
}

export interface RelationInfo {
  schema: string;
  name: string;
  /** column name -> type as format_type() writes it (e.g. "double precision", "jsonb"). */
  columns: Map<string, string>;
}

/**
 * Looks a table or view up in the catalogue (respecting search_path when no schema is
 * given). Returns null when it does not exist or is not visible to this role.
 */
export async function describeRelation(client: PoolClient, qualified: string): Promise<RelationInfo | null> {
  const [schema, name] = splitQualified(qualified);
  const rel = await client.query<{ oid: number; nspname: string; relname: string }>(
    `SELECT c.oid::int AS oid, n.nspname, c.relname
       FROM pg_catalog.pg_class c JOIN pg_catalog.pg_namespace n ON n.oid = c.relnamespace
      WHERE c.relname = $1 AND c.relkind IN ('r', 'v', 'm', 'p', 'f')
        AND ($2::text IS NULL AND pg_catalog.pg_table_is_visible(c.oid) OR n.nspname = $2::text)
      LIMIT 1`,
    [name, schema],
  );
  const row = rel.rows[0];
  if (row === undefined) return null;
  const cols = await client.query<{ attname: string; type: string }>(
    `SELECT attname, pg_catalog.format_type(atttypid, atttypmod) AS type
       FROM pg_catalog.pg_attribute
      WHERE attrelid = $1 AND attnum > 0 AND NOT attisdropped
      ORDER BY attnum`,
    [row.oid],
  );
  return { schema: row.nspname, name: row.relname, columns: new Map(cols.rows.map((c) => [c.attname, c.type])) };
}
