/** The one pending retry: a sooner request replaces a later one; stop() cancels for good. */
import { afterEach, beforeEach, describe, expect, it, vi } from 'vitest';
import { silentLogger } from '../../../src/log.ts';
import { RetryTimer } from '../../../src/scheduler/index.ts';

describe('RetryTimer', () => {
  beforeEach(() => vi.useFakeTimers());
  afterEach(() => vi.useRealTimers());

  it('keeps the sooner of two requests and fires once', async () => {
    const fired: number[] = [];
    const t = new RetryTimer(silentLogger, async () => void fired.push(Date.now()));
    const start = Date.now();
    t.schedule(5000, 'later');
    t.schedule(1000, 'sooner');
    t.schedule(3000, 'in between: ignored, one is due sooner');
    expect(t.pending).toBe(true);
    await vi.advanceTimersByTimeAsync(10_000);
    expect(fired.map((at) => at - start)).toEqual([1000]);
    expect(t.pending).toBe(false);
  });

  it('can be scheduled again after firing, and not at all after stop()', async () => {
    let n = 0;
    const t = new RetryTimer(silentLogger, async () => void n++);
    t.schedule(100, 'first');
    await vi.advanceTimersByTimeAsync(200);
    t.schedule(100, 'second');
    await vi.advanceTimersByTimeAsync(200);
    expect(n).toBe(2);
    t.schedule(100, 'third');
    t.stop();
    t.schedule(100, 'after stop');
    await vi.advanceTimersByTimeAsync(1000);
    expect(n).toBe(2);
    expect(t.pending).toBe(false);
  });

  it('logs a crashed attempt instead of leaving its promise unhandled', async () => {
    const errors: string[] = [];
    const log = { ...silentLogger, error: (msg: string) => void errors.push(msg) };
    const t = new RetryTimer(log, async () => {
      throw new Error('boom');
    });
    t.schedule(10, 'crash');
    await vi.advanceTimersByTimeAsync(20);
    expect(errors).toEqual(['retry crashed']);
  });
});
