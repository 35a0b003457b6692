/**
 * Keeps this replica's metrics equal to the store, whoever wrote it (the leader, another
 * replica, `plumbline run` from the command line): it reloads the latest run and the run
 * statistics when the store NOTIFYs a stored run (LISTEN on a connection of its own, which
 * reconnects with backoff), and every http.refreshSeconds as a fallback. Reloads never
 * overlap; a notification that arrives during one triggers one more afterwards.
 */
import type { Config } from '../config/index.ts';
import { listenToChannel, type ChannelListener, type Pool } from '../db/index.ts';
import type { PlumblineMetrics } from '../exporter/index.ts';
import { errorFields, type Logger } from '../log.ts';
import type { Report } from '../report/index.ts';
import { todayIn } from '../run/index.ts';
import type { RunStats, Store } from '../store/index.ts';

export interface RefresherDeps {
  config: Config;
  store: Pick<Store, 'latestReport' | 'runStats' | 'channel'>;
  storePool: Pool;
  metrics: PlumblineMetrics;
  log: Logger;
  now: () => Date;
  /** What this process sees now, for the health gauges a reload rewrites. */
  health: () => { sourceUp: boolean; leader: boolean };
}

export class ResultsRefresher {
  #listener: ChannelListener | null = null;
  #timer: NodeJS.Timeout | null = null;
  #running: Promise<void> | null = null;
  #again = false;
  #latest: Report | null = null;
  /** Date of the report the metrics show (null: none yet). */
  shownDate: string | null = null;

  constructor(private readonly deps: RefresherDeps) {}

  /** Loads once now, then listens and refreshes periodically. */
  async start(): Promise<void> {
    await this.refresh('start');
    const { deps } = this;
    this.#listener = listenToChannel({
      pool: deps.storePool,
      channel: deps.store.channel,
      onNotify: (payload) => void this.refresh(payload === null ? 'listening' : 'notified').catch(() => undefined),
      onError: (err, retryInMs) => deps.log.warn('store notifications lost; reconnecting', { inSeconds: retryInMs / 1000, ...errorFields(err) }),
    });
    this.#timer = setInterval(() => void this.refresh('periodic').catch(() => undefined), deps.config.http.refreshSeconds * 1000);
    this.#timer.unref();
  }

  /** Reloads the latest report and run statistics into the metrics. Throws when the store fails. */
  async refresh(why: string): Promise<Report | null> {
    if (this.#running !== null) {
      this.#again = true;
      await this.#running.catch(() => undefined);
      return this.#latest;
    }
    const once = async (): Promise<void> => {
      const { deps } = this;
      const [report, stats] = await Promise.all([deps.store.latestReport(todayIn(deps.config, deps.now())), deps.store.runStats()]);
      this.#latest = report;
      this.#show(report, stats);
      if (why !== 'periodic') deps.log.debug('results reloaded', { why, runDate: report?.runDate ?? null });
    };
    this.#running = (async () => {
      try {
        do {
          this.#again = false;
          await once();
        } while (this.#again);
      } finally {
        this.#running = null;
      }
    })();
    try {
      await this.#running;
    } catch (err) {
      if (why !== 'start') this.deps.log.warn('could not reload the latest results', { why, ...errorFields(err) });
      throw err;
    }
    return this.#latest;
  }

  #show(report: Report | null, stats: RunStats): void {
    const { metrics, health } = this.deps;
    metrics.showReport(report);
    metrics.restoreHealth({ ...stats, ...health(), storeUp: true });
    this.shownDate = report?.runDate ?? null;
  }

  async stop(): Promise<void> {
    if (this.#timer !== null) clearInterval(this.#timer);
    this.#timer = null;
    await this.#listener?.close();
    this.#listener = null;
    await this.#running?.catch(() => undefined);
  }
}
