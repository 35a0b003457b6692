/**
 * Test helpers for a real PostgreSQL server.
 */
import { randomBytes } from 'node:crypto';

/**
 * URL of the PostgreSQL server for integration tests (env PLUMBLINE_TEST_DATABASE_URL),
 * or undefined when it is not set: such tests skip and say so.
 */
export function testDatabaseUrl(): string | undefined {
  const url = process.env['PLUMBLINE_TEST_DATABASE_URL'];
  return url === undefined || url.trim() === '' ? undefined : url.trim();
}

/**
 * A schema name no other test uses: `<prefix>_<pid>_<random>`, lower case, a plain
 * identifier (test files run in parallel against the same database).
 */
export function uniqueSchema(prefix: string): string {
  if (!/^[a-z_][a-z0-9_]{0,39}$/.test(prefix)) throw new Error(`schema prefix must be a lower-case identifier of at most 40 characters, got "${prefix}"`);
  return `${prefix}_${process.pid}_${randomBytes(5).toString('hex')}`;
}
