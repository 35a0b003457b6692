/**
 * One day end to end: source -> profiles -> checks -> store. A plain async function of its
 * dependencies and a date; it knows nothing of schedules, HTTP or the command line.
 *
 * Nothing is half-written: the day's findings, its alert state, its run record, and the day
 * profiles and baseline it computed are saved in one store transaction at the end; a
 * failure before that leaves every stored result as it was and records only a failed run.
 */
import { createHash } from 'node:crypto';
import { applyAlertState, baselineExtremeBounds, evaluateSlices, snapshotMissingFinding, type FindingDraft, type OutcomeInput } from '../checks/index.ts';
import type { Config } from '../config/index.ts';
import { sqlState, withReadOnlyTransaction, type Pool, type PoolClient } from '../db/index.ts';
import { ConfigError, DataError, SourceError } from '../errors.ts';
import { errorFields, type Logger } from '../log.ts';
import {
  EMPTY_DATASET,
  buildDayProfile,
  buildDayAndSliceProfiles,
  capDayProfile,
  hasSlices,
  mergeBaseline,
  planSlices,
  planSlicesOfColumns,
  profilerPool,
  sliceRows,
  subsetColumns,
  threadedProfiler,
  withFineBins,
  type BaselineProfile,
  type DayProfile,
  type SliceDef,
  type SliceProfile,
} from '../profile/index.ts';
import { REPORT_SCHEMA_VERSION, worstStatus, type Finding, type Report } from '../report/index.ts';
import {
  assemblePushdownProfile,
  checkJsonbKeys,
  countDays,
  countDaysBetween,
  planBaselineRelation,
  planSource,
  readDay,
  readDayAggregates,
  readRankingAggregates,
  sliceFilter,
  tallySegmentsSql,
  withRankingAggregates,
  type DayAggregates,
  type PushdownSpecs,
  type PushdownTimings,
  type SourcePlan,
} from '../source/index.ts';
import { wasInterrupted } from './abort.ts';
import { addDays, baselineDates } from './dates.ts';

/** What a run needs of the store (src/store implements it). */
export interface RunStore {
  /** The report, and what the run computed for later runs, in one transaction. */
  saveRun(
    report: Report,
    artefacts?: {
      profileFingerprint: string;
      dayProfiles: readonly DayProfile[];
      baseline: BaselineProfile | null;
      /** Day profiles under fingerprints of their own: slices, and the days of a baseline relation. */
      moreDayProfiles?: readonly { fingerprint: string; profile: DayProfile }[];
      /** More baselines computed by the run: the slices'. */
      moreBaselines?: readonly BaselineProfile[];
    },
  ): Promise<void>;
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
    // Only when configured, so that day profiles stored before slices existed stay valid.
    ...(hasSlices(config) ? { slices: config.slices } : {}),
  });
}

/** Rows from which a slice is profiled on the run's worker threads too (they are started once per day). */
const SLICE_PARALLEL_MIN_ROWS = 50_000;

/** The fingerprint under which a slice's day profiles (or baseline) are stored. */
export function sliceFingerprint(fingerprint: string, slice: string): string {
  return `${fingerprint}/${slice}`;
}

/** Values kept per feature, slice and day: enough for any window to pool slices.sampleSize. */
function sliceDayCap(config: Config): number {
  const w = config.baseline.window;
  const days = w.type === 'trailing' ? w.days : w.type === 'same_weekday' ? w.weeks : 28;
  return Math.max(500, Math.ceil((2 * config.slices.sampleSize) / days));
}

/** The config a slice's baseline is merged with: the slices' smaller sample size. */
function sliceConfig(config: Config): Config {
  return { ...config, baseline: { ...config.baseline, sampleSize: config.slices.sampleSize } };
}

/** Baseline bins (and the pushdown engine's fine bins) per slice. */
type SliceSpecs = ReadonlyMap<string, BaselineProfile>;

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

