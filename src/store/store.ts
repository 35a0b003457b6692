/**
 * Plumbline's own records: runs, the findings of each evaluated date, alert state and
 * baseline profiles, in the tables created by sql/ (see the comments there).
 *
 * Guarantees:
 * - saveRun is one transaction: the run row, the date's findings (replaced whole), when
 *   the date is the newest evaluated one the alert state, and the day profiles and baseline
 *   the run computed. All of it or nothing.
 * - recordFailure writes a failure row only; findings and alert state stay as they were.
 * - Dates are YYYY-MM-DD strings both ways (`date` columns are read as text); counts
 *   that PostgreSQL sends as bigint strings are converted with Number() on purpose.
 * - Every database error comes out as StoreError saying what failed, with `cause`.
 */
import { advisoryXactLock, quoteIdent, withReadOnlyTransaction, withTransaction, type Pool, type PoolClient } from '../db/index.ts';
import { StoreError } from '../errors.ts';
import type { BaselineProfile, DayProfile, FeatureProfile } from '../profile/index.ts';
import { sliceOf, type CheckName, type Finding, type Report, type Status } from '../report/index.ts';
import type { WithinListRule } from '../config/index.ts';
import { bytesToFloat64, decodeJson, encodeJson, float64ToBytes } from './codec.ts';
import { DayProfileStore } from './day-profiles.ts';
import { migrate, pendingMigrations, type MigrateOptions } from './migrate.ts';
import { runsChannel } from './notify.ts';
import { prune, type PruneResult, type RetentionPolicy } from './retention.ts';
import { wrapped } from './wrap.ts';

const DATE_PATTERN = /^\d{4}-\d{2}-\d{2}$/;

export interface FailureRecord {
  runDate: string;
  startedAt: string;
  finishedAt: string;
  error: string;
  configFingerprint: string;
  /** 'interrupted': stopped on purpose (shutdown); not a verdict and not a failure. Default 'failure'. */
  outcome?: 'failure' | 'interrupted';
}

/**
 * What a run computed besides its report, saved in the run's transaction so that a failed
 * or killed run leaves no trace of it: the day profiles it read from the source (baseline
 * days and the evaluated day) and the baseline it merged, when it was not already stored.
 */
export interface RunArtefacts {
  /** Profile fingerprint the day profiles are stored under. */
  profileFingerprint: string;
  dayProfiles: readonly DayProfile[];
  baseline: BaselineProfile | null;
  /** Day profiles under fingerprints of their own: slices (`<fingerprint>/<slice>`), and the days of a baseline relation. */
  moreDayProfiles?: readonly { fingerprint: string; profile: DayProfile }[];
  /** More baselines the run merged: its slices' (`<baseline fingerprint>/<slice>`). */
  moreBaselines?: readonly BaselineProfile[];
}

export interface RunStats {
  /** finished_at of the newest successful run (ISO 8601). */
  lastSuccessAt: string | null;
  /** finished_at of the newest run, successful or not. */
  lastRunAt: string | null;
  lastDurationSeconds: number | null;
  /** Outcome of the newest run that was not interrupted. */
  lastOutcome: 'success' | 'failure' | null;
  successes: number;
  failures: number;
  /** Runs stopped by a shutdown (not counted in successes or failures). */
  interrupted: number;
  /** Error of the newest failed run, even when a success came after it (check lastOutcome). */
  lastError: string | null;
}

export interface HistoryQuery {
  /** Default 'all' (the whole day). */
  slice?: string;
  feature: string | null;
  check: string;
  /** undefined: any rule; null: findings without a rule. */
  rule?: string | null;
  /** Most recent points to return. */
  limit: number;
}

export interface HistoryPoint {
  runDate: string;
  value: number;
  status: Status;
}

export interface AlertStateEntry {
  slice: string;
  feature: string | null;
  check: CheckName;
  rule: WithinListRule | null;
  status: Status;
  consecutiveRuns: number;
  consecutiveCritical: number;
  alerting: boolean;
  level: Exclude<Status, 'ok'> | null;
  since: string | null;
  /** The date whose run produced this state (the newest evaluated date when it was written). */
  lastRunDate: string;
}

