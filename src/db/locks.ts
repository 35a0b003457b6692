/**
 * PostgreSQL advisory locks keyed by a readable name. The name is hashed (SHA-256,
 * first 8 bytes as a signed 64-bit integer) so every process that uses the same name
 * takes the same lock without a registry of magic numbers.
 */
import { createHash } from 'node:crypto';
import type { PoolClient } from './pool.ts';

/** The bigint key of an advisory lock name, as a decimal string (pass it as `$1::bigint`). */
export function advisoryKey(name: string): string {
  const digest = createHash('sha256').update(`plumbline-lock:${name}`, 'utf8').digest();
  return digest.readBigInt64BE(0).toString();
}

/**
 * Waits for the transaction-level advisory lock `name` (`pg_advisory_xact_lock`).
 * It is released by COMMIT or ROLLBACK, so it cannot leak when a client dies.
 * Call inside a transaction.
 */
export async function advisoryXactLock(client: PoolClient, name: string): Promise<void> {
  await client.query('SELECT pg_advisory_xact_lock($1::bigint)', [advisoryKey(name)]);
}