async function readProfile(
  deps: RunDeps,
  plan: SourcePlan,
  date: string,
  bins: BaselineProfile['bins'] | null,
  fineBins: BaselineProfile['fineBins'] | null = null,
  extremeBounds: PushdownSpecs['extremeBounds'] = null,
  sliceSpecs: SliceSpecs = new Map(),
): Promise<DayProfile> {
  if (deps.config.source.engine === 'pushdown') return readPushdownProfile(deps, plan, date, { bins, fineBins: fineBins ?? null, extremeBounds }, sliceSpecs);
  const t0 = performance.now();
  const cols = await readSource(deps, `reading the snapshot of ${date}`, (client) => readDay(client, plan, date, { maxRows: deps.config.source.maxRowsPerDay, featureCount: deps.config.features.length, maxCategoryLength: deps.config.source.maxCategoryLength }));
  const t1 = performance.now();
  // One pool of workers for the slices and the day: starting a worker costs more than a small slice.
  const pool = profilerPool();
  let slices: SliceProfile[] | null = null;
  let profile: DayProfile;
  let t2: number;
  try {
    if (hasSlices(deps.config)) {
      const both = await buildDayAndSliceProfiles(cols, deps.config, bins, planSlicesOfColumns(deps.config, cols), (name) => sliceSpecs.get(name)?.bins ?? null, pool.profiler(SLICE_PARALLEL_MIN_ROWS), pool.profiler());
      profile = both.profile;
      slices = both.slices;
      t2 = t1 + both.sliceMilliseconds;
    } else {
      t2 = performance.now();
      profile = await buildDayProfile(cols, deps.config, bins, pool.profiler());
    }
  } finally {
    await pool.close();
  }
  deps.log.debug('day profiled', { date, rows: cols.rows, readSeconds: (t1 - t0) / 1000, sliceSeconds: (t2 - t1) / 1000, profileSeconds: (performance.now() - t2) / 1000 });
  return slices === null ? profile : { ...profile, slices };
}

/**
 * The pushdown engine: exact counts from aggregate SQL, and a small whole-list sample of
 * the day (through the stream reader) for the value sample, both in one snapshot. Each
 * slice is counted by the same two statements restricted to its rows.
 */
async function readPushdownProfile(deps: RunDeps, plan: SourcePlan, date: string, specs: PushdownSpecs, sliceSpecs: SliceSpecs): Promise<DayProfile> {
  const { config } = deps;
  const t0 = performance.now();
  const specsOf = (name: string): PushdownSpecs => {
    const b = sliceSpecs.get(name);
    return { bins: b?.bins ?? null, fineBins: b?.fineBins ?? null, extremeBounds: b === undefined ? null : extremeBoundsOf(config, b) };
  };
  const timings: PushdownTimings & { slicesSeconds?: number; rankingSeconds?: number; sampleSeconds?: number } = {};
  const { agg, ranking, cols, defs, sliceAggs } = await readSource(deps, `aggregating the snapshot of ${date}`, async (client) => {
    const agg = await readDayAggregates(client, config, plan, date, specs, undefined, timings);
    const tr = performance.now();
    const ranking = (await readRankingAggregates(client, config, plan, [date], { association: config.source.pushdownAssociation === 'sql', outcome: true })).get(date);
    const tsl = performance.now();
    let defs: SliceDef[] = [];
    const sliceAggs: DayAggregates[] = [];
    if (hasSlices(config)) {
      defs = planSlices(config, await tallySegmentsSql(client, config, plan, date, agg.dataset.rows));
      for (const def of defs) sliceAggs.push(await readDayAggregates(client, config, plan, date, specsOf(def.name), sliceFilter(config, def)));
    }
    const ts = performance.now();
    const cols = await readDay(client, plan, date, { maxRows: daySampleCap(config), featureCount: config.features.length, maxCategoryLength: config.source.maxCategoryLength, totalRows: agg.dataset.rows });
    timings.rankingSeconds = (tsl - tr) / 1000;
    timings.slicesSeconds = (ts - tsl) / 1000;
    timings.sampleSeconds = (performance.now() - ts) / 1000;
    return { agg, ranking, cols, defs, sliceAggs };
  });
  const t1 = performance.now();
  const slices: SliceProfile[] = [];
  for (const [i, def] of defs.entries()) {
    // The SQL ranking pass is not run per slice: a slice's association comes from its rows in the
    // day's whole-list sample (pushdownAssociation: sql leaves it empty), and it has no outcome.
    const sample = await buildDayProfile(subsetColumns(cols, sliceRows(cols, def)), config, null);
    slices.push({ slice: def.name, kind: def.kind, profile: withRankingAggregates(assemblePushdownProfile(date, sliceAggs[i]!, sample, config, specsOf(def.name)), undefined, sample, config, false) });
  }
  const sample = await buildDayProfile(cols, config, null, threadedProfiler());
  const profile = withRankingAggregates(assemblePushdownProfile(date, agg, sample, config, specs), ranking, sample, config, plan.hasLabel);
  deps.log.debug('day profiled in the database', { date, rows: agg.dataset.rows, sampleRows: cols.rows, slices: defs.length, sqlSeconds: (t1 - t0) / 1000, ...timings, profileSeconds: (performance.now() - t1) / 1000 });
  return hasSlices(config) ? { ...profile, slices } : profile;
}

