/**
 * When to try again after a failed run: the backoff rule (pure functions) and the one timer
 * that holds the next attempt. Connection trouble is retried soon, anything else much later.
 */
import type { Config } from '../config/index.ts';
import { isConnectionError } from '../db/index.ts';
import { SourceError, StoreError } from '../errors.ts';
import type { Logger } from '../log.ts';

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

/** One pending attempt at most: a sooner request replaces a later one, a later one is ignored. */
export class RetryTimer {
  #timer: NodeJS.Timeout | null = null;
  #at = 0;
  #stopped = false;

  constructor(
    private readonly log: Logger,
    private readonly fire: () => Promise<void>,
  ) {}

  get pending(): boolean {
    return this.#timer !== null;
  }

  schedule(ms: number, why: string): void {
    if (this.#stopped) return;
    if (this.#timer !== null) {
      if (this.#at <= Date.now() + ms) return;
      clearTimeout(this.#timer);
    }
    this.log.info('next attempt scheduled', { inSeconds: Math.round(ms / 1000), why });
    this.#at = Date.now() + ms;
    this.#timer = setTimeout(() => {
      this.#timer = null;
      this.fire().catch((err: unknown) => this.log.error('retry crashed', { error: String(err) }));
    }, ms);
    this.#timer.unref();
  }

  stop(): void {
    this.#stopped = true;
    if (this.#timer !== null) clearTimeout(this.#timer);
    this.#timer = null;
  }
}