interface FindingRow {
  run_date: string;
  slice: string;
  feature: string | null;
  check_name: string;
  rule: string | null;
  value: number;
  score: number;
  status: Status;
  alerting: boolean;
  alert_level: 'warn' | 'critical' | null;
  consecutive_runs: number;
  consecutive_critical: number;
  alerting_since: string | null;
  thresholds: Finding['thresholds'];
  summary: string;
  evidence: Finding['evidence'];
}

const FINDING_COLUMNS = `run_date::text AS run_date, slice, feature, check_name, rule, value, score, status, alerting, alert_level,
  consecutive_runs, consecutive_critical, alerting_since::text AS alerting_since, thresholds, summary, evidence`;

export class Store {
  readonly schema: string;
  private readonly pool: Pool;
  private readonly runs: string;
  private readonly findings: string;
  private readonly alertState: string;
  private readonly baselines: string;
  private readonly samples: string;
  private readonly dayProfiles: DayProfileStore;
  /** NOTIFY channel of this schema (see notify.ts). */
  readonly channel: string;

  constructor(pool: Pool, schema: string) {
    if (schema.length === 0 || Buffer.byteLength(schema, 'utf8') > 63) {
      throw new StoreError(`store schema name must have 1 to 63 bytes, got ${JSON.stringify(schema)}`);
    }
    this.pool = pool;
    this.schema = schema;
    const s = quoteIdent(schema);
    this.runs = `${s}.runs`;
    this.findings = `${s}.findings`;
    this.alertState = `${s}.alert_state`;
    this.baselines = `${s}.baselines`;
    this.samples = `${s}.baseline_samples`;
    this.dayProfiles = new DayProfileStore(pool, schema);
    this.channel = runsChannel(schema);
  }

  /** Applies pending migrations to this store's schema; returns the files applied. */
  migrate(options?: MigrateOptions): Promise<string[]> {
    return migrate(this.pool, this.schema, options);
  }

  /** Migration files not yet applied (for readiness checks). */
  pendingMigrations(options?: MigrateOptions): Promise<string[]> {
    return pendingMigrations(this.pool, this.schema, options);
  }

  /** True when the store database answers a query. Never throws. */
  async ping(): Promise<boolean> {
    try {
      await this.pool.query('SELECT 1');
      return true;
    } catch {
      return false;
    }
  }

