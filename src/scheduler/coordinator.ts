/**
 * The run coordinator: at most one run at a time in this process, only while it holds the
 * leader lock (scheduled, caught-up, retried and manual runs alike), each under a deadline
 * (schedule.runTimeoutMinutes), with failed runs retried with backoff. A retry survives a
 * store that cannot be asked for the lock (it is rescheduled, not dropped); it is dropped
 * only when another replica holds the lock (that replica runs the due days).
 *
 * On shutdown a run gets the grace period to finish; then it is aborted, which cancels its
 * statement in flight, and it is recorded as interrupted (not as a failure).
 */
import type { Config } from '../config/index.ts';
import { ConfigError } from '../errors.ts';
import type { PlumblineMetrics } from '../exporter/index.ts';
import { errorFields, type Logger } from '../log.ts';
import { checkRunnableDates, runDay, RunAbortError, wasInterrupted } from '../run/index.ts';
import type { Runtime } from '../runtime.ts';
import { dailyJob, targetDate } from './job.ts';
import type { LeaderLock, LeaderRole } from './leader.ts';
import { deadlineHasPassed, retryDelayMs, RetryTimer } from './retry.ts';
import { runGuarded, type GuardedResult } from './guarded-run.ts';

/** What a finished run tells the rest of the service (metrics, results reload, Alertmanager). */
export interface FinishedRun {
  ok: boolean;
  interrupted: boolean;
  startedAt: Date;
}

export interface CoordinatorDeps {
  config: Config;
  rt: Pick<Runtime, 'source' | 'store'>;
  log: Logger;
  now: () => Date;
  leader: LeaderLock;
  metrics: PlumblineMetrics;
  /** false: no schedule and no catch-up, only manual runs (the demo's back-filled past). */
  runSchedule: boolean;
  afterRun: (run: FinishedRun) => Promise<void>;
}

export interface TriggerResult {
  accepted: boolean;
  message: string;
  status: number;
}

const sleep = (ms: number): { done: Promise<void>; cancel: () => void } => {
  let t: NodeJS.Timeout;
  const done = new Promise<void>((resolve) => {
    t = setTimeout(resolve, ms);
  });
  return { done, cancel: () => clearTimeout(t) };
};

export class RunCoordinator {
  /** Set once the store is migrated and the latest results are loaded. */
  ready = false;
  #claimed = false;
  #running: Promise<void> | null = null;
  #abort: AbortController | null = null;
  #stopping = false;
  readonly #retry: RetryTimer;
  #failureStreak = 0;
  #unavailableStreak = 0;
  /** A manually requested date whose run failed and waits for its retry. */
  #retryDate: string | null = null;
  #manualStreak = 0;
  readonly #firstAttempt = new Map<string, Date>();