/**
 * What a day's profile adds to the store: the whole day (naming its slices, capped) under
 * `profileFp`, and each slice apart under `<profileFp>/<slice>`.
 */
function dayArtefacts(config: Config, profileFp: string, day: DayProfile): { whole: DayProfile; slices: { fingerprint: string; profile: DayProfile }[] } {
  const { slices, ...rest } = day;
  const whole = capDayProfile(slices === undefined ? rest : { ...rest, sliceNames: slices.map((s) => s.slice) }, daySampleCap(config));
  return { whole, slices: (slices ?? []).map((s) => ({ fingerprint: sliceFingerprint(profileFp, s.slice), profile: capDayProfile(s.profile, sliceDayCap(config)) })) };
}

/** A run's baselines, and what it computed to get them (to be saved with the run). */
interface BaselineResult {
  baseline: BaselineProfile;
  /** Each slice's baseline. */
  slices: Map<string, BaselineProfile>;
  /** True when the baselines were merged by this run (not loaded from the store). */
  fresh: boolean;
  /** Baseline days profiled from the source by this run, with the fingerprint each is stored under (slices apart). */
  newDays: { fingerprint: string; profile: DayProfile }[];
}

/**
 * Loads the baseline from the store, or builds it from stored day profiles and the source:
 * the days of the window in the snapshot table, or the dates of the baseline relation
 * (baseline.source, e.g. the training set). Each slice's baseline is merged from the same
 * days' profiles of that slice. Writes nothing: the caller saves what was computed with the run.
 */
