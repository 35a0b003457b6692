/**
 * `plumbline serve`: the long-running service, wired from the units of this folder.
 *
 * - HTTP (exporter/http.ts) starts first and serves metrics, health, the report API and the
 *   status page at once, even while the databases are down.
 * - Start-up retries the store with backoff, then loads the latest results (refresher.ts).
 * - The coordinator (coordinator.ts) runs one run at a time under the leader lock, with a
 *   deadline and retries; the schedule loop (schedule.ts) fires it and probes health.
 * - Every replica follows the store through the refresher, whoever stored a run.
 * - On SIGTERM (shutdown.ts) the stop sequence is bounded by schedule.shutdownGraceSeconds.
 */
import { serviceSecretsFromEnv, type Config, type ServiceSecrets } from '../config/index.ts';
import { ConfigError, exitCodeFor, EXIT } from '../errors.ts';
import { PlumblineMetrics, startHttpServer, type PageResult, type RunningHttpServer } from '../exporter/index.ts';
import { errorFields, type Logger } from '../log.ts';
import type { Report } from '../report/index.ts';
import { todayIn } from '../run/index.ts';
import type { Runtime } from '../runtime.ts';
import { createStatusPage } from '../statuspage/index.ts';
import { migrate, pendingMigrations } from '../store/index.ts';
import { VERSION } from '../version.ts';
import { AlertPusher } from './alert-push.ts';
import { RunCoordinator } from './coordinator.ts';
import { LeaderLock } from './leader.ts';
import { ResultsRefresher } from './refresher.ts';
import { ScheduleLoop } from './schedule.ts';
import { signalPromise, sleep, within } from './shutdown.ts';

export interface ServeOptions {
  config: Config;
  log: Logger;
  openRuntime: (config: Config, log: Logger) => Runtime;
  /** Replaces the status page handler (mounted at / unless http.statusPage is false). */
  page?: (rt: Runtime) => (path: string, query: URLSearchParams) => Promise<PageResult | null>;
  /** Resolves when the service should stop; defaults to SIGTERM or SIGINT. */
  stopSignal?: Promise<string>;
  /** false: serve stored results only, no schedule and no catch-up (the demo's back-filled past). */
  runSchedule?: boolean;
  /** Called once HTTP is listening (the demo prints its URLs). */
  onListening?: (url: string) => void;
  now?: () => Date;
  /** How often to probe the databases and the leader lock. */
  probeIntervalMs?: number;
  /** Overrides schedule.shutdownGraceSeconds. */
  shutdownGraceMs?: number;
  /** Defaults to serviceSecretsFromEnv() (PLUMBLINE_RUN_TOKEN, PLUMBLINE_ALERTMANAGER_TOKEN). */
  secrets?: ServiceSecrets;
  /** Unhandled promise rejections counted by the process policy (cli.ts), exported as a metric. */
  unhandledRejections?: () => number;
}

