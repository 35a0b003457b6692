/**
 * Which snapshot dates may be run at all. A date after "today minus schedule.lagDays" has no
 * complete snapshot yet: its run would store a `snapshot_missing` verdict for a day that has
 * not happened, and every later "latest" would be that bogus report. A date before the
 * source's first snapshot has nothing to evaluate. Both are refused before anything is
 * stored, by the API (`POST /api/v1/runs`) and by `plumbline run` / `backfill` alike.
 */
import { redactUrls, type Config } from '../config/index.ts';
import { sqlState, withReadOnlyTransaction, type Pool } from '../db/index.ts';
import { ConfigError, SourceError } from '../errors.ts';
import { firstSnapshotDate, planSource } from '../source/index.ts';
import { addDays, dateInZone } from './dates.ts';

/** Today in the schedule's time zone. Nothing dated after it is ever "latest". */
export function todayIn(config: Config, now: Date): string {
  return dateInZone(now, config.schedule.timezone);
}

/** The newest date a run may evaluate at `now`: today (schedule.timezone) minus schedule.lagDays. */
export function newestRunnableDate(config: Config, now: Date): string {
  return addDays(todayIn(config, now), -config.schedule.lagDays);
}

/** Refuses a date after newestRunnableDate; cheap, no database. */
export function checkNotTooNew(config: Config, date: string, now: Date): void {
  const newest = newestRunnableDate(config, now);
  if (date > newest) {
    const msg = `${date} is after ${newest}, the newest date that can be evaluated now (today ${todayIn(config, now)} in ${config.schedule.timezone} minus schedule.lagDays ${config.schedule.lagDays})`;
    throw new ConfigError(msg, [msg]);
  }
}

/**
 * Refuses dates outside [first snapshot in the source, newestRunnableDate]. Throws ConfigError
 * naming the date and the bound, or SourceError when the source cannot be read.
 */
export async function checkRunnableDates(deps: { config: Config; source: Pool }, from: string, to: string, now: Date): Promise<void> {
  checkNotTooNew(deps.config, to, now);
  let first: string | null;
  try {
    first = await withReadOnlyTransaction(deps.source, async (client) => firstSnapshotDate(client, await planSource(client, deps.config)));
  } catch (err) {
    if (err instanceof ConfigError || err instanceof SourceError) throw err;
    const code = sqlState(err);
    // The same words as a run's own first read, so both failures read alike.
    throw new SourceError(`checking the source against the config failed: ${redactUrls((err as Error).message)}${code !== undefined ? ` (SQLSTATE ${code})` : ''}`, { cause: err });
  }
  if (first === null) {
    const msg = `${from}: the source ${deps.config.source.table} holds no snapshot yet`;
    throw new ConfigError(msg, [msg]);
  }
  if (from < first) {
    const msg = `${from} is before ${first}, the first snapshot date in ${deps.config.source.table}`;
    throw new ConfigError(msg, [msg]);
  }
}