  /**
   * Records a successful run in one transaction: the run row with its report, the
   * date's findings replaced whole, and the alert state when runDate is the newest
   * evaluated date (a back-fill of an older date leaves the alert state alone); with
   * `artefacts`, the day profiles and baseline the run computed as well.
   */
  async saveRun(report: Report, artefacts?: RunArtefacts): Promise<void> {
    checkDate(report.runDate, 'report.runDate');
    const duration = durationSeconds(report.startedAt, report.finishedAt);
    const f = report.findings;
    const baseline = artefacts !== undefined && artefacts.baseline !== null ? encodeBaseline(artefacts.baseline) : null;
    const more = (artefacts?.moreBaselines ?? []).map(encodeBaseline);
    await wrapped(`saving the run of ${report.runDate} failed`, () =>
      withTransaction(this.pool, async (client) => {
        // Serialise writers of this store, so "is this the newest date?" cannot race.
        await advisoryXactLock(client, `store-write:${this.schema}`);
        if (artefacts !== undefined) {
          for (const day of artefacts.dayProfiles) await this.dayProfiles.saveWith(client, artefacts.profileFingerprint, day);
          for (const d of artefacts.moreDayProfiles ?? []) await this.dayProfiles.saveWith(client, d.fingerprint, d.profile);
        }
        // Slice baselines before the whole one: a stored whole baseline has its slices' stored too.
        for (const b of more) await this.writeBaseline(client, b);
        if (baseline !== null) await this.writeBaseline(client, baseline);
        const run = await client.query<{ id: string }>(
          `INSERT INTO ${this.runs}
             (run_date, started_at, finished_at, outcome, status, config_fingerprint, baseline_fingerprint, duration_seconds, report)
           VALUES ($1, $2, $3, 'success', $4, $5, $6, $7, $8::jsonb)
           RETURNING id::text AS id`,
          [
            report.runDate,
            report.startedAt,
            report.finishedAt,
            report.status,
            report.configFingerprint,
            report.baseline.fingerprint,
            duration,
            JSON.stringify(report),
          ],
        );
        const runId = run.rows[0]!.id;
        await client.query(`DELETE FROM ${this.findings} WHERE run_date = $1`, [report.runDate]);
        // One statement for all findings: arrays unnested in parallel, one row per index.
        await client.query(
          `INSERT INTO ${this.findings}
             (run_date, run_id, ordinal, feature, check_name, rule, value, score, status, alerting, alert_level,
              consecutive_runs, consecutive_critical, alerting_since, thresholds, summary, evidence, slice)
           SELECT $1::date, $2::bigint, u.ordinal, u.feature, u.check_name, u.rule, u.value, u.score, u.status, u.alerting,
                  u.alert_level, u.consecutive_runs, u.consecutive_critical, u.alerting_since, u.thresholds, u.summary, u.evidence, u.slice
             FROM unnest($3::int[], $4::text[], $5::text[], $6::text[], $7::float8[], $8::float8[], $9::text[], $10::boolean[],
                         $11::text[], $12::int[], $13::int[], $14::date[], $15::jsonb[], $16::text[], $17::jsonb[], $18::text[])
                  AS u(ordinal, feature, check_name, rule, value, score, status, alerting, alert_level,
                       consecutive_runs, consecutive_critical, alerting_since, thresholds, summary, evidence, slice)`,
          [
            report.runDate,
            runId,
            f.map((_, i) => i),
            f.map((x) => x.feature),
            f.map((x) => x.check),
            f.map((x) => x.rule),
            f.map((x) => x.value),
            f.map((x) => x.score),
            f.map((x) => x.status),
            f.map((x) => x.alert.alerting),
            f.map((x) => x.alert.level),
            f.map((x) => x.alert.consecutiveRuns),
            f.map((x) => x.alert.consecutiveCritical),
            f.map((x) => x.alert.since),
            f.map((x) => JSON.stringify(x.thresholds)),
            f.map((x) => x.summary),
            f.map((x) => JSON.stringify(x.evidence)),
            f.map((x) => sliceOf(x)),
          ],
        );
        const newest = await client.query<{ newest: string }>(
          `SELECT max(run_date)::text AS newest FROM ${this.runs} WHERE outcome = 'success'`,
        );
        if (newest.rows[0]?.newest === report.runDate) {
          await client.query(`DELETE FROM ${this.alertState}`);
          await client.query(
            `INSERT INTO ${this.alertState}
               (slice, feature, check_name, rule, status, consecutive_runs, consecutive_critical, alerting, alert_level, since, last_run_date, updated_at)
             SELECT slice, feature, check_name, rule, status, consecutive_runs, consecutive_critical, alerting, alert_level, alerting_since, run_date, now()
               FROM ${this.findings} WHERE run_date = $1`,
            [report.runDate],
          );
        }
        // Delivered to the LISTENing replicas only when this transaction commits.
        await client.query('SELECT pg_notify($1, $2)', [this.channel, report.runDate]);
      }),
    );
  }

  /** Records a failed (or interrupted) run. Findings and alert state are not touched. */
  async recordFailure(failure: FailureRecord): Promise<void> {
    checkDate(failure.runDate, 'runDate');
    const duration = durationSeconds(failure.startedAt, failure.finishedAt);
    const outcome = failure.outcome ?? 'failure';
    await wrapped(`recording the ${outcome === 'failure' ? 'failed' : 'interrupted'} run of ${failure.runDate} failed`, () =>
      // One statement: the row and its notification commit together.
      this.pool.query(
        `WITH ins AS (
           INSERT INTO ${this.runs} (run_date, started_at, finished_at, outcome, config_fingerprint, error, duration_seconds)
           VALUES ($1, $2, $3, $7, $4, $5, $6) RETURNING run_date
         )
         SELECT pg_notify($8, run_date::text) FROM ins`,
        [failure.runDate, failure.startedAt, failure.finishedAt, failure.configFingerprint, failure.error, duration, outcome, this.channel],
      ),
    );
  }