/** The service; resolves with the process exit code after a clean shutdown. */
export async function serve(options: ServeOptions): Promise<number> {
  const { config, log } = options;
  const now = options.now ?? (() => new Date());
  // Secrets are checked before anything starts, like the config.
  const secrets = options.secrets ?? serviceSecretsFromEnv();
  if (config.http.manualRuns.enabled && secrets.runToken === undefined) {
    const msg = 'http.manualRuns.enabled: manual runs need a bearer token: set PLUMBLINE_RUN_TOKEN or PLUMBLINE_RUN_TOKEN_FILE';
    throw new ConfigError(msg, [msg]);
  }
  const rt = options.openRuntime(config, log);
  const metrics = new PlumblineMetrics({ version: VERSION });
  const leader = new LeaderLock(rt.storePool, config.store.schema, log);
  const today = (): string => todayIn(config, now());
  const pusher = new AlertPusher(config.alerting.alertmanagerUrl, log, { now, ...(secrets.alertmanagerToken !== undefined ? { bearerToken: secrets.alertmanagerToken } : {}) });
  let sourceUp = (): boolean => false;
  const refresher = new ResultsRefresher({ config, store: rt.store, storePool: rt.storePool, metrics, log, now, health: () => ({ sourceUp: sourceUp(), leader: leader.isLeader }) });
  const coordinator = new RunCoordinator({
    config,
    rt,
    log,
    now,
    leader,
    metrics,
    runSchedule: options.runSchedule !== false,
    afterRun: async (run) => {
      // The run counters and last-run gauges come from the store (every replica shows the same);
      // only when the store cannot be read is the run counted here, so it is not lost.
      let latest: Report | null;
      try {
        latest = await refresher.refresh('run');
      } catch {
        metrics.recordRun({ ok: run.ok, interrupted: run.interrupted, startedAt: run.startedAt.toISOString(), finishedAt: now().toISOString() });
        return;
      }
      if (run.ok) await pusher.push(latest);
    },
  });
  const schedule = new ScheduleLoop({
    config,
    log,
    source: rt.source,
    storePool: rt.storePool,
    metrics,
    leader,
    coordinator,
    probeIntervalMs: options.probeIntervalMs ?? 15_000,
  });
  if (options.unhandledRejections !== undefined) metrics.countUnhandledRejectionsFrom(options.unhandledRejections);
  sourceUp = () => schedule.sourceUp;

  const page =
    options.page?.(rt) ??
    (config.http.statusPage
      ? createStatusPage({
          latestReport: () => rt.store.latestReport(today()),
          reportFor: (d) => rt.store.reportFor(d),
          history: (q) => rt.store.history(q),
          storedDates: (from, to) => rt.store.storedDates(from, to),
        })
      : undefined);

  // --- HTTP -------------------------------------------------------------------------------
  let http: RunningHttpServer;
  try {
    http = await startHttpServer(
      {
        metrics,
        latestReport: (): Promise<Report | null> => rt.store.latestReport(today()),
        reportFor: (d: string) => rt.store.reportFor(d),
        readiness: async (): Promise<{ ready: boolean; reasons: string[] }> => {
          const reasons: string[] = [];
          try {
            const pending = await pendingMigrations(rt.storePool, config.store.schema);
            if (pending.length > 0) reasons.push(`store migrations pending: ${pending.join(', ')}`);
          } catch (err) {
            // Host, port and driver text stay in the log: /readyz is open to anyone who can reach it.
            log.warn('readiness: store unreachable', errorFields(err));
            reasons.push('store unreachable');
          }
          if (reasons.length === 0 && !coordinator.ready) reasons.push('loading the latest results');
          return { ready: reasons.length === 0, reasons };
        },
        ...(config.http.manualRuns.enabled ? { trigger: (d: string | null) => coordinator.trigger(d), runToken: secrets.runToken! } : {}),
        ...(page !== undefined ? { page } : {}),
        onError: (err, route) => log.error('request failed', { route, ...errorFields(err) }),
      },
      { host: config.http.host, port: config.http.port, ...(config.http.allowedHosts !== undefined ? { allowedHosts: config.http.allowedHosts } : {}) },
    );
  } catch (err) {
    await rt.close();
    log.error('cannot listen', { host: config.http.host, port: config.http.port, ...errorFields(err) });
    return exitCodeFor(err) === EXIT.bug ? EXIT.unavailable : exitCodeFor(err);
  }
  log.info('listening', { url: http.url });
  options.onListening?.(http.url);

  // --- start-up: the store, with backoff; the results; the schedule ---------------------------
  const stopping = new AbortController();
  const startUp = (async () => {
    for (let attempt = 0; !stopping.signal.aborted; attempt++) {
      try {
        await migrate(rt.storePool, config.store.schema);
        await refresher.start();
        // Health gauges at once, not at the next probe.
        await schedule.probe();
        coordinator.ready = true;
        break;
      } catch (err) {
        await refresher.stop();
        metrics.setStoreUp(false);
        const wait = Math.min(1000 * 2 ** attempt, 30_000);
        log.warn('store not available yet; retrying', { inSeconds: wait / 1000, ...errorFields(err) });
        await sleep(wait, stopping.signal);
      }
    }
    if (stopping.signal.aborted || options.runSchedule === false) return;
    await schedule.startSchedule();
  })().catch((err: unknown) => log.error('start-up failed', errorFields(err)));
  schedule.startProbes();

  // --- shutdown -----------------------------------------------------------------------------
  const sig = await (options.stopSignal ?? signalPromise());
  const grace = options.shutdownGraceMs ?? config.schedule.shutdownGraceSeconds * 1000;
  log.info('stopping', { signal: sig, graceSeconds: grace / 1000 });
  stopping.abort();
  await schedule.stop();
  await coordinator.stop(grace);
  await within(refresher.stop(), 2000);
  await within(startUp, 1000);
  await http.close();
  await within(leader.release(), 2000);
  // A connection that never answers must not keep the process past its grace.
  if (!(await within(rt.close(), 3000))) log.warn('database connections did not close in time');
  log.info('stopped');
  return EXIT.ok;
}

export type { Report };
