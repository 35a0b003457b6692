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
import { profileClaimed, type ProfileJob, type ProfileRequest } from './claim.ts';

/** Rows below which a day is profiled on one thread. */
export const PARALLEL_MIN_ROWS = 200_000;

// The worker has the same extension as this module: .ts under tsx, .js in the build.
const WORKER_URL = new URL(`./worker${extname(fileURLToPath(import.meta.url))}`, import.meta.url);

/**
 * A worker for `url`. A .ts worker (running from a checkout under tsx) registers the
 * TypeScript loader itself, since loader hooks are per thread. The loader is resolved from
 * this module, not from the working directory: an eval'd worker resolves bare names
 * against the current folder, which is not the checkout when Plumbline is started from
 * elsewhere. The compiled build (.js) needs no loader at all.
 */
function startWorker(url: URL): Worker {
  if (!url.pathname.endsWith('.ts')) return new Worker(url);
  const loader = import.meta.resolve('tsx/esm/api');
  return new Worker(`import(${JSON.stringify(loader)}).then((m) => { m.register(); return import(${JSON.stringify(url.href)}); })`, { eval: true });
}

/**
 * A profiler that uses up to `threads` threads (default: the machine's cores) for one
 * profile: a pool started for the call and closed after it. `workerUrl` is for tests only.
 */
export function threadedProfiler(threads: number = availableParallelism(), workerUrl: URL = WORKER_URL): NumericProfiler {
  return async (cols, g, indexes, config, bins) => {
    const pool = profilerPool(threads, workerUrl);
    try {
      return await pool.profiler()(cols, g, indexes, config, bins);
    } finally {
      await pool.close();
    }
  };
}

/** Worker threads kept for a while (one day's run): started once, reused by every profile they are given. */
export interface ProfilerPool {
  /** A profiler on this pool's threads; days of fewer than `minRows` rows stay on this thread. */
  profiler(minRows?: number): NumericProfiler;
  /** Stops the workers (a later profile starts new ones). */
  close(): Promise<void>;
}

/**
 * A pool of up to `threads` threads (default: the machine's cores), this one included. Starting
 * a worker costs more than profiling a small row set, so a run that profiles several (a day and
 * its slices, src/profile/slices.ts) starts its workers once. Threads take features one at a
 * time from a shared counter (this thread too). Each request settles exactly once: with the worker's answer,
 * or with an error when the worker reports one, throws, or exits without answering (killed,
 * out of memory), so a dead worker fails the run instead of leaving it waiting; a worker that
 * failed or exited is dropped and the next request starts another.
 */
export function profilerPool(threads: number = availableParallelism(), workerUrl: URL = WORKER_URL): ProfilerPool {
  const workers: (Worker | undefined)[] = [];

  function request(i: number, req: ProfileRequest): { done: Promise<[number, NumericProfile][]>; stop(): void } {
    const worker = (workers[i] ??= startWorker(workerUrl));
    const drop = (): void => {
      if (workers[i] === worker) workers[i] = undefined;
      void worker.terminate();
    };
    const done = new Promise<[number, NumericProfile][]>((resolve, reject) => {
      let settled = false;
      const settle = (ok: boolean, fn: () => void): void => {
        if (settled) return;
        settled = true;
        worker.off('message', onMessage).off('messageerror', onMessageError).off('error', onError).off('exit', onExit);
        if (!ok) drop();
        fn();
      };
      const onMessage = (msg: { ok: true; profiles: [number, NumericProfile][] } | { ok: false; error: string }): void =>
        settle(msg.ok, () => (msg.ok ? resolve(msg.profiles) : reject(new Error(`profile worker failed: ${msg.error}`))));
      const onMessageError = (err: Error): void => settle(false, () => reject(new Error(`profile worker sent an unreadable answer: ${err.message}`, { cause: err })));
      const onError = (err: Error): void => settle(false, () => reject(new Error(`profile worker failed: ${err.message}`, { cause: err })));
      const onExit = (code: number): void => settle(false, () => reject(new Error(`profile worker stopped (exit code ${code}) before it sent the profiles`)));
      worker.on('message', onMessage).on('messageerror', onMessageError).on('error', onError).on('exit', onExit);
      worker.postMessage(req);
    });
    return { done, stop: drop };
  }

  return {
    profiler(minRows: number = PARALLEL_MIN_ROWS): NumericProfiler {
      return async (cols, g, indexes, config, bins) => {
        if (threads <= 1 || cols.rows < minRows || indexes.length < 2) return profileOnThisThread(cols, g, indexes, config, bins);
        // Every thread takes the next feature from one shared counter until none is left, so
        // a thread that drew quick features (or this one, busy between features with the
        // day's other work) never leaves the rest waiting on a fixed share.
        const next = new Int32Array(new SharedArrayBuffer(4));
        const jobs: ProfileJob[] = indexes.map((fi) => {
          const feature = config.features[fi]!;
          return { values: cols.numeric[fi]!, missing: cols.missing[fi] ?? null, feature, bins: bins?.[feature.name] };
        });
        // The jobs hold the (shared) columns now: the day's columns let go of them.
        indexes.forEach((fi) => releaseColumn(cols, fi));
        const req: ProfileRequest = { lists: cols.lists, grouping: g, parentRows: cols.parentRows ?? null, valueCap: cols.valueCap, jobs, next };
        const remote = Array.from({ length: Math.min(threads, indexes.length) - 1 }, (_, s) => request(s, req));
        // Observed at once: a worker that fails while this thread profiles must not become an
        // unhandled rejection (which would end the process instead of the run).
        const all = Promise.all(remote.map((r) => r.done));
        all.catch(() => remote.forEach((r) => r.stop()));
        const results: (NumericProfile | undefined)[] = new Array(jobs.length);
        try {
          for (const [k, profile] of profileClaimed(req)) results[k] = profile;
        } catch (err) {
          remote.forEach((r) => r.stop());
          throw err;
        }
        for (const answer of await all) for (const [k, profile] of answer) results[k] = profile;
        return results.map((p, k) => {
          if (p === undefined) throw new Error(`profile of feature ${config.features[indexes[k]!]!.name} is missing: no thread took it`);
          return p;
        });
      };
    },
    async close(): Promise<void> {
      const running = workers.splice(0).filter((w): w is Worker => w !== undefined);
      await Promise.all(running.map((w) => w.terminate()));
    },
  };
}
