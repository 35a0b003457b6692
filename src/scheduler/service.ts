/**
 * `plumbline serve`: the long-running service. It serves metrics and reports from the
 * store at once (even while the databases are down), keeps retrying the store with
 * backoff, runs the daily schedule only while it holds the leader lock, retries failed
 * runs, and shuts down cleanly on SIGTERM.
 */
import { createTask, type ScheduledTask } from 'node-cron';
import type { Config } from '../config/index.ts';
import { isConnectionError, type Pool } from '../db/index.ts';
import { exitCodeFor, EXIT, SourceError, StoreError } from '../errors.ts';
import { PlumblineMetrics, pushAlerts, startHttpServer, type AlertLabels, type RunningHttpServer } from '../exporter/index.ts';
import { errorFields, type Logger } from '../log.ts';
import type { Report } from '../report/index.ts';
import { isIsoDate, runDay } from '../run/index.ts';
import { migrate, pendingMigrations } from '../store/index.ts';
import type { Runtime } from '../runtime.ts';
import { VERSION } from '../version.ts';
import { dailyJob, targetDate } from './job.ts';
import { LeaderLock } from './leader.ts';


export interface ServeOptions {
  config: Config;
  log: Logger;
  openRuntime: (config: Config, log: Logger) => Runtime;
  /** Optional status page handler (mounted at / by the HTTP server). */
  page?: (rt: Runtime) => (path: string, query: URLSearchParams) => Promise<{ status: number; contentType: string; body: string } | null>;
  /** Resolves when the service should stop; defaults to SIGTERM or SIGINT. */
  stopSignal?: Promise<string>;
  /** false: serve stored results only, no schedule and no catch-up (the demo's back-filled past). */
  runSchedule?: boolean;
  /** Called once HTTP is listening (the demo prints its URLs). */
  onListening?: (url: string) => void;
  now?: () => Date;
  /** How often to probe the databases and the leader lock. */
  probeIntervalMs?: number;
  /** Grace period for a run in progress at shutdown. */
  shutdownGraceMs?: number;
}

function signalPromise(): Promise<string> {
  return new Promise((resolve) => {
    const handler = (sig: NodeJS.Signals): void => {
      process.off('SIGTERM', handler);
      process.off('SIGINT', handler);
      resolve(sig);
    };
    process.on('SIGTERM', handler);
    process.on('SIGINT', handler);
  });
}

const sleep = (ms: number, signal?: AbortSignal): Promise<void> =>
  new Promise((resolve) => {
    const t = setTimeout(resolve, ms);
    signal?.addEventListener('abort', () => {
      clearTimeout(t);
      resolve();
    }, { once: true });
  });

