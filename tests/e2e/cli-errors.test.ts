/**
 * How the CLI fails, as a user sees it: a hostile YAML file (an alias bomb) is a config
 * error with a message (exit 2), not a crash; an unexpected error prints one line and no
 * stack trace, unless PLUMBLINE_LOG_LEVEL=debug asks for it.
 */
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import pg from 'pg';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { testDatabaseUrl, uniqueSchema } from '../support/pg.ts';
import { REPO_ROOT } from '../support/service.ts';

const dir = mkdtempSync(join(tmpdir(), 'plumbline-cli-errors-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function cli(args: string[], env: Record<string, string> = {}) {
  const base = Object.fromEntries(Object.entries(process.env).filter(([k]) => !k.startsWith('PLUMBLINE_'))) as Record<string, string>;
  return spawnSync(process.execPath, ['--import', 'tsx', 'src/cli.ts', ...args], { cwd: REPO_ROOT, env: { ...base, ...env }, encoding: 'utf8', timeout: 60_000 });
}

/** A stack frame as V8 prints it. */
const STACK_FRAME = /^\s+at .+/m;

describe('a YAML alias bomb', () => {
  it('is refused with exit code 2 and a message, without a stack trace', () => {
    // Nine levels of nine aliases each: 9^9 (387 million) strings once expanded.
    const lines = ['l0: &l0 ["ha", "ha", "ha", "ha", "ha", "ha", "ha", "ha", "ha"]'];
    for (let i = 1; i <= 9; i++) lines.push(`l${i}: &l${i} [${Array.from({ length: 9 }, () => `*l${i - 1}`).join(', ')}]`);
    lines.push('source: { table: ranked_items }', 'features: [{ name: price }]', 'bomb: *l9');
    const file = join(dir, 'bomb.yaml');
    writeFileSync(file, `${lines.join('\n')}\n`);
    const r = cli(['check-config', file]);
    expect(r.status).toBe(2);
    expect(r.stderr).toBe(`plumbline: ${file} is not valid YAML\n  - Excessive alias count indicates a resource exhaustion attack\n`);
    expect(r.stdout).toBe('');
  });
});

describe('PLUMBLINE_LOG_LEVEL', () => {
  it('must be a known level (a typo would otherwise log everything or nothing)', () => {
    const r = cli(['check-config', join(REPO_ROOT, 'deploy/plumbline.example.yaml')], { PLUMBLINE_LOG_LEVEL: 'verbose' });
    expect(r.status).toBe(2);
    expect(r.stderr).toBe('plumbline: PLUMBLINE_LOG_LEVEL must be one of debug, info, warn, error, got "verbose"\n');
  });
});

const url = testDatabaseUrl();

describe.skipIf(url === undefined)('an unexpected error (needs PLUMBLINE_TEST_DATABASE_URL)', () => {
  const schema = uniqueSchema('cli_errors');
  let config: string;
  beforeAll(async () => {
    config = join(dir, 'plumbline.yaml');
    writeFileSync(config, JSON.stringify({ source: { table: 'ranked_items' }, features: [{ name: 'price' }], store: { schema } }));
    expect(cli(['migrate', '--config', config], { PLUMBLINE_SOURCE_URL: url! }).status).toBe(0);
    // A stored report this version cannot render (as a newer version might write one):
    // printing it fails inside the table renderer, an error no unit expects.
    const c = new pg.Client({ connectionString: url });
    await c.connect();
    try {
      await c.query(
        `INSERT INTO ${schema}.runs (run_date, started_at, finished_at, outcome, status, config_fingerprint, duration_seconds, report)
         VALUES ('2026-03-01', now(), now(), 'success', 'ok', 'x', 1, '{"schemaVersion": 99, "runDate": "2026-03-01", "findings": null}')`,
      );
    } finally {
      await c.end();
    }
  });
  afterAll(async () => {
    const c = new pg.Client({ connectionString: url });
    await c.connect();
    await c.query(`DROP SCHEMA IF EXISTS ${schema} CASCADE`).finally(() => c.end());
  });

  it('prints one line without a stack trace and exits 1', () => {
    const r = cli(['report', '--config', config, '--date', '2026-03-01'], { PLUMBLINE_SOURCE_URL: url! });
    expect(r.status).toBe(1);
    expect(r.stderr).toMatch(/^plumbline: unexpected error: TypeError: .+\nplumbline: run again with PLUMBLINE_LOG_LEVEL=debug for the stack trace\n$/);
    expect(r.stderr).not.toMatch(STACK_FRAME);
  });

  it('prints the stack trace at PLUMBLINE_LOG_LEVEL=debug', () => {
    const r = cli(['report', '--config', config, '--date', '2026-03-01'], { PLUMBLINE_SOURCE_URL: url!, PLUMBLINE_LOG_LEVEL: 'debug' });
    expect(r.status).toBe(1);
    expect(r.stderr).toContain('plumbline: unexpected error: TypeError: ');
    expect(r.stderr).toMatch(STACK_FRAME);
  });
});
