/**
 * The source checked against the config without running anything: the catalogue checks a
 * run starts with (table, columns, their types, jsonb keys), in one read-only transaction,
 * with every problem listed, and notes on the layout that cost time but are not errors.
 * Used by `plumbline check-config --connect`.
 */
import type { Config } from '../config/index.ts';
import { sqlState, withReadOnlyTransaction, type Pool, type PoolClient } from '../db/index.ts';
import { ConfigError, SourceError } from '../errors.ts';
import { planSource, serversWithJit, sourceProblems } from '../source/index.ts';

export interface SourceCheck {
  /** Problems with their config paths (empty when the source matches). */
  problems: string[];
  /** Advice that does not stop a run. */
  notes: string[];
}

/** Problems and notes; SourceError when the source cannot be read. */
export async function checkSource(source: Pool, config: Config): Promise<SourceCheck> {
  try {
    return await withReadOnlyTransaction(source, async (client) => {
      const problems = await sourceProblems(client, config);
      return { problems, notes: problems.length === 0 ? await sourceNotes(client, config) : [] };
    });
  } catch (err) {
    if (err instanceof ConfigError || err instanceof SourceError) throw err;
    const code = sqlState(err);
    throw new SourceError(`checking the source against the config failed: ${(err as Error).message}${code !== undefined ? ` (SQLSTATE ${code})` : ''}`, { cause: err });
  }
}

async function sourceNotes(client: PoolClient, config: Config): Promise<string[]> {
  if (config.source.engine !== 'pushdown') return [];
  const { foreignPartitions } = await planSource(client, config);
  if (foreignPartitions === null) return [];
  return (await serversWithJit(client, foreignPartitions)).map(
    (server) =>
      `foreign server ${server}: its options do not turn JIT off for the remote sessions, which the per-feature statements on each shard pay for; unless the shard has jit = off itself, ALTER SERVER ${server} OPTIONS (ADD options '-c jit=off') (README "How the SQL maps onto deployments")`,
  );
}