/** The service; resolves with the process exit code after a clean shutdown. */
export async function serve(options: ServeOptions): Promise<number> {
  const { config, log } = options;
  const now = options.now ?? (() => new Date());
  const rt = options.openRuntime(config, log);
  const metrics = new PlumblineMetrics({ version: VERSION });
  const stopping = new AbortController();
  const leader = new LeaderLock(rt.storePool, config.store.schema, log);
  let migrated = false;
  let running: Promise<void> | null = null;
  let runAbort: AbortController | null = null;
  let retryTimer: NodeJS.Timeout | null = null;
  let retryAt = 0;
  let failureStreak = 0;
  /** A manually requested date whose run failed and is waiting for its retry. */
  let retryDate: string | null = null;
  let manualStreak = 0;
  const firstAttempt = new Map<string, Date>();

  const probe = async (pool: Pool): Promise<boolean> => {
    try {
      await pool.query('SELECT 1');
      return true;
    } catch {
      return false;
    }
  };

  const refreshFromStore = async (): Promise<void> => {
    const [latest, stats] = await Promise.all([rt.store.latestReport(), rt.store.runStats()]);
    metrics.showReport(latest);
    metrics.restoreHealth({ ...stats, sourceUp: await probe(rt.source), storeUp: true, leader: leader.isLeader });
  };

  // --- runs ---------------------------------------------------------------------------
  /**
   * Optional Alertmanager push: the alerting findings of the latest report, resent after every
   * run (their endsAt lies past the next expected run) and resolved once they stop alerting.
   * A failed push is logged and retried with the next report; it never fails a run.
   */
  let pushedAlerts: AlertLabels[] | null = null;
  const pushToAlertmanager = async (report: Report | null): Promise<void> => {
    const target = config.alerting.alertmanagerUrl;
    if (target === undefined || report === null) return;
    const result = await pushAlerts(target, report, { previous: pushedAlerts, now });
    pushedAlerts = result.active;
    if (!result.ok) log.warn('alertmanager push failed', { error: result.error ?? 'unknown', status: result.status ?? null });
    else log.info('alerts pushed to alertmanager', { firing: result.firing, resolved: result.resolved });
  };

  const afterRun = async (ok: boolean, startedAt: Date): Promise<void> => {
    metrics.recordRun({ ok, startedAt: startedAt.toISOString(), finishedAt: now().toISOString() });
    try {
      const latest = await rt.store.latestReport();
      metrics.showReport(latest);
      if (ok) await pushToAlertmanager(latest);
    } catch (err) {
      log.warn('could not reload the latest report', errorFields(err));
    }
  };

  /** One retry timer serves the due days and a failed manual date; the sooner request wins. */
  const scheduleRetry = (ms: number, why: string): void => {
    if (stopping.signal.aborted) return;
    if (retryTimer !== null) {
      if (retryAt <= Date.now() + ms) return;
      clearTimeout(retryTimer);
    }
    log.info('next attempt scheduled', { inSeconds: Math.round(ms / 1000), why });
    retryAt = Date.now() + ms;
    retryTimer = setTimeout(() => {
      retryTimer = null;
      void (async () => {
        // A failed manual run of a date is retried like a scheduled one (the operator asked for that date).
        if (retryDate !== null) await runDate(retryDate, 'retry');
        await runDue('retry');
      })();
    }, ms);
    retryTimer.unref();
  };

  /** Runs what is due now; one at a time (a second call while busy is skipped). */
  const runDue = async (reason: string): Promise<void> => {
    if (running !== null || stopping.signal.aborted || !migrated) return;
    // Serving stored results only (the demo): no schedule, no catch-up, only manual runs.
    if (options.runSchedule === false && reason !== 'manual') return;
    if (!(await leader.tryAcquire())) {
      metrics.setLeader(false);
      return;
    }
    metrics.setLeader(true);
    runAbort = new AbortController();
    const signal = runAbort.signal;
    running = (async () => {
      const startedAt = now();
      const fired = now();
      const target = targetDate(config, fired);
      // The readiness deadline counts from the first attempt at this target date.
      if (!firstAttempt.has(target)) firstAttempt.set(target, fired);
      const deadlinePassed = deadlineHasPassed(config, fired, firstAttempt.get(target));
      log.info('running due days', { reason, target });
      const outcomes = await dailyJob({ config, source: rt.source, store: rt.store, log, signal, now }, fired, { deadlinePassed });
      for (const o of outcomes) {
        if (o.outcome === 'stored' || o.outcome === 'missing') await afterRun(true, startedAt);
        if (o.outcome === 'failed') await afterRun(false, startedAt);
      }
      const failed = outcomes.find((o) => o.outcome === 'failed');
      const waiting = outcomes.find((o) => o.outcome === 'waiting');
      if (failed !== undefined && failed.outcome === 'failed') {
        failureStreak++;
        scheduleRetry(retryDelayMs(config, failed.error, failureStreak), `run of ${failed.date} failed`);
      } else {
        failureStreak = 0;
        if (waiting !== undefined && waiting.outcome === 'waiting') scheduleRetry(config.schedule.readiness.retryEverySeconds * 1000, `${waiting.date}: ${waiting.reason}`);
      }
    })()
      .catch((err: unknown) => {
        log.error('scheduled job crashed', errorFields(err));
      })
      .finally(() => {
        running = null;
        runAbort = null;
      });
    await running;
  };

  /**
   * A run of one given date (manual, or the retry of a failed manual run). A failure is
   * retried with backoff until the date succeeds or another manual run is requested.
   */
  const runDate = async (date: string, reason: string): Promise<void> => {
    if (stopping.signal.aborted) return;
    if (running !== null) {
      // Busy (a scheduled run): try again shortly instead of dropping the retry.
      if (reason === 'retry') scheduleRetry(retryDelayMs(config, null, 1), `${date} waits for the run in progress`);
      return;
    }
    runAbort = new AbortController();
    const signal = runAbort.signal;
    const startedAt = now();
    log.info('running a date', { date, reason });
    running = runDay({ config, source: rt.source, store: rt.store, log, signal, now }, date)
      .then(
        async () => {
          if (retryDate === date) retryDate = null;
          manualStreak = 0;
          await afterRun(true, startedAt);
        },
        async (err: unknown) => {
          await afterRun(false, startedAt);
          if (stopping.signal.aborted) return;
          manualStreak++;
          retryDate = date;
          scheduleRetry(retryDelayMs(config, err, manualStreak), `run of ${date} failed`);
        },
      )
      .catch((err: unknown) => {
        log.error('manual run crashed', errorFields(err));
      })
      .finally(() => {
        running = null;
        runAbort = null;
      });
    await running;
  };

  /** POST /api/v1/runs: a manual run of one date (or of what is due). */
  const trigger = async (date: string | null): Promise<{ accepted: boolean; message: string }> => {
    if (!migrated) return { accepted: false, message: 'the store is not ready yet' };
    if (running !== null) return { accepted: false, message: 'a run is in progress' };
    if (date === null) {
      void runDue('manual');
      return { accepted: true, message: 'running the due days' };
    }
    if (!isIsoDate(date)) return { accepted: false, message: 'date must be YYYY-MM-DD' };
    // A new manual run replaces the pending retry of an earlier one.
    retryDate = null;
    manualStreak = 0;
    void runDate(date, 'manual');
    return { accepted: true, message: `running ${date}` };
  };

  // --- HTTP -------------------------------------------------------------------------------
  let http: RunningHttpServer;
  try {
    http = await startHttpServer(
      {
        metrics,
        latestReport: () => rt.store.latestReport(),
        reportFor: (d: string) => rt.store.reportFor(d),
        readiness: async (): Promise<{ ready: boolean; reasons: string[] }> => {
          const reasons: string[] = [];
          try {
            const pending = await pendingMigrations(rt.storePool, config.store.schema);
            if (pending.length > 0) reasons.push(`store migrations pending: ${pending.join(', ')}`);
          } catch (err) {
            reasons.push(`store unreachable: ${errorFields(err).error as string}`);
          }
          return { ready: reasons.length === 0, reasons };
        },
        trigger,
        ...(options.page !== undefined ? { page: options.page(rt) } : {}),
      },
      { host: config.http.host, port: config.http.port },
    );
  } catch (err) {
    await rt.close();
    log.error('cannot listen', { host: config.http.host, port: config.http.port, ...errorFields(err) });
    return exitCodeFor(err) === EXIT.bug ? EXIT.unavailable : exitCodeFor(err);
  }
  log.info('listening', { url: http.url });
  options.onListening?.(http.url);

  // --- start-up: the store, with backoff; the schedule ---------------------------------------
  let task: ScheduledTask | null = null;
  const startUp = (async () => {
    for (let attempt = 0; !stopping.signal.aborted; attempt++) {
      try {
        await migrate(rt.storePool, config.store.schema);
        await refreshFromStore();
        migrated = true;
        break;
      } catch (err) {
        metrics.setStoreUp(false);
        const wait = Math.min(1000 * 2 ** attempt, 30_000);
        log.warn('store not available yet; retrying', { inSeconds: wait / 1000, ...errorFields(err) });
        await sleep(wait, stopping.signal);
      }
    }
    if (stopping.signal.aborted || options.runSchedule === false) return;
    task = createTask(config.schedule.cron, () => runDue('schedule'), { name: 'plumbline-daily', timezone: config.schedule.timezone, noOverlap: true });
    task.on('execution:failed', (ctx) => log.error('schedule execution failed', errorFields(ctx.execution?.error)));
    await task.start();
    log.info('schedule started', { cron: config.schedule.cron, timezone: config.schedule.timezone, next: task.getNextRun()?.toISOString() ?? null });
    // Catch up on start: missed days since the last stored run.
    await runDue('start');
  })();

  const probeAll = async (): Promise<void> => {
    const [s, st] = await Promise.all([probe(rt.source), probe(rt.storePool)]);
    metrics.setSourceUp(s);
    metrics.setStoreUp(st);
    if (migrated && running === null && !stopping.signal.aborted) {
      const wasLeader = leader.isLeader;
      const isLeader = await leader.tryAcquire();
      metrics.setLeader(isLeader);
      if (isLeader && !wasLeader) void runDue('became leader');
    }
  };
  // Probe once at start too: until the first interval, source_up and store_up would have no sample.
  void probeAll();
  const probes = setInterval(() => void probeAll(), options.probeIntervalMs ?? 15_000);
  probes.unref();

  // --- shutdown -----------------------------------------------------------------------------
  const sig = await (options.stopSignal ?? signalPromise());
  log.info('stopping', { signal: sig });
  stopping.abort();
  clearInterval(probes);
  if (retryTimer !== null) clearTimeout(retryTimer);
  if (task !== null) await (task as ScheduledTask).stop();
  if (running !== null) {
    const grace = options.shutdownGraceMs ?? 20_000;
    // The timers of these waits are cancelled once the run ends: a pending one would keep the
    // process alive for the whole grace period after a clean stop.
    const waits = new AbortController();
    // Let the run finish within the grace period; then abort it (it rolls back and stores nothing).
    const finished = await Promise.race([(running as Promise<void>).then(() => true), sleep(grace, waits.signal).then(() => false)]);
    if (!finished) {
      (runAbort as AbortController | null)?.abort(new Error('shutting down'));
      await Promise.race([running as Promise<void>, sleep(5000, waits.signal)]);
    }
    waits.abort();
  }
  await startUp.catch(() => undefined);
  await http.close();
  await leader.release();
  await rt.close();
  log.info('stopped');
  return EXIT.ok;
}

