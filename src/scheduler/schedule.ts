/**
 * The leader and schedule loop: the daily cron task (node-cron, with the configured zone,
 * no overlap), the catch-up on start, and a probe every few seconds that publishes whether
 * the source and the store answer and keeps trying for the leader lock, so a replica that
 * becomes leader (the old one died) runs what is due at once.
 */
import { createTask, type ScheduledTask } from 'node-cron';
import type { Config } from '../config/index.ts';
import type { Pool } from '../db/index.ts';
import type { PlumblineMetrics } from '../exporter/index.ts';
import { errorFields, type Logger } from '../log.ts';
import type { RunCoordinator } from './coordinator.ts';
import type { LeaderLock } from './leader.ts';

export interface ScheduleLoopDeps {
  config: Config;
  log: Logger;
  source: Pool;
  storePool: Pool;
  metrics: PlumblineMetrics;
  leader: LeaderLock;
  coordinator: RunCoordinator;
  probeIntervalMs: number;
}

async function answers(pool: Pool): Promise<boolean> {
  try {
    await pool.query('SELECT 1');
    return true;
  } catch {
    return false;
  }
}

export class ScheduleLoop {
  #task: ScheduledTask | null = null;
  #probes: NodeJS.Timeout | null = null;
  #stopped = false;
  /** The source's answer to the latest probe. */
  sourceUp = false;

  constructor(private readonly deps: ScheduleLoopDeps) {}

  /** Starts probing at once (health gauges need a sample before the store is ready). */
  startProbes(): void {
    void this.probe();
    this.#probes = setInterval(() => void this.probe(), this.deps.probeIntervalMs);
    this.#probes.unref();
  }

  /** Starts the cron task and catches up on missed days (call once the store is ready). */
  async startSchedule(): Promise<void> {
    const { config, log, coordinator } = this.deps;
    if (this.#stopped) return;
    this.#task = createTask(config.schedule.cron, () => coordinator.runDue('schedule'), { name: 'plumbline-daily', timezone: config.schedule.timezone, noOverlap: true });
    this.#task.on('execution:failed', (ctx) => log.error('schedule execution failed', errorFields(ctx.execution?.error)));
    await this.#task.start();
    log.info('schedule started', { cron: config.schedule.cron, timezone: config.schedule.timezone, next: this.#task.getNextRun()?.toISOString() ?? null });
    await coordinator.runDue('start');
  }

  async probe(): Promise<void> {
    const { metrics, leader, coordinator } = this.deps;
    const [s, st] = await Promise.all([answers(this.deps.source), answers(this.deps.storePool)]);
    this.sourceUp = s;
    metrics.setSourceUp(s);
    metrics.setStoreUp(st);
    if (coordinator.ready && !coordinator.busy && !this.#stopped) {
      const wasLeader = leader.isLeader;
      const role = await leader.acquire();
      metrics.setLeader(role === 'leader');
      if (role === 'leader' && !wasLeader) void coordinator.runDue('became leader');
    }
  }

  async stop(): Promise<void> {
    this.#stopped = true;
    if (this.#probes !== null) clearInterval(this.#probes);
    if (this.#task !== null) await this.#task.stop();
  }
}