  /**
   * The report of the newest evaluated date (its newest successful run), or null. With
   * `notAfter` (today), a run stored for a later date is passed over: a date in the future
   * cannot be the latest verdict.
   */
  async latestReport(notAfter?: string): Promise<Report | null> {
    if (notAfter !== undefined) checkDate(notAfter, 'notAfter');
    const res = await wrapped('reading the latest report failed', () =>
      this.pool.query<{ report: Report }>(
        `SELECT report FROM ${this.runs} WHERE outcome = 'success' AND ($1::date IS NULL OR run_date <= $1::date) ORDER BY run_date DESC, id DESC LIMIT 1`,
        [notAfter ?? null],
      ),
    );
    return res.rows[0]?.report ?? null;
  }

  /** The report of `date` (its newest successful run), or null. */
  async reportFor(date: string): Promise<Report | null> {
    checkDate(date, 'date');
    const res = await wrapped(`reading the report of ${date} failed`, () =>
      this.pool.query<{ report: Report }>(
        `SELECT report FROM ${this.runs} WHERE outcome = 'success' AND run_date = $1 ORDER BY id DESC LIMIT 1`,
        [date],
      ),
    );
    return res.rows[0]?.report ?? null;
  }

  /** Dates in [from, to] with a successful run, ascending. */
  async storedDates(from: string, to: string): Promise<string[]> {
    checkDate(from, 'from');
    checkDate(to, 'to');
    const res = await wrapped(`listing stored dates from ${from} to ${to} failed`, () =>
      this.pool.query<{ run_date: string }>(
        `SELECT DISTINCT run_date::text AS run_date FROM ${this.runs}
          WHERE outcome = 'success' AND run_date BETWEEN $1 AND $2 ORDER BY 1`,
        [from, to],
      ),
    );
    return res.rows.map((r) => r.run_date);
  }

  /** The newest date with a successful run (not after `notAfter`, when given), or null. */
  async latestEvaluatedDate(notAfter?: string): Promise<string | null> {
    if (notAfter !== undefined) checkDate(notAfter, 'notAfter');
    const res = await wrapped('reading the newest evaluated date failed', () =>
      this.pool.query<{ run_date: string | null }>(
        `SELECT max(run_date)::text AS run_date FROM ${this.runs} WHERE outcome = 'success' AND ($1::date IS NULL OR run_date <= $1::date)`,
        [notAfter ?? null],
      ),
    );
    return res.rows[0]?.run_date ?? null;
  }

  /** The current findings of `date`, in report order ([] when none are stored). */
  async findingsFor(date: string): Promise<Finding[]> {
    checkDate(date, 'date');
    const res = await wrapped(`reading the findings of ${date} failed`, () =>
      this.pool.query<FindingRow>(`SELECT ${FINDING_COLUMNS} FROM ${this.findings} WHERE run_date = $1 ORDER BY ordinal`, [date]),
    );
    return res.rows.map(toFinding);
  }

