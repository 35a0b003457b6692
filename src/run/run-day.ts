/**
 * One day end to end: source -> profiles -> checks -> store. A plain async function of its
 * dependencies and a date; it knows nothing of schedules, HTTP or the command line.
 *
 * Nothing is half-written: the day's findings, its alert state, its run record, and the day
 * profiles and baseline it computed are saved in one store transaction at the end; a
 * failure before that leaves every stored result as it was and records only a failed run.
 */
import { createHash } from 'node:crypto';
import { applyAlertState, baselineExtremeBounds, evaluateDay, snapshotMissingFinding, type OutcomeInput } from '../checks/index.ts';
import type { Config } from '../config/index.ts';
import { sqlState, withReadOnlyTransaction, type Pool, type PoolClient } from '../db/index.ts';
import { ConfigError, DataError, SourceError } from '../errors.ts';
import { errorFields, type Logger } from '../log.ts';
import { EMPTY_DATASET, buildDayProfile, capDayProfile, mergeBaseline, threadedProfiler, withFineBins, type BaselineProfile, type DayProfile } from '../profile/index.ts';
import { REPORT_SCHEMA_VERSION, worstStatus, type Finding, type Report } from '../report/index.ts';
import { assemblePushdownProfile, checkJsonbKeys, countDays, planSource, readDay, readDayAggregates, readRankingAggregates, withRankingAggregates, type PushdownSpecs, type PushdownTimings, type SourcePlan } from '../source/index.ts';
import { wasInterrupted } from './abort.ts';
import { addDays, baselineDates } from './dates.ts';

/** What a run needs of the store (src/store implements it). */
export interface RunStore {
  /** The report, and what the run computed for later runs, in one transaction. */
  saveRun(report: Report, artefacts?: { profileFingerprint: string; dayProfiles: readonly DayProfile[]; baseline: BaselineProfile | null }): Promise<void>;
  recordFailure(f: { runDate: string; startedAt: string; finishedAt: string; error: string; configFingerprint: string; outcome?: 'failure' | 'interrupted' }): Promise<void>;
  previousFindings(beforeDate: string): Promise<{ runDate: string; findings: Finding[] } | null>;
  loadBaseline(fingerprint: string): Promise<BaselineProfile | null>;
  loadDayProfiles(fingerprint: string, dates: readonly string[]): Promise<Map<string, DayProfile>>;
}

export interface RunDeps {
  config: Config;
  source: Pool;
  store: RunStore;
  log: Logger;
  now?: () => Date;
  /**
   * Aborts the run: checked between phases, and it cancels the source statement in flight.
   * With a RunAbortError of kind `interrupted` as reason the run is recorded as interrupted.
   */
  signal?: AbortSignal;
}

function sha256(value: unknown): string {
  return createHash('sha256').update(JSON.stringify(value)).digest('hex').slice(0, 16);
}

/** Everything in the config that changes a run's findings. */
export function configFingerprint(config: Config): string {
  const { http: _h, schedule: _s, ...rest } = config;
  return sha256(rest);
}

/** Everything that changes a day's profile (not thresholds: those apply later). */
export function profileFingerprint(config: Config): string {
  return sha256({
    // 2: category counts stored as Maps, bounded and cut (source.maxCategories, maxCategoryLength).
    v: 2,
    source: config.source,
    features: config.features.map(({ thresholds: _t, ...f }) => f),
    sampleSize: config.baseline.sampleSize,
    dayCap: daySampleCap(config),
  });
}

/** Values kept per feature and day for later baselines: enough for any window to pool sampleSize. */
export function daySampleCap(config: Config): number {
  const w = config.baseline.window;
  const days = w.type === 'trailing' ? w.days : w.type === 'same_weekday' ? w.weeks : 28;
  return Math.max(2000, Math.ceil((2 * config.baseline.sampleSize) / days));
}

/**
 * A read-only transaction on the source; database and connection failures become
 * SourceError (exit code 3, "source unavailable"), config and data errors pass through.
 */
async function readSource<T>(deps: RunDeps, what: string, fn: (client: PoolClient) => Promise<T>): Promise<T> {
  try {
    return await withReadOnlyTransaction(deps.source, fn, deps.signal !== undefined ? { signal: deps.signal } : {});
  } catch (err) {
    // A cancelled statement of an aborted run: the abort's reason says what happened.
    if (deps.signal?.aborted === true) throw deps.signal.reason instanceof Error ? deps.signal.reason : new Error('run aborted');
    if (err instanceof ConfigError || err instanceof DataError || err instanceof SourceError) throw err;
    const code = sqlState(err);
    throw new SourceError(`${what} failed: ${(err as Error).message}${code !== undefined ? ` (SQLSTATE ${code})` : ''}`, { cause: err });
  }
}

