/**
 * The store: Plumbline's own tables (runs, findings, alert state, baselines, day
 * profiles) in the configured schema, and the migrations that create them.
 */
export { Store, type RunArtefacts, type AlertStateEntry, type FailureRecord, type HistoryPoint, type HistoryQuery, type RunStats } from './store.ts';
export { runsChannel } from './notify.ts';
export { migrate, pendingMigrations, loadMigrations, migrationLockName, MIGRATIONS_DIRECTORY, type Migration, type MigrateOptions } from './migrate.ts';
export { type RetentionPolicy, type PruneResult } from './retention.ts';