  /**
   * The findings of the newest successfully evaluated date strictly before
   * `beforeDate`, or null. Alert hysteresis starts from these, so a back-fill or
   * re-run sees the same predecessor as the original run did.
   */
  async previousFindings(beforeDate: string): Promise<{ runDate: string; findings: Finding[] } | null> {
    checkDate(beforeDate, 'beforeDate');
    const res = await wrapped(`reading the findings before ${beforeDate} failed`, () =>
      this.pool.query<{ prev_date: string | null; check_name: string | null } & Omit<FindingRow, 'run_date' | 'check_name'>>(
        `WITH prev AS (
           SELECT max(run_date) AS run_date FROM ${this.runs} WHERE outcome = 'success' AND run_date < $1
         )
         SELECT prev.run_date::text AS prev_date, f.slice, f.feature, f.check_name, f.rule, f.value, f.score, f.status, f.alerting,
                f.alert_level, f.consecutive_runs, f.consecutive_critical, f.alerting_since::text AS alerting_since, f.thresholds, f.summary, f.evidence
           FROM prev LEFT JOIN ${this.findings} f ON f.run_date = prev.run_date
          ORDER BY f.ordinal`,
        [beforeDate],
      ),
    );
    const runDate = res.rows[0]?.prev_date ?? null;
    if (runDate === null) return null;
    const findings = res.rows
      .filter((r): r is typeof r & { check_name: string } => r.check_name !== null)
      .map((r) => toFinding({ ...r, run_date: runDate }));
    return { runDate, findings };
  }

  /** The last `limit` values of one finding, oldest first (for charts). */
  async history(query: HistoryQuery): Promise<HistoryPoint[]> {
    if (!Number.isInteger(query.limit) || query.limit < 1) throw new StoreError(`history limit must be a positive integer, got ${query.limit}`);
    const params: unknown[] = [query.check, query.limit, query.slice ?? 'all'];
    let where = 'check_name = $1 AND slice = $3';
    if (query.feature === null) where += ' AND feature IS NULL';
    else where += ` AND feature = $${params.push(query.feature)}`;
    if (query.rule === null) where += ' AND rule IS NULL';
    else if (query.rule !== undefined) where += ` AND rule = $${params.push(query.rule)}`;
    const res = await wrapped(`reading the history of ${query.check} for ${query.feature ?? 'the dataset'} failed`, () =>
      this.pool.query<{ run_date: string; value: number; status: Status }>(
        `SELECT run_date::text AS run_date, value, status FROM ${this.findings}
          WHERE ${where} ORDER BY run_date DESC, ordinal DESC LIMIT $2`,
        params,
      ),
    );
    return res.rows.reverse().map((r) => ({ runDate: r.run_date, value: r.value, status: r.status }));
  }

  /** The alert state after the newest evaluated date. */
  async alertStates(): Promise<AlertStateEntry[]> {
    const res = await wrapped('reading the alert state failed', () =>
      this.pool.query<{
        slice: string;
        feature: string | null;
        check_name: string;
        rule: string | null;
        status: Status;
        consecutive_runs: number;
        consecutive_critical: number;
        alerting: boolean;
        alert_level: 'warn' | 'critical' | null;
        since: string | null;
        last_run_date: string;
      }>(
        `SELECT slice, feature, check_name, rule, status, consecutive_runs, consecutive_critical, alerting, alert_level, since::text AS since,
                last_run_date::text AS last_run_date
           FROM ${this.alertState} ORDER BY slice = 'all' DESC, slice, check_name, feature NULLS FIRST, rule NULLS FIRST`,
      ),
    );
    return res.rows.map((r) => ({
      slice: r.slice,
      feature: r.feature,
      check: r.check_name as CheckName,
      rule: r.rule as WithinListRule | null,
      status: r.status,
      consecutiveRuns: r.consecutive_runs,
      consecutiveCritical: r.consecutive_critical,
      alerting: r.alerting,
      level: r.alert_level,
      since: r.since,
      lastRunDate: r.last_run_date,
    }));
  }