function throwIfAborted(signal: AbortSignal | undefined): void {
  if (signal?.aborted) throw signal.reason instanceof Error ? signal.reason : new Error('run aborted');
}

async function readProfile(deps: RunDeps, plan: SourcePlan, date: string, bins: BaselineProfile['bins'] | null, fineBins: BaselineProfile['fineBins'] | null = null, extremeBounds: PushdownSpecs['extremeBounds'] = null): Promise<DayProfile> {
  if (deps.config.source.engine === 'pushdown') return readPushdownProfile(deps, plan, date, { bins, fineBins: fineBins ?? null, extremeBounds });
  const t0 = performance.now();
  const cols = await readSource(deps, `reading the snapshot of ${date}`, (client) => readDay(client, plan, date, { maxRows: deps.config.source.maxRowsPerDay, featureCount: deps.config.features.length, maxCategoryLength: deps.config.source.maxCategoryLength }));
  const t1 = performance.now();
  const profile = await buildDayProfile(cols, deps.config, bins, threadedProfiler());
  deps.log.debug('day profiled', { date, rows: cols.rows, readSeconds: (t1 - t0) / 1000, profileSeconds: (performance.now() - t1) / 1000 });
  return profile;
}

/**
 * The pushdown engine: exact counts from aggregate SQL, and a small whole-list sample of
 * the day (through the stream reader) for the value sample, both in one snapshot.
 */
async function readPushdownProfile(deps: RunDeps, plan: SourcePlan, date: string, specs: PushdownSpecs): Promise<DayProfile> {
  const t0 = performance.now();
  const timings: PushdownTimings & { rankingSeconds?: number; sampleSeconds?: number } = {};
  const { agg, ranking, cols } = await readSource(deps, `aggregating the snapshot of ${date}`, async (client) => {
    const agg = await readDayAggregates(client, deps.config, plan, date, specs, timings);
    const tr = performance.now();
    const ranking = (await readRankingAggregates(client, deps.config, plan, [date], { association: deps.config.source.pushdownAssociation === 'sql', outcome: true })).get(date);
    const ts = performance.now();
    const cols = await readDay(client, plan, date, { maxRows: daySampleCap(deps.config), featureCount: deps.config.features.length, maxCategoryLength: deps.config.source.maxCategoryLength, totalRows: agg.dataset.rows });
    timings.rankingSeconds = (ts - tr) / 1000;
    timings.sampleSeconds = (performance.now() - ts) / 1000;
    return { agg, ranking, cols };
  });
  const t1 = performance.now();
  const sample = await buildDayProfile(cols, deps.config, null, threadedProfiler());
  const profile = withRankingAggregates(assemblePushdownProfile(date, agg, sample, deps.config, specs), ranking, sample, deps.config, plan.hasLabel);
  deps.log.debug('day profiled in the database', { date, rows: agg.dataset.rows, sampleRows: cols.rows, sqlSeconds: (t1 - t0) / 1000, ...timings, profileSeconds: (performance.now() - t1) / 1000 });
  return profile;
}

/** A run's baseline, and what it computed to get it (to be saved with the run). */
interface BaselineResult {
  baseline: BaselineProfile;
  /** True when the baseline was merged by this run (not loaded from the store). */
  fresh: boolean;
  /** Baseline days profiled from the source by this run. */
  newDays: DayProfile[];
}

/**
 * Loads the baseline of a window from the store, or builds it from stored day profiles and
 * the source. Writes nothing: the caller saves what was computed with the run.
 */