  constructor(private readonly deps: CoordinatorDeps) {
    this.#retry = new RetryTimer(deps.log, async () => {
      // A failed manual run of a date is retried like a scheduled one (the operator asked for that date).
      if (this.#retryDate !== null) await this.runDate(this.#retryDate, 'retry');
      await this.runDue('retry');
    });
  }

  get busy(): boolean {
    return this.#claimed;
  }

  /** Runs what is due now (the target date and missed days). A call while busy is skipped. */
  async runDue(reason: string): Promise<void> {
    if (this.#stopping || !this.ready || (!this.deps.runSchedule && reason !== 'manual')) return;
    if (!this.#claim()) {
      // A retry that meets another run (a manual one) waits for it rather than being dropped.
      if (reason === 'retry') this.#retry.schedule(retryDelayMs(this.deps.config, null, 1), 'due days wait for the run in progress');
      return;
    }
    try {
      if (!(await this.#lead(reason))) return;
      await this.#runDueClaimed(reason);
    } finally {
      this.#claimed = false;
    }
  }

  /** Runs one date (a retry of a failed manual run). */
  async runDate(date: string, reason: string): Promise<void> {
    if (this.#stopping) return;
    if (!this.#claim()) {
      // Busy (a scheduled run): try again shortly instead of dropping the retry.
      if (reason === 'retry') this.#retry.schedule(retryDelayMs(this.deps.config, null, 1), `${date} waits for the run in progress`);
      return;
    }
    try {
      if (!(await this.#lead(reason, date))) return;
      await this.#runDateClaimed(date, reason);
    } finally {
      this.#claimed = false;
    }
  }

  /**
   * POST /api/v1/runs: a date in range, the store ready, nothing running, and this replica
   * the leader (a non-leader answers 409: runs happen on the leader only). The run itself
   * continues in the background.
   */
  async trigger(date: string | null): Promise<TriggerResult> {
    const { config, log } = this.deps;
    if (this.#stopping) return { accepted: false, status: 503, message: 'the service is shutting down' };
    if (!this.ready) return { accepted: false, status: 503, message: 'the store is not ready yet' };
    // A date out of range is refused whatever else is going on (400 before 409).
    if (date !== null) {
      try {
        await checkRunnableDates({ config, source: this.deps.rt.source }, date, date, this.deps.now());
      } catch (err) {
        if (err instanceof ConfigError) return { accepted: false, status: 400, message: err.message };
        log.warn('manual run refused: the source cannot be checked', errorFields(err));
        return { accepted: false, status: 503, message: 'source unreachable' };
      }
    }
    if (!this.#claim()) return { accepted: false, status: 409, message: 'a run is in progress' };
    let launched = false;
    try {
      const role = await this.#role();
      if (role === 'follower') return { accepted: false, status: 409, message: 'another replica holds the leader lock and runs all runs; send the request to it (plumbline_leader 1)' };
      if (role === 'unavailable') return { accepted: false, status: 503, message: 'store unreachable' };
      launched = true;
      const work =
        date === null
          ? this.#runDueClaimed('manual')
          : (() => {
              // A new manual run replaces the pending retry of an earlier one.
              this.#retryDate = null;
              this.#manualStreak = 0;
              return this.#runDateClaimed(date, 'manual');
            })();
      void work
        .catch((err: unknown) => log.error('manual run crashed', errorFields(err)))
        .finally(() => {
          this.#claimed = false;
        });
      return { accepted: true, status: 202, message: date === null ? 'running the due days' : `running ${date}` };
    } finally {
      if (!launched) this.#claimed = false;
    }
  }

  /**
   * Stops: no new runs or retries; a run in progress gets `graceMs` in all, after which it
   * is aborted (its statement cancelled, recorded as interrupted). Resolves within graceMs,
   * or one second when graceMs is shorter (time for the abort).
   */
  async stop(graceMs: number): Promise<void> {
    this.#stopping = true;
    this.#retry.stop();
    const running = this.#running;
    if (running === null) return;
    // Keep a few seconds of the grace for the abort: cancel, roll back, record "interrupted".
    const forAbort = Math.min(5000, Math.floor(graceMs / 2));
    const wait = sleep(graceMs - forAbort);
    const finished = await Promise.race([running.then(() => true), wait.done.then(() => false)]);
    wait.cancel();
    if (finished) return;
    this.deps.log.warn('aborting the run in progress', { graceSeconds: graceMs / 1000 });
    this.#abort?.abort(new RunAbortError('interrupted', 'the service is shutting down'));
    const rest = sleep(Math.max(forAbort, 1000));
    await Promise.race([running, rest.done]);
    rest.cancel();
  }

  #claim(): boolean {
    if (this.#claimed) return false;
    this.#claimed = true;
    return true;
  }

  async #role(): Promise<LeaderRole> {
    const role = await this.deps.leader.acquire();
    this.deps.metrics.setLeader(role === 'leader');
    return role;
  }

  /** True when this replica may run now; otherwise decides what becomes of a retry. */
  async #lead(reason: string, date?: string): Promise<boolean> {
    const role = await this.#role();
    if (role === 'leader') {
      this.#unavailableStreak = 0;
      return true;
    }
    if (role === 'unavailable' && (reason === 'retry' || reason === 'start' || reason === 'schedule')) {
      // Nobody can be sure another replica runs it: keep trying.
      this.#unavailableStreak++;
      this.#retry.schedule(retryDelayMs(this.deps.config, null, this.#unavailableStreak), 'the store cannot be asked for the leader lock');
    } else if (role === 'follower' && date !== undefined && reason === 'retry') {
      this.deps.log.warn('retry dropped: another replica holds the leader lock now', { date });
      this.#retryDate = null;
    }
    return false;
  }

  async #runDueClaimed(reason: string): Promise<void> {
    const { config, rt, log, now } = this.deps;
    const startedAt = now();
    const fired = now();
    const target = targetDate(config, fired);
    // The readiness deadline counts from the first attempt at this target date.
    if (!this.#firstAttempt.has(target)) this.#firstAttempt.set(target, fired);
    const deadlinePassed = deadlineHasPassed(config, fired, this.#firstAttempt.get(target));
    log.info('running due days', { reason, target });
    const result = await this.#execute(target, (signal) => dailyJob({ config, source: rt.source, store: rt.store, log, signal, now }, fired, { deadlinePassed }));
    if (!result.ok) {
      if (wasInterrupted(result.signal)) return this.deps.afterRun({ ok: false, interrupted: true, startedAt });
      await this.deps.afterRun({ ok: false, interrupted: false, startedAt });
      this.#failureStreak++;
      this.#retry.schedule(retryDelayMs(config, result.error, this.#failureStreak), `run of ${target} failed`);
      return;
    }
    const outcomes = result.value;
    for (const o of outcomes) {
      if (o.outcome === 'stored' || o.outcome === 'missing') await this.deps.afterRun({ ok: true, interrupted: false, startedAt });
      if (o.outcome === 'failed') await this.deps.afterRun({ ok: false, interrupted: wasInterrupted(result.signal), startedAt });
    }
    if (wasInterrupted(result.signal)) return;
    const failed = outcomes.find((o) => o.outcome === 'failed');
    const waiting = outcomes.find((o) => o.outcome === 'waiting');
    if (failed !== undefined && failed.outcome === 'failed') {
      this.#failureStreak++;
      this.#retry.schedule(retryDelayMs(config, failed.error, this.#failureStreak), `run of ${failed.date} failed`);
    } else {
      this.#failureStreak = 0;
      if (waiting !== undefined && waiting.outcome === 'waiting') this.#retry.schedule(config.schedule.readiness.retryEverySeconds * 1000, `${waiting.date}: ${waiting.reason}`);
    }
  }

  async #runDateClaimed(date: string, reason: string): Promise<void> {
    const { config, rt, log, now } = this.deps;
    const startedAt = now();
    log.info('running a date', { date, reason });
    const result = await this.#execute(date, (signal) => runDay({ config, source: rt.source, store: rt.store, log, signal, now }, date));
    if (result.ok) {
      if (this.#retryDate === date) this.#retryDate = null;
      this.#manualStreak = 0;
      await this.deps.afterRun({ ok: true, interrupted: false, startedAt });
      return;
    }
    const interrupted = wasInterrupted(result.signal);
    await this.deps.afterRun({ ok: false, interrupted, startedAt });
    if (interrupted || this.#stopping) return;
    this.#manualStreak++;
    this.#retryDate = date;
    this.#retry.schedule(retryDelayMs(config, result.error, this.#manualStreak), `run of ${date} failed`);
  }

  /** Runs `work` under the run deadline (guarded-run.ts), as the run `stop()` can abort. Never throws. */
  async #execute<T>(date: string, work: (signal: AbortSignal) => Promise<T>): Promise<GuardedResult<T>> {
    const ctl = new AbortController();
    if (this.#stopping) {
      // Stop arrived while the lock was being taken: do not start.
      ctl.abort(new RunAbortError('interrupted', 'the service is shutting down'));
      return { ok: false, error: ctl.signal.reason, signal: ctl.signal };
    }
    this.#abort = ctl;
    const { config, log, now, rt } = this.deps;
    const guarded = runGuarded(ctl, work, { config, log, now, store: rt.store, date });
    this.#running = guarded.then(() => undefined);
    try {
      return await guarded;
    } finally {
      this.#running = null;
      this.#abort = null;
    }
  }
}
