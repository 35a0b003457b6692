/**
 * Why a run was stopped from outside. The service aborts a run's signal with one of these:
 * `interrupted` on shutdown (recorded as outcome interrupted, not a failure, and run again
 * later), `deadline` when schedule.runTimeoutMinutes passed (recorded as a failure and retried).
 */
export class RunAbortError extends Error {
  override readonly name = 'RunAbortError';
  constructor(
    readonly kind: 'interrupted' | 'deadline',
    message: string,
  ) {
    super(message);
  }
}

/** True when `signal` was aborted for a shutdown. */
export function wasInterrupted(signal: AbortSignal | undefined): boolean {
  return signal?.aborted === true && signal.reason instanceof RunAbortError && signal.reason.kind === 'interrupted';
}
