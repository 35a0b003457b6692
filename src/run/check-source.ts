/**
 * The source checked against the config without running anything: the catalogue checks a
 * run starts with (table, columns, their types, jsonb keys), in one read-only transaction,
 * with every problem listed. Used by `plumbline check-config --connect`.
 */
import type { Config } from '../config/index.ts';
import { sqlState, withReadOnlyTransaction, type Pool } from '../db/index.ts';
import { ConfigError, SourceError } from '../errors.ts';
import { sourceProblems } from '../source/index.ts';

/** Problems with their config paths (empty when the source matches); SourceError when it cannot be read. */
export async function checkSource(source: Pool, config: Config): Promise<string[]> {
  try {
    return await withReadOnlyTransaction(source, (client) => sourceProblems(client, config));
  } catch (err) {
    if (err instanceof ConfigError || err instanceof SourceError) throw err;
    const code = sqlState(err);
    throw new SourceError(`checking the source against the config failed: ${(err as Error).message}${code !== undefined ? ` (SQLSTATE ${code})` : ''}`, { cause: err });
  }
}
