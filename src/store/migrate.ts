/**
 * Numbered SQL migrations (sql/NNN_name.sql), applied in order, each once, into the
 * configured store schema. The files name no schema: they run after
 * `SET LOCAL search_path TO <schema>`. Every applied file is recorded with a SHA-256
 * checksum in <schema>.schema_migrations; a recorded file that changed is refused.
 *
 * Concurrency: everything happens in one transaction that first takes an advisory lock
 * keyed on the schema name, so several replicas starting at once apply each file
 * exactly once and the others find nothing left to do.
 */
import { createHash } from 'node:crypto';
import { readdir, readFile } from 'node:fs/promises';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { advisoryXactLock, quoteIdent, withTransaction, type Pool, type PoolClient } from '../db/index.ts';
import { StoreError } from '../errors.ts';
import { storeError } from './wrap.ts';

/**
 * The package's sql/ folder, found from this module: src/store -> ../../sql under tsx,
 * dist/store -> ../../sql once compiled. Both are the package root's sql/.
 */
export const MIGRATIONS_DIRECTORY = fileURLToPath(new URL('../../sql/', import.meta.url));

const FILE_PATTERN = /^(\d+)_([A-Za-z0-9_-]+)\.sql$/;

export interface Migration {
  version: number;
  /** File name, e.g. "001_init.sql". */
  name: string;
  /** SHA-256 (hex) of the file with line endings normalised to \n. */
  checksum: string;
  sql: string;
}

export interface MigrateOptions {
  /** Folder of the migration files; defaults to the package's sql/. */
  directory?: string;
}

/** Reads and orders the migration files. */
export async function loadMigrations(directory: string = MIGRATIONS_DIRECTORY): Promise<Migration[]> {
  let names: string[];
  try {
    names = await readdir(directory);
  } catch (err) {
    throw new StoreError(`cannot read the migrations folder ${directory}: ${(err as Error).message}`, { cause: err });
  }
  const byVersion = new Map<number, Migration>();
  for (const name of names.filter((n) => n.endsWith('.sql')).sort()) {
    const match = FILE_PATTERN.exec(name);
    if (match === null) throw new StoreError(`migration file ${name} is not named NNN_name.sql`);
    const version = Number(match[1]);
    const other = byVersion.get(version);
    if (other !== undefined) throw new StoreError(`migrations ${other.name} and ${name} have the same number ${version}`);
    const sql = (await readFile(join(directory, name), 'utf8')).replace(/\r\n?/g, '\n');
    byVersion.set(version, { version, name, checksum: createHash('sha256').update(sql, 'utf8').digest('hex'), sql });
  }
  return [...byVersion.values()].sort((a, b) => a.version - b.version);
}

/** Name of the advisory lock that serialises migrations of one schema. */
export function migrationLockName(schema: string): string {
  return `migrate:${schema}`;
}

interface LedgerRow {
  version: number;
  name: string;
  checksum: string;
}

/**
 * Applies the pending migrations to `schema` (created if missing). Returns the file
 * names applied by this call, oldest first; an up-to-date schema gives [].
 */
export async function migrate(pool: Pool, schema: string, options: MigrateOptions = {}): Promise<string[]> {
  const migrations = await loadMigrations(options.directory);
  const s = quoteIdent(schema);
  try {
    return await withTransaction(pool, async (client) => {
      // The lock comes before CREATE SCHEMA: two concurrent CREATE SCHEMA IF NOT EXISTS can still collide.
      await advisoryXactLock(client, migrationLockName(schema));
      await client.query(`CREATE SCHEMA IF NOT EXISTS ${s}`);
      await client.query(`SET LOCAL search_path TO ${s}`);
      await client.query(
        `CREATE TABLE IF NOT EXISTS ${s}.schema_migrations (
           version    integer PRIMARY KEY,
           name       text NOT NULL,
           checksum   text NOT NULL,
           applied_at timestamptz NOT NULL DEFAULT now()
         )`,
      );
      const pending = compareWithLedger(migrations, await readLedger(client, schema), schema);
      for (const m of pending) {
        try {
          await client.query(m.sql);
        } catch (err) {
          throw storeError(`applying migration ${m.name} to schema ${s} failed`, err);
        }
        await client.query(`INSERT INTO ${s}.schema_migrations (version, name, checksum, applied_at) VALUES ($1, $2, $3, now())`, [
          m.version,
          m.name,
          m.checksum,
        ]);
      }
      return pending.map((m) => m.name);
    });
  } catch (err) {
    throw storeError(`migrating the store schema ${s} failed`, err);
  }
}

/**
 * File names not yet applied to `schema` (all of them when the schema does not exist),
 * for readiness checks. Throws StoreError when a recorded migration changed or is
 * unknown to this version.
 */
export async function pendingMigrations(pool: Pool, schema: string, options: MigrateOptions = {}): Promise<string[]> {
  const migrations = await loadMigrations(options.directory);
  const s = quoteIdent(schema);
  let ledger: LedgerRow[];
  try {
    const present = await pool.query<{ present: boolean }>('SELECT to_regclass($1) IS NOT NULL AS present', [`${s}.schema_migrations`]);
    ledger = present.rows[0]?.present === true ? await readLedger(pool, schema) : [];
  } catch (err) {
    throw storeError(`checking the migrations of schema ${s} failed`, err);
  }
  return compareWithLedger(migrations, ledger, schema).map((m) => m.name);
}

async function readLedger(client: Pool | PoolClient, schema: string): Promise<LedgerRow[]> {
  const res = await client.query<LedgerRow>(`SELECT version, name, checksum FROM ${quoteIdent(schema)}.schema_migrations ORDER BY version`);
  return res.rows;
}

/** The migrations still to apply; refuses a ledger that does not match the files. */
function compareWithLedger(migrations: Migration[], ledger: LedgerRow[], schema: string): Migration[] {
  const files = new Map(migrations.map((m) => [m.version, m]));
  for (const row of ledger) {
    const file = files.get(row.version);
    if (file === undefined) {
      throw new StoreError(
        `the store schema "${schema}" has migration ${row.version} (${row.name}) that this version of Plumbline does not know; run a newer version`,
      );
    }
    if (file.checksum !== row.checksum) {
      throw new StoreError(
        `migration ${file.name} changed after it was applied to schema "${schema}" (checksum ${row.checksum.slice(0, 12)} recorded, ${file.checksum.slice(0, 12)} on disk); restore the file and add a new migration instead`,
      );
    }
  }
  const applied = new Set(ledger.map((r) => r.version));
  return migrations.filter((m) => !applied.has(m.version));
}
