import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { ConfigError, SourceError, StoreError } from '../../../src/errors.ts';
import { isTransient, retryDelayMs } from '../../../src/scheduler/index.ts';

const config = parseConfig({ source: { table: 't' }, features: [{ name: 'f' }], schedule: { retryBaseSeconds: 10 } });

/** A server-reported error as pg raises it: a message and a SQLSTATE code. */
function serverError(code: string): Error {
  return Object.assign(new Error('server said no'), { code });
}

describe('retry classification', () => {
  it('treats lost connections as transient, wrapped or not', () => {
    expect(isTransient(serverError('57P01'))).toBe(true); // admin shutdown (pg_terminate_backend)
    expect(isTransient(new SourceError('reading failed', { cause: serverError('08006') }))).toBe(true);
    expect(isTransient(Object.assign(new Error('connect'), { code: 'ECONNREFUSED' }))).toBe(true);
    // pg's "Connection terminated unexpectedly" carries no code at all.
    expect(isTransient(new StoreError('saving failed', { cause: new Error('Connection terminated unexpectedly') }))).toBe(true);
  });

  it('does not treat problems the server reported, or config errors, as transient', () => {
    expect(isTransient(new SourceError('reading failed', { cause: serverError('42P01') }))).toBe(false); // undefined table
    expect(isTransient(new ConfigError('bad config'))).toBe(false);
    expect(isTransient(new Error('a bug'))).toBe(false);
    expect(isTransient(new SourceError('no cause'))).toBe(false);
  });

  it('backs off from the base (x20 for lasting problems), doubling, capped at an hour', () => {
    const lost = new SourceError('x', { cause: serverError('57P01') });
    expect([1, 2, 3].map((streak) => retryDelayMs(config, lost, streak))).toEqual([10_000, 20_000, 40_000]);
    expect(retryDelayMs(config, new ConfigError('x'), 1)).toBe(200_000);
    expect(retryDelayMs(config, lost, 30)).toBe(3_600_000);
  });
});
