/**
 * How the service learns it must stop (SIGTERM or SIGINT, once) and small bounded waits for
 * the stop sequence, so that no step of a shutdown can hang the process past its grace.
 */

export function signalPromise(): Promise<string> {
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

/** Resolves after `ms`, or at once when `signal` aborts. */
export function sleep(ms: number, signal?: AbortSignal): Promise<void> {
  return new Promise((resolve) => {
    const t = setTimeout(resolve, ms);
    signal?.addEventListener(
      'abort',
      () => {
        clearTimeout(t);
        resolve();
      },
      { once: true },
    );
  });
}

/** Waits for `work` at most `ms`; true when it settled in time. Its timer never outlives it. */
export async function within(work: Promise<unknown>, ms: number): Promise<boolean> {
  let t: NodeJS.Timeout | undefined;
  const timeout = new Promise<false>((resolve) => {
    t = setTimeout(() => resolve(false), ms);
  });
  try {
    return await Promise.race([work.then(() => true, () => true), timeout]);
  } finally {
    clearTimeout(t);
  }
}