async function ensureBaseline(deps: RunDeps, plan: SourcePlan, runDate: string): Promise<BaselineResult> {
  const { config, store, log } = deps;
  const wanted = baselineDates(config.baseline.window, runDate);
  const rows = await readSource(deps, 'counting the baseline days', (c) => countDays(c, plan, wanted));
  const dates = wanted.filter((d) => (rows.get(d) ?? 0) > 0);
  const profileFp = profileFingerprint(config);
  // Late rows for a baseline day change its count, and with it the fingerprint.
  const fingerprint = sha256({ profileFp, days: dates.map((d) => [d, rows.get(d)]) });
  const cached = await store.loadBaseline(fingerprint);
  // A baseline stored before per-day variation existed is rebuilt from the stored day profiles.
  if (cached !== null && cached.variation !== undefined) return { baseline: cached, fresh: false, newDays: [] };

  const stored = await store.loadDayProfiles(profileFp, dates);
  const days: DayProfile[] = [];
  const newDays: DayProfile[] = [];
  for (const date of dates) {
    throwIfAborted(deps.signal);
    let day = stored.get(date);
    if (day === undefined || day.totalRows !== rows.get(date)) {
      log.info('profiling baseline day', { date });
      day = capDayProfile(await readProfile(deps, plan, date, null), daySampleCap(config));
      newDays.push(day);
    }
    days.push(day);
  }
  const window = { type: config.baseline.window.type, from: wanted[0] ?? runDate, to: wanted[wanted.length - 1] ?? runDate };
  const baseline = mergeBaseline(days, config, { fingerprint, window, createdAt: (deps.now?.() ?? new Date()).toISOString() });
  return { baseline, fresh: true, newDays };
}

/**
 * With outcome.labelLagDays = L > 0, the outcome checks judge the labels of runDate - L,
 * which have matured since that day was profiled: its outcome and those of its own baseline
 * window's days are re-read from the source now, in one read-only statement grouped by date
 * (the ranking pass of the pushdown engine, restricted to list id, position and label; the
 * stream engine uses it too, since both engines compute the same sums). Every day re-read is
 * at least L days old. Undefined when labels do not lag (the day's own outcome is used).
 */
async function laggedOutcome(deps: RunDeps, plan: SourcePlan, runDate: string): Promise<OutcomeInput | undefined> {
  const lag = deps.config.outcome.labelLagDays;
  if (lag === 0 || !plan.hasLabel) return undefined;
  const date = addDays(runDate, -lag);
  const window = baselineDates(deps.config.baseline.window, date);
  const t0 = performance.now();
  const agg = await readSource(deps, `re-reading the labels of ${date} and its baseline days`, (client) => readRankingAggregates(client, deps.config, plan, [date, ...window], { association: false, outcome: true }));
  deps.log.debug('lagged outcome read', { runDate, outcomeDate: date, days: agg.size, seconds: (performance.now() - t0) / 1000 });
  return {
    date,
    current: agg.get(date)?.outcome ?? null,
    baselineDays: window.filter((d) => agg.has(d)).map((d) => ({ date: d, outcome: agg.get(d)!.outcome })),
  };
}

/** The baseline's extreme-value bounds per numeric feature, which the pushdown engine counts against. */
function extremeBoundsOf(config: Config, baseline: BaselineProfile): NonNullable<PushdownSpecs['extremeBounds']> {
  const out: NonNullable<PushdownSpecs['extremeBounds']> = {};
  for (const f of config.features) {
    const base = baseline.features[f.name];
    if (f.kind !== 'numeric' || base === undefined || base.kind === 'categorical') continue;
    const b = baselineExtremeBounds(base, config.thresholds.extremeIqrMultiple);
    if (b !== null) out[f.name] = { lower: b.lower, upper: b.upper };
  }
  return out;
}

export interface RunResult {
  report: Report;
  durationSeconds: number;
}

/**
 * Evaluates one snapshot date and stores its findings. Throws on failure (after
 * recording it); the stored results of every date are then unchanged.
 */
