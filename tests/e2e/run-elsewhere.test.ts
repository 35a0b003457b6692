/**
 * Running from a checkout while standing in another folder, as a cron job or a shell in
 * $HOME does: `node /path/to/node_modules/.bin/tsx /path/to/src/cli.ts run ...` with the
 * working directory elsewhere. A day over the worker-thread threshold starts workers, and
 * each worker must find the TypeScript loader from the checkout, not from the working
 * directory (regression: "Cannot find package 'tsx' imported from /tmp/[worker eval]").
 */
import { spawnSync } from 'node:child_process';
import { writeFileSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { PARALLEL_MIN_ROWS } from '../../src/profile/index.ts';
import { useBigDay } from '../support/big-day.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { REPO_ROOT } from '../support/service.ts';

const url = testDatabaseUrl();

describe.skipIf(url === undefined)('a run from another folder (needs PLUMBLINE_TEST_DATABASE_URL)', () => {
  const big = useBigDay(url!, 'elsewhere');

  it('profiles a day over the worker threshold with worker threads', () => {
    const { day, dir } = big;
    // Workers start only with two threads or more; CI machines have them.
    expect(availableParallelism()).toBeGreaterThan(1);
    expect(day.bigRows).toBeGreaterThanOrEqual(PARALLEL_MIN_ROWS);
    const config = join(dir, 'plumbline.yaml');
    writeFileSync(config, JSON.stringify(day.config));
    const env = { PATH: process.env.PATH ?? '/usr/bin:/bin', HOME: dir, PLUMBLINE_SOURCE_URL: url!, PLUMBLINE_LOG_LEVEL: 'debug' };
    const tsx = join(REPO_ROOT, 'node_modules/.bin/tsx');
    const cli = join(REPO_ROOT, 'src/cli.ts');
    const r = spawnSync(process.execPath, [tsx, cli, 'run', '--config', config, '--date', day.bigDate, '--format', 'json'], { cwd: dir, env, encoding: 'utf8', timeout: 180_000 });
    expect(r.stderr).not.toContain('Cannot find package');
    expect(r.status, r.stderr).toBe(0);
    const report = JSON.parse(r.stdout) as { runDate: string; current: { rows: number }; findings: { feature: string | null }[] };
    expect(report.runDate).toBe(day.bigDate);
    expect(report.current.rows).toBe(day.bigRows);
    expect(new Set(report.findings.map((f) => f.feature))).toEqual(new Set([null, 'relevance_hint', 'freshness_days', 'seller_rating']));
  }, 240_000);
});
