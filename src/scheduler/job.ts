/**
 * The daily job as a plain async function of its dependencies and a clock: which dates
 * are due (the target day plus missed days, oldest first), whether each snapshot looks
 * complete, and running them. It knows nothing of node-cron; tests call it directly.
 */
import type { Config } from '../config/index.ts';
import { describeRelation, quoteIdent, quoteQualified, withReadOnlyTransaction, type PoolClient } from '../db/index.ts';
import { ConfigError } from '../errors.ts';
import { errorFields } from '../log.ts';
import type { Report } from '../report/index.ts';
import { addDays, baselineDates, dateInZone, dateRange, recordMissingSnapshot, runDay, type RunDeps, type RunStore } from '../run/index.ts';
import { countDays, planSource } from '../source/index.ts';
import type { PruneResult, RetentionPolicy } from '../store/index.ts';
import { retentionPolicy } from './retention.ts';

export interface JobStore extends RunStore {
  /** The newest evaluated date not after `notAfter` (a stored future date is no reason to stop catching up). */
  latestEvaluatedDate(notAfter?: string): Promise<string | null>;
  storedDates(from: string, to: string): Promise<string[]>;
  prune(policy: RetentionPolicy, today: string): Promise<PruneResult>;
}

export interface JobDeps extends RunDeps {
  store: JobStore;
}

/** The snapshot date a run at `now` evaluates. */
export function targetDate(config: Config, now: Date): string {
  return addDays(dateInZone(now, config.schedule.timezone), -config.schedule.lagDays);
}

/** Dates to run at `now`: the target and the missed days before it (at most catchUpMaxDays of them), oldest first. */
export async function datesDue(deps: JobDeps, now: Date): Promise<string[]> {
  const target = targetDate(deps.config, now);
  const max = deps.config.schedule.catchUpMaxDays;
  const from = addDays(target, -max);
  const latest = await deps.store.latestEvaluatedDate(target);
  const start = latest === null ? target : latest >= target ? null : addDays(latest, 1) > from ? addDays(latest, 1) : from;
  if (start === null) {
    const stored = await deps.store.storedDates(target, target);
    return stored.includes(target) ? [] : [target];
  }
  const stored = new Set(await deps.store.storedDates(start, target));
  return dateRange(start, target).filter((d) => !stored.has(d));
}

export interface Readiness {
  ready: boolean;
  reason: string;
  rows: number;
}

/**
 * A snapshot is ready when the configured marker row exists, or else when it has at least
 * minRowFraction of the baseline's mean daily rows (any rows at all when there is no baseline yet).
 */
export async function checkReadiness(deps: RunDeps, date: string): Promise<Readiness> {
  const { config } = deps;
  const r = config.schedule.readiness;
  return withReadOnlyTransaction(deps.source, async (client) => {
    const plan = await planSource(client, config);
    const counts = await countDays(client, plan, [date, ...baselineDates(config.baseline.window, date)]);
    const rows = counts.get(date) ?? 0;
    if (r.markerTable !== undefined) {
      const marker = await markerRelation(client, r.markerTable, r.markerDateColumn);
      const res = await client.query(`SELECT 1 FROM ${marker} WHERE ${quoteIdent(r.markerDateColumn)} = $1::date LIMIT 1`, [date]);
      const ready = (res.rowCount ?? 0) > 0;
      return { ready, rows, reason: ready ? 'marker row present' : `no row for ${date} in ${r.markerTable} yet` };
    }
    const baselineRows = [...counts.entries()].filter(([d]) => d !== date).map(([, n]) => n);
    if (baselineRows.length === 0) return { ready: rows > 0, rows, reason: rows > 0 ? `${rows} rows (no baseline yet)` : 'no rows yet' };
    const mean = baselineRows.reduce((a, b) => a + b, 0) / baselineRows.length;
    const needed = Math.ceil(mean * r.minRowFraction);
    const ready = rows >= needed && rows > 0;
    return { ready, rows, reason: ready ? `${rows} rows (at least ${needed})` : `${rows} rows so far, waiting for ${needed} (${r.minRowFraction} x the baseline mean)` };
  }, deps.signal !== undefined ? { signal: deps.signal } : {});
}

/**
 * The marker table, checked against the catalogue like every identifier from the config, so
 * that a typo reads as a config problem with its path rather than as a failing query.
 */
async function markerRelation(client: PoolClient, table: string, dateColumn: string): Promise<string> {
  const rel = await describeRelation(client, table);
  if (rel === null) {
    const msg = `schedule.readiness.markerTable: table or view "${table}" does not exist (or this role cannot see it)`;
    throw new ConfigError(msg, [msg]);
  }
  if (!rel.columns.has(dateColumn)) {
    const msg = `schedule.readiness.markerDateColumn: column "${dateColumn}" does not exist in ${rel.schema}.${rel.name}`;
    throw new ConfigError(msg, [msg]);
  }
  return quoteQualified(`${rel.schema}.${rel.name}`);
}

export type DayOutcome =
  | { date: string; outcome: 'stored'; report: Report; durationSeconds: number }
  | { date: string; outcome: 'waiting'; reason: string }
  | { date: string; outcome: 'missing'; report: Report; reason: string }
  | { date: string; outcome: 'failed'; error: unknown };

/**
 * Runs the due dates at `now`, oldest first. A date that is not ready is recorded as a
 * critical "snapshot missing or late" finding once its deadline has passed (days before
 * the target always have), and otherwise left waiting for the next try. Stops at the first
 * failure so that days are never stored out of order behind a broken one. After a day was
 * stored, prunes the store by its retention policy (a failed prune is logged, not fatal: it
 * is tried again after the next run).
 */
export async function dailyJob(deps: JobDeps, now: Date, options: { deadlinePassed: boolean }): Promise<DayOutcome[]> {
  const due = await datesDue(deps, now);
  const target = targetDate(deps.config, now);
  const outcomes: DayOutcome[] = [];
  for (const date of due) {
    if (deps.signal?.aborted) break;
    try {
      const readiness = await checkReadiness(deps, date);
      if (!readiness.ready) {
        if (date < target || options.deadlinePassed) {
          const report = await recordMissingSnapshot(deps, date, `not ready by its deadline: ${readiness.reason}`);
          outcomes.push({ date, outcome: 'missing', report, reason: readiness.reason });
          continue;
        }
        outcomes.push({ date, outcome: 'waiting', reason: readiness.reason });
        break;
      }
      const { report, durationSeconds } = await runDay(deps, date);
      outcomes.push({ date, outcome: 'stored', report, durationSeconds });
    } catch (error) {
      deps.log.warn('scheduled run failed', { date, ...errorFields(error) });
      outcomes.push({ date, outcome: 'failed', error });
      break;
    }
  }
  if (outcomes.some((o) => o.outcome === 'stored' || o.outcome === 'missing')) await pruneStore(deps, now);
  return outcomes;
}

/** Applies the retention policy, counting ages from `now`'s date in the schedule's zone. */
export async function pruneStore(deps: JobDeps, now: Date): Promise<PruneResult | null> {
  const policy = retentionPolicy(deps.config);
  if (policy === null) return null;
  try {
    const deleted = await deps.store.prune(policy, dateInZone(now, deps.config.schedule.timezone));
    deps.log.info('store pruned', { ...deleted });
    return deleted;
  } catch (error) {
    deps.log.warn('pruning the store failed', errorFields(error));
    return null;
  }
}