export async function runDay(deps: RunDeps, runDate: string): Promise<RunResult> {
  const now = deps.now ?? (() => new Date());
  const started = now();
  const fingerprint = configFingerprint(deps.config);
  try {
    const plan = await readSource(deps, 'checking the source against the config', async (client) => {
      const p = await planSource(client, deps.config);
      await checkJsonbKeys(client, deps.config, p);
      return p;
    });
    const tBaseline = performance.now();
    const built = await ensureBaseline(deps, plan, runDate);
    // The pushdown engine counts the day into fine bins too (a stored baseline may predate them).
    const baseline = deps.config.source.engine === 'pushdown' ? withFineBins(built.baseline) : built.baseline;
    deps.log.debug('baseline ready', { runDate, seconds: (performance.now() - tBaseline) / 1000 });
    throwIfAborted(deps.signal);
    const current = await readProfile(deps, plan, runDate, baseline.bins, baseline.fineBins ?? null, deps.config.source.engine === 'pushdown' ? extremeBoundsOf(deps.config, baseline) : null);
    throwIfAborted(deps.signal);
    // The evaluated day becomes a stored day profile too, for the baselines of later days.
    const dayProfiles = [...built.newDays, capDayProfile(current, daySampleCap(deps.config))];

    const outcome = await laggedOutcome(deps, plan, runDate);
    const drafts = evaluateDay(deps.config, baseline, current, outcome);
    const previous = await deps.store.previousFindings(runDate);
    const findings = applyAlertState(deps.config, runDate, drafts, previous?.findings ?? null);
    const report = assembleReport(deps.config, runDate, started, now(), fingerprint, baseline, current, findings);
    throwIfAborted(deps.signal);
    const tRun = performance.now();
    await deps.store.saveRun(report, { profileFingerprint: profileFingerprint(deps.config), dayProfiles, baseline: built.fresh ? built.baseline : null });
    deps.log.debug('run stored', { runDate, dayProfiles: dayProfiles.length, newBaseline: built.fresh, seconds: (performance.now() - tRun) / 1000 });
    const durationSeconds = (Date.parse(report.finishedAt) - started.getTime()) / 1000;
    deps.log.info('run completed', { runDate, status: report.status, findings: findings.length, durationSeconds });
    return { report, durationSeconds };
  } catch (err) {
    const finished = now();
    const interrupted = wasInterrupted(deps.signal);
    // Whatever the abort interrupted (a cancelled statement, a worker), its reason is the story.
    const cause = deps.signal?.aborted === true && deps.signal.reason instanceof Error ? deps.signal.reason : err;
    if (interrupted) deps.log.warn('run interrupted', { runDate, ...errorFields(cause) });
    else deps.log.error('run failed', { runDate, ...errorFields(cause) });
    try {
      await deps.store.recordFailure({
        runDate,
        startedAt: started.toISOString(),
        finishedAt: finished.toISOString(),
        error: errorFields(cause).error as string,
        configFingerprint: fingerprint,
        outcome: interrupted ? 'interrupted' : 'failure',
      });
    } catch (recordErr) {
      deps.log.error(`could not record the ${interrupted ? 'interrupted' : 'failed'} run`, errorFields(recordErr));
    }
    throw cause;
  }
}

/** A run for a day that never arrived: one critical finding, stored like any run. */
export async function recordMissingSnapshot(deps: RunDeps, runDate: string, reason: string): Promise<Report> {
  const now = deps.now ?? (() => new Date());
  const started = now();
  const previous = await deps.store.previousFindings(runDate);
  const findings = applyAlertState(deps.config, runDate, [snapshotMissingFinding(runDate, reason)], previous?.findings ?? null);
  const emptyBaseline: BaselineProfile = {
    fingerprint: '',
    window: { type: deps.config.baseline.window.type, from: runDate, to: runDate },
    days: [],
    dataset: EMPTY_DATASET,
    bins: {},
    features: {},
    sampleSize: 0,
    createdAt: started.toISOString(),
  };
  const empty: DayProfile = { date: runDate, dataset: emptyBaseline.dataset, totalRows: 0, totalLists: 0, sampled: false, features: {} };
  const report = assembleReport(deps.config, runDate, started, now(), configFingerprint(deps.config), emptyBaseline, empty, findings);
  await deps.store.saveRun(report);
  return report;
}

function assembleReport(config: Config, runDate: string, started: Date, finished: Date, fingerprint: string, baseline: BaselineProfile, current: DayProfile, findings: Finding[]): Report {
  const days = baseline.days.length;
  const sum = (k: 'rows' | 'lists'): number => baseline.days.reduce((s, d) => s + d[k], 0);
  const order = { critical: 0, warn: 1, ok: 2 } as const;
  const sorted = [...findings].sort((a, b) => order[a.status] - order[b.status] || (a.feature ?? '').localeCompare(b.feature ?? '') || a.check.localeCompare(b.check));
  return {
    schemaVersion: REPORT_SCHEMA_VERSION,
    runDate,
    status: worstStatus(findings.map((f) => f.status)),
    engine: config.source.engine,
    startedAt: started.toISOString(),
    finishedAt: finished.toISOString(),
    configFingerprint: fingerprint,
    baseline: {
      window: baseline.window,
      days: baseline.days.map((d) => d.date),
      rows: sum('rows'),
      lists: sum('lists'),
      meanRowsPerDay: days > 0 ? sum('rows') / days : 0,
      meanListsPerDay: days > 0 ? sum('lists') / days : 0,
      sampleSize: baseline.sampleSize,
      fingerprint: baseline.fingerprint,
    },
    current: {
      rows: current.totalRows,
      lists: current.totalLists,
      evaluatedRows: current.dataset.rows,
      evaluatedLists: current.dataset.lists,
      sampled: current.sampled,
    },
    findings: sorted,
  };
}
