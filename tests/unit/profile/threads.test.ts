/**
 * Worker threads of the profiler: a day over the threshold gives the same profile on
 * several threads as on one, and a worker that dies (exits without answering, throws)
 * fails the profile with a clear error instead of leaving the run waiting for ever.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { afterAll, describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { buildDayProfile, PARALLEL_MIN_ROWS, profileOnThisThread, profilerPool, threadedProfiler, type DayColumns } from '../../../src/profile/index.ts';

const config = parseConfig({ source: { table: 't' }, features: [{ name: 'a' }, { name: 'b' }, { name: 'c' }, { name: 'd' }] });
const LIST_SIZE = 50;

/** A day just over the threshold: four numeric features, lists of 50, values from the row number. */
function bigDay(): DayColumns {
  const lists = PARALLEL_MIN_ROWS / LIST_SIZE + 4;
  const rows = lists * LIST_SIZE;
  const column = (f: (r: number) => number) => {
    const v = new Float64Array(new SharedArrayBuffer(8 * rows));
    for (let r = 0; r < rows; r++) v[r] = f(r);
    return v;
  };
  return {
    date: '2026-03-08',
    rows,
    totalRows: rows,
    sampled: false,
    listOf: Int32Array.from({ length: rows }, (_, r) => Math.floor(r / LIST_SIZE)),
    lists,
    itemHash: Float64Array.from({ length: rows }, (_, r) => r),
    position: Int32Array.from({ length: rows }, (_, r) => (r % LIST_SIZE) + 1),
    label: null,
    numeric: [column((r) => (r * 7) % 101), column((r) => Math.sin(r)), column((r) => r % 13 === 0 ? Number.NaN : r / rows), column((r) => (r % LIST_SIZE) / LIST_SIZE)],
    missing: [null, null, null, null],
    categorical: [null, null, null, null],
  };
}

const dir = mkdtempSync(join(tmpdir(), 'plumbline-threads-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

/** A stand-in worker module that misbehaves as told. */
function brokenWorker(name: string, body: string): URL {
  const file = join(dir, `${name}.mjs`);
  writeFileSync(file, `import { parentPort } from 'node:worker_threads';\n${body}\n`);
  return pathToFileURL(file);
}

describe('threadedProfiler', () => {
  it('gives the same profile on two threads as on one', async () => {
    const one = await buildDayProfile(bigDay(), config, null, profileOnThisThread);
    const two = await buildDayProfile(bigDay(), config, null, threadedProfiler(2));
    expect(two).toEqual(one);
  }, 60_000);

  it('fails with the exit code when a worker exits without answering', async () => {
    const url = brokenWorker('exits', "parentPort.on('message', () => process.exit(3));");
    await expect(buildDayProfile(bigDay(), config, null, threadedProfiler(2, url))).rejects.toThrow('profile worker stopped (exit code 3) before it sent the profiles');
  }, 60_000);

  it('fails when a worker ends quietly before reading its share', async () => {
    const url = brokenWorker('quiet', 'process.exit(0);');
    await expect(buildDayProfile(bigDay(), config, null, threadedProfiler(3, url))).rejects.toThrow('profile worker stopped (exit code 0) before it sent the profiles');
  }, 60_000);

  it('fails with the error when a worker throws', async () => {
    const url = brokenWorker('throws', "parentPort.on('message', () => setTimeout(() => { throw new RangeError('out of columns'); }, 1));");
    await expect(buildDayProfile(bigDay(), config, null, threadedProfiler(2, url))).rejects.toThrow('profile worker failed: out of columns');
  }, 60_000);

  it('fails when a worker cannot load at all', async () => {
    const url = brokenWorker('syntax', 'this is not JavaScript');
    await expect(buildDayProfile(bigDay(), config, null, threadedProfiler(2, url))).rejects.toThrow(/^profile worker failed: /);
  }, 60_000);
});

describe('profilerPool (one day and its slices share the workers)', () => {
  it('gives the same profiles as this thread, request after request on one pool', async () => {
    const one = await buildDayProfile(bigDay(), config, null, profileOnThisThread);
    const pool = profilerPool(2);
    try {
      expect(await buildDayProfile(bigDay(), config, null, pool.profiler())).toEqual(one);
      expect(await buildDayProfile(bigDay(), config, null, pool.profiler(1000))).toEqual(one);
    } finally {
      await pool.close();
    }
  }, 60_000);

  it('counts each request once: a second request after a worker stopped starts a new worker, and both fail clearly', async () => {
    const url = brokenWorker('pool-exits', "parentPort.on('message', () => process.exit(4));");
    const pool = profilerPool(2, url);
    try {
      await expect(buildDayProfile(bigDay(), config, null, pool.profiler())).rejects.toThrow('profile worker stopped (exit code 4) before it sent the profiles');
      await expect(buildDayProfile(bigDay(), config, null, pool.profiler())).rejects.toThrow('profile worker stopped (exit code 4) before it sent the profiles');
    } finally {
      await pool.close();
    }
  }, 60_000);

  it('fails with the error when a pooled worker throws', async () => {
    const url = brokenWorker('pool-throws', "parentPort.on('message', () => setTimeout(() => { throw new RangeError('out of slices'); }, 1));");
    const pool = profilerPool(2, url);
    try {
      await expect(buildDayProfile(bigDay(), config, null, pool.profiler())).rejects.toThrow('profile worker failed: out of slices');
    } finally {
      await pool.close();
    }
  }, 60_000);
});