/**
 * Connection trouble heals by itself. Stores and sources wrap the driver's error as `cause`:
 * transient is a connection SQLSTATE or socket code anywhere in the chain, or a source or
 * store failure whose root is an error without any code (pg reports a connection lost
 * mid-query that way; a problem the server reported always carries its SQLSTATE).
 */
export function isTransient(err: unknown): boolean {
  let wrapped = false;
  let root: unknown = err;
  for (let e = err, depth = 0; e !== null && e !== undefined && depth < 5; e = (e as { cause?: unknown }).cause, depth++) {
    if (isConnectionError(e)) return true;
    if (e instanceof SourceError || e instanceof StoreError) wrapped = true;
    root = e;
  }
  return wrapped && root !== err && root instanceof Error && (root as { code?: unknown }).code === undefined;
}

/**
 * Wait before the next attempt after `streak` consecutive failures: schedule.retryBaseSeconds
 * doubled per failure, at most an hour; failures other than connection trouble start 20 times
 * later (a config or data problem will not heal in seconds). `null`: just wait the base.
 */
export function retryDelayMs(config: Config, err: unknown, streak: number): number {
  const base = config.schedule.retryBaseSeconds * 1000 * (err === null || isTransient(err) ? 1 : 20);
  return Math.min(base * 2 ** Math.max(0, streak - 1), 3_600_000);
}

/** True once readiness.deadlineMinutes have passed since the first attempt at a date. */
export function deadlineHasPassed(config: Config, at: Date, firstAttempt: Date | undefined): boolean {
  return firstAttempt !== undefined && at.getTime() - firstAttempt.getTime() >= config.schedule.readiness.deadlineMinutes * 60_000;
}

export type { Report };
