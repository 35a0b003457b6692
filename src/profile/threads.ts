/**
 * Profiling a big day on more than one core. Sorting every numeric column dominates a
 * run (DESIGN.md: sorting 50 features costs more than moving them), and the features are
 * independent, so they are split between this thread and worker threads. Small days stay
 * on this thread: starting a worker costs more than it saves there.
 */
import { availableParallelism } from 'node:os';
import { extname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { NumericProfile } from './types.ts';
import { profileOnThisThread, releaseColumn, type NumericProfiler } from './day.ts';
import type { ProfileRequest } from './worker.ts';

/** Rows below which a day is profiled on one thread. */
export const PARALLEL_MIN_ROWS = 200_000;

// The worker has the same extension as this module: .ts under tsx, .js in the build.
const WORKER_URL = new URL(`./worker${extname(fileURLToPath(import.meta.url))}`, import.meta.url);

function startWorker(): Worker {
  // Under tsx the worker must register the TypeScript loader itself (hooks are per thread).
  return WORKER_URL.pathname.endsWith('.ts')
    ? new Worker(`import('tsx/esm/api').then((m) => { m.register(); return import(${JSON.stringify(WORKER_URL.href)}); })`, { eval: true })
    : new Worker(WORKER_URL);
}

/** Worker threads kept for a while (one run): started once, reused by every profile they are given. */
export interface ProfilerPool {
  /** A profiler on this pool's threads; days of fewer than `minRows` rows stay on this thread. */
  profiler(minRows?: number): NumericProfiler;
  /** Stops the workers (a later profile starts new ones). */
  close(): Promise<void>;
}

/**
 * A pool of up to `threads` threads (default: the machine's cores), this one included. Starting
 * a worker costs more than profiling a small day, so a run that profiles several row sets (the
 * day and its slices, src/profile/slices.ts) starts its workers once.
 */
export function profilerPool(threads: number = availableParallelism()): ProfilerPool {
  const workers: (Worker | undefined)[] = [];

  function request(i: number, req: ProfileRequest): Promise<NumericProfile[]> {
    const worker = (workers[i] ??= startWorker());
    return new Promise((resolve, reject) => {
      const onMessage = (msg: { ok: true; profiles: NumericProfile[] } | { ok: false; error: string }): void => {
        worker.off('error', onError);
        if (msg.ok) resolve(msg.profiles);
        else reject(new Error(`profile worker failed: ${msg.error}`));
      };
      const onError = (err: Error): void => {
        worker.off('message', onMessage);
        // A worker that failed is gone: the next request starts another.
        if (workers[i] === worker) workers[i] = undefined;
        void worker.terminate();
        reject(err);
      };
      worker.once('message', onMessage);
      worker.once('error', onError);
      worker.postMessage(req);
    });
  }

  return {
    profiler(minRows: number = PARALLEL_MIN_ROWS): NumericProfiler {
      return async (cols, g, indexes, config, bins) => {
        if (threads <= 1 || cols.rows < minRows || indexes.length < 2) return profileOnThisThread(cols, g, indexes, config, bins);
        const shares: number[][] = Array.from({ length: Math.min(threads, indexes.length) }, () => []);
        indexes.forEach((fi, i) => shares[i % shares.length]!.push(fi));
        const remote = shares.slice(1).map((share, s) =>
          request(s, {
            lists: cols.lists,
            grouping: g,
            jobs: share.map((fi) => {
              const feature = config.features[fi]!;
              const job = { values: cols.numeric[fi]!, missing: cols.missing[fi] ?? null, feature, bins: bins?.[feature.name] };
              // The worker holds the shared column now; this thread lets go of it.
              releaseColumn(cols, fi);
              return job;
            }),
          }),
        );
        const local = await profileOnThisThread(cols, g, shares[0]!, config, bins);
        const results = new Map<number, NumericProfile>();
        shares[0]!.forEach((fi, i) => results.set(fi, local[i]!));
        const done = await Promise.all(remote);
        shares.slice(1).forEach((share, s) => share.forEach((fi, i) => results.set(fi, done[s]![i]!)));
        return indexes.map((fi) => results.get(fi)!);
      };
    },
    async close(): Promise<void> {
      const running = workers.splice(0).filter((w): w is Worker => w !== undefined);
      await Promise.all(running.map((w) => w.terminate()));
    },
  };
}

/**
 * A profiler that uses up to `threads` threads (default: the machine's cores). Features
 * are dealt round-robin, the first share on this thread; workers last one profile.
 */
export function threadedProfiler(threads: number = availableParallelism()): NumericProfiler {
  return async (cols, g, indexes, config, bins) => {
    const pool = profilerPool(threads);
    try {
      return await pool.profiler()(cols, g, indexes, config, bins);
    } finally {
      await pool.close();
    }
  };
}
