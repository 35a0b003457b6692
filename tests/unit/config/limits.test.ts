/**
 * Every duration and count in the config has a range, so that a value that would break at
 * run time fails at load time with its path: a timer longer than Node's limit
 * (2^31 - 1 ms; longer delays fire after 1 ms, over and over), a statement_timeout above
 * PostgreSQL's (an int of milliseconds), a retry of 1e-300 seconds. Also: YAML that expands
 * to billions of nodes is a config error, not a crash.
 */
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { LIMITS, loadConfigFile, parseConfig } from '../../../src/config/index.ts';
import { ConfigError } from '../../../src/errors.ts';

const base = { source: { table: 'ranked_items' }, features: [{ name: 'price' }] };

/** The config with `patch` merged one level into each top-level section. */
function withPatch(patch: Record<string, Record<string, unknown>>): unknown {
  const out: Record<string, unknown> = { ...base };
  for (const [section, values] of Object.entries(patch)) out[section] = { ...((base as Record<string, unknown>)[section] as object | undefined), ...values };
  return out;
}

function problemsOf(raw: unknown): string[] {
  try {
    parseConfig(raw, 'test config');
  } catch (err) {
    expect(err).toBeInstanceOf(ConfigError);
    return [...(err as ConfigError).problems];
  }
  throw new Error('expected the config to be rejected');
}

describe('ranges of durations and counts', () => {
  it('the limits follow from Node and PostgreSQL', () => {
    // Node: "When delay is larger than 2147483647 or less than 1, the delay will be set to 1"
    // (Node.js 20 documentation, setTimeout). PostgreSQL: statement_timeout is an integer
    // setting in milliseconds, maximum INT_MAX = 2147483647 (pg_settings.max_val).
    expect(LIMITS.statementTimeoutSeconds * 1000).toBeLessThanOrEqual(2_147_483_647);
    expect(LIMITS.timerSeconds * 1000).toBeLessThanOrEqual(2_147_483_647);
  });

  it.each([
    ['source', 'statementTimeoutSeconds', 2_147_484, "source.statementTimeoutSeconds: must be at most 2147483 seconds (PostgreSQL's statement_timeout limit, 2147483647 ms) (got 2147484)"],
    ['source', 'statementTimeoutSeconds', 0, 'source.statementTimeoutSeconds: Too small: expected number to be >0 (got 0)'],
    ['source', 'maxRowsPerDay', 100_000_001, 'source.maxRowsPerDay: must be at most 100000000 rows (the stream engine holds the day in memory) (got 100000001)'],
    ['schedule', 'retryBaseSeconds', 1e-300, 'schedule.retryBaseSeconds: must be at least 1 second (got 1e-300)'],
    ['schedule', 'retryBaseSeconds', 3601, 'schedule.retryBaseSeconds: must be at most 3600 seconds (an hour) (got 3601)'],
    ['baseline', 'minDays', 367, 'baseline.minDays: must be at most 366 (runs are daily: a year) (got 367)'],
  ])('%s.%s = %s is refused', (section, key, value, expected) => {
    expect(problemsOf(withPatch({ [section]: { [key]: value } }))).toEqual([expected]);
  });

  it('readiness timers stay within a day and deadlines within a week', () => {
    // 25 days: above Node's timer limit, where the retry would fire every millisecond.
    expect(problemsOf(withPatch({ schedule: { readiness: { retryEverySeconds: 25 * 86_400, deadlineMinutes: 20_000 } } }))).toEqual([
      'schedule.readiness.retryEverySeconds: must be at most 86400 seconds (a day) (got 2160000)',
      'schedule.readiness.deadlineMinutes: must be at most 10080 minutes (a week) (got 20000)',
    ]);
  });

  it('consecutive runs are at most a year of daily runs', () => {
    expect(problemsOf(withPatch({ alerting: { consecutiveRuns: { drift: 1000, quality: 0 } } }))).toEqual([
      'alerting.consecutiveRuns.drift: must be at most 366 (runs are daily: a year) (got 1000)',
      'alerting.consecutiveRuns.quality: Too small: expected number to be >0 (got 0)',
    ]);
  });

  it('accepts the largest values of each range', () => {
    const c = parseConfig(
      withPatch({
        source: { statementTimeoutSeconds: LIMITS.statementTimeoutSeconds, maxRowsPerDay: LIMITS.maxRowsPerDay },
        schedule: { retryBaseSeconds: 3600, readiness: { retryEverySeconds: 86_400, deadlineMinutes: 10_080 } },
        baseline: { minDays: 366 },
      }),
    );
    expect(c.source.statementTimeoutSeconds).toBe(2_147_483);
    expect(c.schedule.readiness.retryEverySeconds).toBe(86_400);
  });
});

describe('a YAML alias bomb', () => {
  const dir = mkdtempSync(join(tmpdir(), 'plumbline-limits-'));
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('is a ConfigError naming the file, from the yaml library own alias limit', () => {
    const lines = ['a: &a [x, x, x, x, x, x, x, x, x, x]'];
    for (const [prev, name] of [['a', 'b'], ['b', 'c'], ['c', 'd'], ['d', 'e'], ['e', 'f']]) lines.push(`${name}: &${name} [${Array(10).fill(`*${prev}`).join(', ')}]`);
    const file = join(dir, 'bomb.yaml');
    writeFileSync(file, `${lines.join('\n')}\nsource: { table: t }\nfeatures: [{ name: x }]\n`);
    let caught: unknown;
    try {
      loadConfigFile(file);
    } catch (err) {
      caught = err;
    }
    expect(caught).toBeInstanceOf(ConfigError);
    expect((caught as ConfigError).message).toBe(`${file} is not valid YAML`);
    expect((caught as ConfigError).problems).toEqual(['Excessive alias count indicates a resource exhaustion attack']);
  });
});