  /** Health of past runs, so the exporter can publish it again after a restart. */
  async runStats(): Promise<RunStats> {
    const res = await wrapped('reading run statistics failed', () =>
      this.pool.query<{
        last_success_at: Date | null;
        last_run_at: Date | null;
        last_duration: number | null;
        last_outcome: 'success' | 'failure' | null;
        successes: string;
        failures: string;
        interrupted: string;
        last_error: string | null;
      }>(
        // An interrupted run is no verdict: the "last run" health comes from the newest other one.
        `WITH last AS (
           SELECT finished_at, duration_seconds, outcome FROM ${this.runs} WHERE outcome <> 'interrupted' ORDER BY finished_at DESC, id DESC LIMIT 1
         )
         SELECT (SELECT max(finished_at) FROM ${this.runs} WHERE outcome = 'success') AS last_success_at,
                (SELECT finished_at FROM last) AS last_run_at,
                (SELECT duration_seconds FROM last) AS last_duration,
                (SELECT outcome FROM last) AS last_outcome,
                (SELECT count(*) FROM ${this.runs} WHERE outcome = 'success') AS successes,
                (SELECT count(*) FROM ${this.runs} WHERE outcome = 'failure') AS failures,
                (SELECT count(*) FROM ${this.runs} WHERE outcome = 'interrupted') AS interrupted,
                (SELECT error FROM ${this.runs} WHERE outcome = 'failure' ORDER BY finished_at DESC, id DESC LIMIT 1) AS last_error`,
      ),
    );
    const r = res.rows[0]!;
    return {
      lastSuccessAt: r.last_success_at?.toISOString() ?? null,
      lastRunAt: r.last_run_at?.toISOString() ?? null,
      lastDurationSeconds: r.last_duration,
      lastOutcome: r.last_outcome,
      // count(*) is bigint, which pg hands over as a string.
      successes: Number(r.successes),
      failures: Number(r.failures),
      interrupted: Number(r.interrupted),
      lastError: r.last_error,
    };
  }

  /**
   * Saves a baseline profile, replacing any with the same fingerprint, in one
   * transaction. Numeric samples go to baseline_samples as little-endian float64 bytea;
   * the rest of the profile goes to jsonb.
   */
  async saveBaseline(profile: BaselineProfile): Promise<void> {
    const encoded = encodeBaseline(profile);
    await wrapped(`saving baseline ${profile.fingerprint} failed`, () => withTransaction(this.pool, (client) => this.writeBaseline(client, encoded)));
  }

  private async writeBaseline(client: PoolClient, b: EncodedBaseline): Promise<void> {
    const { profile, json, samples } = b;
    const row = await client.query<{ id: string }>(
      `INSERT INTO ${this.baselines} (fingerprint, window_type, window_from, window_to, sample_size, created_at, profile)
       VALUES ($1, $2, $3, $4, $5, $6, $7::jsonb)
       ON CONFLICT (fingerprint) DO UPDATE
         SET window_type = EXCLUDED.window_type, window_from = EXCLUDED.window_from, window_to = EXCLUDED.window_to,
             sample_size = EXCLUDED.sample_size, created_at = EXCLUDED.created_at, profile = EXCLUDED.profile,
             saved_at = now()
       RETURNING id::text AS id`,
      [profile.fingerprint, profile.window.type, profile.window.from, profile.window.to, profile.sampleSize, profile.createdAt, json],
    );
    const id = row.rows[0]!.id;
    await client.query(`DELETE FROM ${this.samples} WHERE baseline_id = $1`, [id]);
    // One statement per feature: a Buffer parameter travels as raw binary (no hex text).
    for (const s of samples) {
      await client.query(`INSERT INTO ${this.samples} (baseline_id, feature, value_count, sample) VALUES ($1, $2, $3, $4)`, [id, s.feature, s.count, s.bytes]);
    }
  }

  /**
   * Deletes what the retention policy no longer keeps (see retention.ts), in one
   * transaction; `today` (YYYY-MM-DD) is where ages count from.
   */
  prune(policy: RetentionPolicy, today: string): Promise<PruneResult> {
    return prune(this.pool, this.schema, policy, today);
  }

  /** Saves (or replaces) one day's mergeable profile under a profile fingerprint. */
  saveDayProfile(fingerprint: string, profile: DayProfile): Promise<void> {
    return this.dayProfiles.save(fingerprint, profile);
  }

  /** The stored day profiles among `dates` for a profile fingerprint. */
  loadDayProfiles(fingerprint: string, dates: readonly string[]): Promise<Map<string, DayProfile>> {
    return this.dayProfiles.load(fingerprint, dates);
  }

