/**
 * Retention: what the store deletes so that it stays bounded over years of daily runs.
 *
 * Every day with a trailing window stores a new baseline (its fingerprint names the window's
 * days), a day profile and a report; none of them is ever needed for ever:
 * - runs (reports) and findings: kept `reportDays` days, and always the two newest evaluated
 *   dates, whose findings the alert state of the next run (or of a re-run of the newest
 *   date) starts from;
 * - day profiles: kept `dayProfileDays` days (the caller computes it from the longest window
 *   a run may need), and the days of a fixed baseline window whatever their age. A profile
 *   deleted too early is not lost data: a later baseline re-reads that day from the source;
 * - baselines (with their value samples): those used by the newest `baselinesKept` evaluated
 *   dates, and the `baselinesKept` newest saved. A deleted one is rebuilt from day profiles.
 *
 * Ages count back from `today` in SQL date arithmetic. Everything happens in one transaction,
 * under the lock that serialises the store's writers, so a run saved meanwhile is never half
 * pruned.
 */
import { advisoryXactLock, quoteIdent, withTransaction, type Pool } from '../db/index.ts';
import { StoreError } from '../errors.ts';
import { wrapped } from './wrap.ts';

export interface RetentionPolicy {
  /** Reports, runs and findings of dates more than this many days before today are deleted. */
  reportDays: number;
  /** Day profiles of snapshot dates more than this many days before today are deleted. */
  dayProfileDays: number;
  /** Day profiles in this range are kept whatever their age (a fixed baseline window), or null. */
  keepDayProfiles: { from: string; to: string } | null;
  /** Baselines used by this many newest evaluated dates, and this many newest saved, are kept. */
  baselinesKept: number;
}

/** Rows deleted by one prune, per table (baseline samples go with their baseline). */
export interface PruneResult {
  runs: number;
  findings: number;
  dayProfiles: number;
  baselines: number;
}

const DATE_PATTERN = /^\d{4}-\d{2}-\d{2}$/;

function checkPolicy(policy: RetentionPolicy, today: string): void {
  if (!DATE_PATTERN.test(today)) throw new StoreError(`prune: today must be a date written YYYY-MM-DD, got ${JSON.stringify(today)}`);
  for (const key of ['reportDays', 'dayProfileDays', 'baselinesKept'] as const) {
    const v = policy[key];
    if (!(Number.isInteger(v) && v >= 1)) throw new StoreError(`prune: ${key} must be an integer >= 1, got ${String(v)}`);
  }
  const keep = policy.keepDayProfiles;
  if (keep !== null && !(DATE_PATTERN.test(keep.from) && DATE_PATTERN.test(keep.to))) {
    throw new StoreError(`prune: keepDayProfiles must be two dates written YYYY-MM-DD, got ${JSON.stringify(keep)}`);
  }
}

/** Deletes what `policy` no longer keeps, in one transaction. */
export async function prune(pool: Pool, schema: string, policy: RetentionPolicy, today: string): Promise<PruneResult> {
  checkPolicy(policy, today);
  const s = quoteIdent(schema);
  const runs = `${s}.runs`;
  // The two newest evaluated dates up to today: never pruned (alert state of the next run starts
  // from them). A run stored for a date after today (a clock that was wrong) is not one of them.
  const newest = `SELECT DISTINCT run_date FROM ${runs} WHERE outcome = 'success' AND run_date <= $1::date ORDER BY run_date DESC LIMIT 2`;
  return wrapped(`pruning the store (retention) failed`, () =>
    withTransaction(pool, async (client) => {
      await advisoryXactLock(client, `store-write:${schema}`);
      const findings = await client.query(
        `DELETE FROM ${s}.findings WHERE run_date < $1::date - $2::int AND run_date NOT IN (${newest})`,
        [today, policy.reportDays],
      );
      // Findings reference their run (ON DELETE CASCADE): those of these runs are already gone.
      const deletedRuns = await client.query(`DELETE FROM ${runs} WHERE run_date < $1::date - $2::int AND run_date NOT IN (${newest})`, [
        today,
        policy.reportDays,
      ]);
      const keep = policy.keepDayProfiles;
      const dayProfiles = await client.query(
        `DELETE FROM ${s}.day_profiles WHERE snapshot_date < $1::date - $2::int
           AND NOT (snapshot_date BETWEEN coalesce($3::date, 'infinity') AND coalesce($4::date, '-infinity'))`,
        [today, policy.dayProfileDays, keep?.from ?? null, keep?.to ?? null],
      );
      // Samples go with their baseline (ON DELETE CASCADE). A slice's baseline (`<fingerprint>/<slice>`)
      // is kept with the whole day's.
      const baselines = await client.query(
        `DELETE FROM ${s}.baselines
          WHERE split_part(fingerprint, '/', 1) NOT IN (
                  SELECT baseline_fingerprint FROM ${runs}
                   WHERE outcome = 'success' AND baseline_fingerprint IS NOT NULL
                     AND run_date IN (SELECT DISTINCT run_date FROM ${runs} WHERE outcome = 'success' AND run_date <= $2::date ORDER BY run_date DESC LIMIT $1))
            AND id NOT IN (SELECT id FROM ${s}.baselines ORDER BY saved_at DESC, id DESC LIMIT $1)`,
        [policy.baselinesKept, today],
      );
      return { runs: deletedRuns.rowCount ?? 0, findings: findings.rowCount ?? 0, dayProfiles: dayProfiles.rowCount ?? 0, baselines: baselines.rowCount ?? 0 };
    }),
  );
}
