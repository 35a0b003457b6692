/**
 * One run under its deadline. The work gets an AbortSignal; after schedule.runTimeoutMinutes
 * it is aborted (which cancels its statement in flight). A run that still has not stopped
 * ABANDON_AFTER_MS after its abort (a half-open connection that never answers, not even to a
 * cancel) is given up on: recorded here, so later runs are not blocked behind it.
 */
import type { Config } from '../config/index.ts';
import { errorFields, type Logger } from '../log.ts';
import { configFingerprint, RunAbortError, wasInterrupted, type RunStore } from '../run/index.ts';
import { within } from './shutdown.ts';

/** How long an aborted run may take to notice before it is given up on. */
export const ABANDON_AFTER_MS = 10_000;

export type GuardedResult<T> = { ok: true; value: T; signal: AbortSignal } | { ok: false; error: unknown; signal: AbortSignal };

export interface GuardOptions {
  config: Config;
  log: Logger;
  now: () => Date;
  store: Pick<RunStore, 'recordFailure'>;
  /** The date the run evaluates (for messages and the record of an abandoned run). */
  date: string;
}

/**
 * Runs `work` with `ctl`'s signal under the run deadline. Never throws. The caller may abort
 * `ctl` itself (a shutdown) with a RunAbortError of kind `interrupted`.
 */
export async function runGuarded<T>(ctl: AbortController, work: (signal: AbortSignal) => Promise<T>, opts: GuardOptions): Promise<GuardedResult<T>> {
  const { config, log, now, date } = opts;
  const startedAt = now();
  const minutes = config.schedule.runTimeoutMinutes;
  const deadline = setTimeout(() => {
    log.error('run deadline exceeded; aborting it', { date, runTimeoutMinutes: minutes });
    ctl.abort(new RunAbortError('deadline', `the run of ${date} exceeded schedule.runTimeoutMinutes (${minutes} min)`));
  }, minutes * 60_000);
  deadline.unref();
  let abandon: NodeJS.Timeout | undefined;
  const abandoned = new Promise<'abandoned'>((resolve) => {
    ctl.signal.addEventListener(
      'abort',
      () => {
        abandon = setTimeout(() => resolve('abandoned'), ABANDON_AFTER_MS);
        abandon.unref();
      },
      { once: true },
    );
  });
  const settled = work(ctl.signal).then(
    (value): GuardedResult<T> => ({ ok: true, value, signal: ctl.signal }),
    (error: unknown): GuardedResult<T> => ({ ok: false, error, signal: ctl.signal }),
  );
  try {
    const r = await Promise.race([settled, abandoned]);
    if (r !== 'abandoned') return r;
    const error = ctl.signal.reason as Error;
    log.error('the aborted run did not stop; giving up on it', { date, ...errorFields(error) });
    const outcome = wasInterrupted(ctl.signal) ? 'interrupted' : 'failure';
    // Bounded: the store may sit behind the same dead path.
    const recorded = opts.store
      .recordFailure({ runDate: date, startedAt: startedAt.toISOString(), finishedAt: now().toISOString(), error: error.message, configFingerprint: configFingerprint(config), outcome })
      .catch((err: unknown) => log.error('could not record the abandoned run', errorFields(err)));
    if (!(await within(recorded, 5000))) log.error('could not record the abandoned run', { error: 'the store did not answer within 5 s' });
    return { ok: false, error, signal: ctl.signal };
  } finally {
    clearTimeout(deadline);
    if (abandon !== undefined) clearTimeout(abandon);
  }
}