async function ensureBaseline(deps: RunDeps, plan: SourcePlan, runDate: string): Promise<BaselineResult> {
  const { config, store, log } = deps;
  const relation = config.baseline.source;
  let basePlan = plan;
  let rows: Map<string, number>;
  let dates: string[];
  let wanted: string[] = [];
  let profileFp = profileFingerprint(config);
  if (relation !== undefined) {
    basePlan = await readSource(deps, 'checking the baseline relation against the config', (c) => planBaselineRelation(c, config));
    rows = await readSource(deps, `counting the days of ${relation.table}`, (c) => countDaysBetween(c, basePlan, relation.from ?? null, relation.to ?? null));
    dates = [...rows.keys()];
    // The relation's days are not the snapshot table's days of the same dates.
    profileFp = sha256({ profileFp, relation: relation.table });
  } else {
    wanted = baselineDates(config.baseline.window, runDate);
    rows = await readSource(deps, 'counting the baseline days', (c) => countDays(c, plan, wanted));
    dates = wanted.filter((d) => (rows.get(d) ?? 0) > 0);
  }
  // Late rows for a baseline day change its count, and with it the fingerprint.
  const fingerprint = sha256({ profileFp, days: dates.map((d) => [d, rows.get(d)]) });
  const cached = await store.loadBaseline(fingerprint);
  // A baseline stored before per-day variation existed is rebuilt from the stored day profiles.
  if (cached !== null && cached.variation !== undefined) {
    const slices = new Map<string, BaselineProfile>();
    for (const name of cached.slices ?? []) {
      const b = await store.loadBaseline(sliceFingerprint(fingerprint, name));
      if (b !== null) slices.set(name, b);
    }
    // A slice baseline may have been pruned (retention): then all are merged again.
    if (slices.size === (cached.slices ?? []).length) return { baseline: cached, slices, fresh: false, newDays: [] };
  }

  const stored = await store.loadDayProfiles(profileFp, dates);
  const days: DayProfile[] = [];
  const newDays: BaselineResult['newDays'] = [];
  // Slice profiles of days profiled now (the others are in the store).
  const fresh = new Map<string, Map<string, DayProfile>>();
  for (const date of dates) {
    throwIfAborted(deps.signal);
    let day = stored.get(date);
    if (day === undefined || day.totalRows !== rows.get(date)) {
      log.info('profiling baseline day', { date, ...(relation !== undefined ? { relation: relation.table } : {}) });
      const a = dayArtefacts(config, profileFp, await readProfile(deps, basePlan, date, null));
      newDays.push({ fingerprint: profileFp, profile: a.whole }, ...a.slices);
      fresh.set(date, new Map(a.slices.map((x) => [x.fingerprint.slice(profileFp.length + 1), x.profile])));
      day = a.whole;
    }
    days.push(day);
  }
  const window =
    relation !== undefined
      ? { type: 'relation', from: dates[0] ?? relation.from ?? runDate, to: dates[dates.length - 1] ?? relation.to ?? runDate }
      : { type: config.baseline.window.type, from: wanted[0] ?? runDate, to: wanted[wanted.length - 1] ?? runDate };
  const createdAt = (deps.now?.() ?? new Date()).toISOString();
  const baseline = mergeBaseline(days, config, { fingerprint, window, createdAt });

  const sliceBaselines = new Map<string, BaselineProfile>();
  if (hasSlices(config)) {
    const names = [...new Set(days.flatMap((d) => d.sliceNames ?? []))].sort();
    for (const name of names) {
      throwIfAborted(deps.signal);
      const withSlice = days.filter((d) => d.sliceNames?.includes(name)).map((d) => d.date);
      const fromStore = await store.loadDayProfiles(sliceFingerprint(profileFp, name), withSlice.filter((d) => !fresh.get(d)?.has(name)));
      const sliceDays = withSlice.map((d) => fresh.get(d)?.get(name) ?? fromStore.get(d)).filter((p): p is DayProfile => p !== undefined);
      sliceBaselines.set(name, mergeBaseline(sliceDays, sliceConfig(config), { fingerprint: sliceFingerprint(fingerprint, name), window, createdAt }));
    }
    baseline.slices = names;
  }
  return { baseline, slices: sliceBaselines, fresh: true, newDays };
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
    const fine = (b: BaselineProfile): BaselineProfile => (deps.config.source.engine === 'pushdown' ? withFineBins(b) : b);
    const baseline = fine(built.baseline);
    const sliceBaselines = new Map([...built.slices].map(([name, b]) => [name, fine(b)]));
    deps.log.debug('baseline ready', { runDate, slices: sliceBaselines.size, seconds: (performance.now() - tBaseline) / 1000 });
    throwIfAborted(deps.signal);
    const pushdown = deps.config.source.engine === 'pushdown';
    const current = await readProfile(deps, plan, runDate, baseline.bins, baseline.fineBins ?? null, pushdown ? extremeBoundsOf(deps.config, baseline) : null, sliceBaselines);
    throwIfAborted(deps.signal);
    // The evaluated day becomes a stored day profile too, for the baselines of later days.
    const profileFp = profileFingerprint(deps.config);
    const today = dayArtefacts(deps.config, profileFp, current);
    // Baseline days of the window go with the evaluated day; those of a baseline relation, and slices, under fingerprints of their own.
    const dayProfiles = [...built.newDays.filter((d) => d.fingerprint === profileFp).map((d) => d.profile), today.whole];
    const moreDayProfiles = [...built.newDays.filter((d) => d.fingerprint !== profileFp), ...today.slices];

    const outcome = await laggedOutcome(deps, plan, runDate);
    let drafts: FindingDraft[] = evaluateSlices(
      deps.config,
      baseline,
      current,
      (current.slices ?? []).map((s) => ({ slice: s.slice, baseline: sliceBaselines.get(s.slice) ?? null, current: s.profile })),
      outcome,
    );
    // A training set's volume says nothing about a day's: row and list counts are not compared with it.
    if (deps.config.baseline.source !== undefined) drafts = drafts.filter((d) => d.check !== 'row_count_ratio' && d.check !== 'list_count_ratio');
    const previous = await deps.store.previousFindings(runDate);
    const findings = applyAlertState(deps.config, runDate, drafts, previous?.findings ?? null);
    const report = assembleReport(deps.config, runDate, started, now(), fingerprint, baseline, current, findings, sliceBaselines);
    throwIfAborted(deps.signal);
    const tRun = performance.now();
    await deps.store.saveRun(report, {
      profileFingerprint: profileFp,
      dayProfiles,
      baseline: built.fresh ? built.baseline : null,
      moreDayProfiles,
      moreBaselines: built.fresh ? [...built.slices.values()] : [],
    });
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
  const findings = applyAlertState(deps.config, runDate, [{ slice: 'all', ...snapshotMissingFinding(runDate, reason) }], previous?.findings ?? null);
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

function assembleReport(
  config: Config,
  runDate: string,
  started: Date,
  finished: Date,
  fingerprint: string,
  baseline: BaselineProfile,
  current: DayProfile,
  findings: Finding[],
  sliceBaselines: ReadonlyMap<string, BaselineProfile> = new Map(),
): Report {
  const days = baseline.days.length;
  const sum = (k: 'rows' | 'lists'): number => baseline.days.reduce((s, d) => s + d[k], 0);
  const order = { critical: 0, warn: 1, ok: 2 } as const;
  // The whole day's findings first, then each slice's, in the order the slices were evaluated.
  const sliceRank = new Map<string, number>([['all', 0], ...(current.slices ?? []).map((s, i): [string, number] => [s.slice, i + 1])]);
  const sorted = [...findings].sort(
    (a, b) =>
      (sliceRank.get(a.slice ?? 'all') ?? 0) - (sliceRank.get(b.slice ?? 'all') ?? 0) ||
      order[a.status] - order[b.status] ||
      (a.feature ?? '').localeCompare(b.feature ?? '') ||
      a.check.localeCompare(b.check),
  );
  const relation = config.baseline.source;
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
      source: relation !== undefined ? { type: 'relation', table: relation.table, from: relation.from ?? null, to: relation.to ?? null } : { type: 'window' },
    },
    current: {
      rows: current.totalRows,
      lists: current.totalLists,
      evaluatedRows: current.dataset.rows,
      evaluatedLists: current.dataset.lists,
      sampled: current.sampled,
    },
    findings: sorted,
    ...(current.slices !== undefined
      ? {
          slices: current.slices.map((s) => ({
            slice: s.slice,
            kind: s.kind,
            rows: s.profile.totalRows,
            lists: s.profile.totalLists,
            baselineDays: sliceBaselines.get(s.slice)?.days.length ?? 0,
          })),
        }
      : {}),
  };
}