  /** The baseline saved under `fingerprint`, samples restored bit for bit, or null. */
  async loadBaseline(fingerprint: string): Promise<BaselineProfile | null> {
    return wrapped(`loading baseline ${fingerprint} failed`, () =>
      withReadOnlyTransaction(this.pool, (client) => this.readBaseline(client, fingerprint)),
    );
  }

  private async readBaseline(client: PoolClient, fingerprint: string): Promise<BaselineProfile | null> {
    const row = await client.query<{ id: string; profile: unknown }>(
      `SELECT id::text AS id, profile FROM ${this.baselines} WHERE fingerprint = $1`,
      [fingerprint],
    );
    const found = row.rows[0];
    if (found === undefined) return null;
    const profile = decodeJson(found.profile) as BaselineProfile;
    const samples = await client.query<{ feature: string; sample: Buffer }>(
      `SELECT feature, sample FROM ${this.samples} WHERE baseline_id = $1`,
      [found.id],
    );
    const byFeature = new Map(samples.rows.map((r) => [r.feature, r.sample]));
    for (const [name, fp] of Object.entries(profile.features) as [string, FeatureProfile][]) {
      if (fp.kind === 'categorical') continue;
      const bytes = byFeature.get(name);
      if (bytes === undefined) throw new StoreError(`baseline ${fingerprint} has no stored sample for numeric feature "${name}"`);
      fp.sortedSample = bytesToFloat64(bytes);
      byFeature.delete(name);
    }
    if (byFeature.size > 0) {
      throw new StoreError(`baseline ${fingerprint} has samples for features its profile does not list: ${[...byFeature.keys()].join(', ')}`);
    }
    return profile;
  }
}

interface EncodedBaseline {
  profile: BaselineProfile;
  json: string;
  samples: { feature: string; bytes: Buffer; count: number }[];
}

/** A baseline split for storage: numeric samples as float64 bytea, the rest as jsonb text. */
function encodeBaseline(profile: BaselineProfile): EncodedBaseline {
  checkDate(profile.window.from, 'window.from');
  checkDate(profile.window.to, 'window.to');
  const samples: EncodedBaseline['samples'] = [];
  const features: Record<string, unknown> = {};
  for (const [name, fp] of Object.entries(profile.features)) {
    if ('sortedSample' in fp) {
      const { sortedSample, ...rest } = fp;
      samples.push({ feature: name, bytes: float64ToBytes(sortedSample), count: sortedSample.length });
      features[name] = rest;
    } else {
      features[name] = fp;
    }
  }
  return { profile, json: JSON.stringify(encodeJson({ ...profile, features })), samples };
}

function toFinding(r: FindingRow): Finding {
  return {
    slice: r.slice,
    feature: r.feature,
    check: r.check_name as CheckName,
    rule: r.rule as WithinListRule | null,
    value: r.value,
    score: r.score,
    status: r.status,
    thresholds: r.thresholds,
    summary: r.summary,
    evidence: r.evidence,
    alert: {
      consecutiveRuns: r.consecutive_runs,
      consecutiveCritical: r.consecutive_critical,
      alerting: r.alerting,
      level: r.alert_level,
      since: r.alerting_since,
    },
  };
}

function checkDate(value: string, what: string): void {
  if (typeof value !== 'string' || !DATE_PATTERN.test(value)) throw new StoreError(`${what} must be a date written YYYY-MM-DD, got ${JSON.stringify(value)}`);
}

function durationSeconds(startedAt: string, finishedAt: string): number {
  const start = Date.parse(startedAt);
  const end = Date.parse(finishedAt);
  if (Number.isNaN(start)) throw new StoreError(`startedAt is not a timestamp: ${JSON.stringify(startedAt)}`);
  if (Number.isNaN(end)) throw new StoreError(`finishedAt is not a timestamp: ${JSON.stringify(finishedAt)}`);
  return (end - start) / 1000;
}
