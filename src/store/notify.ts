/**
 * The store's change notification: every stored run (success, failure or interruption)
 * sends a PostgreSQL NOTIFY on a channel of its schema, inside the run's transaction, so it
 * is delivered only once the run is committed. Every `serve` replica LISTENs on it and
 * reloads the latest run, whoever stored it (the leader, another replica, the CLI).
 */
import { createHash } from 'node:crypto';

/**
 * The channel of one store schema. A hash keeps it a short plain identifier (channel names
 * are limited to 63 bytes) whatever the schema is called, and two deployments sharing a
 * database do not hear each other.
 */
export function runsChannel(schema: string): string {
  return `plumbline_runs_${createHash('sha256').update(schema, 'utf8').digest('hex').slice(0, 16)}`;
}
