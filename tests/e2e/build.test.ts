/**
 * The production build: `tsc -p tsconfig.build.json` compiles src/ (without the demo) to
 * JavaScript that runs on plain Node, worker thread included.
 */
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { REPO_ROOT } from '../support/service.ts';

// Inside the repository, so that the compiled version.js finds ../package.json as dist/ does.
const out = join(REPO_ROOT, `.build-test-${process.pid}`);

describe('the production build', () => {
  afterAll(() => rmSync(out, { recursive: true, force: true }));

  it('compiles without errors and runs check-config on the example', () => {
    execFileSync(process.execPath, [join(REPO_ROOT, 'node_modules/typescript/bin/tsc'), '-p', 'tsconfig.build.json', '--outDir', out], { cwd: REPO_ROOT, stdio: 'pipe' });
    expect(existsSync(join(out, 'profile/worker.js'))).toBe(true);
    expect(existsSync(join(out, 'demo'))).toBe(false);
    const r = spawnSync(process.execPath, [join(out, 'cli.js'), 'check-config', join(REPO_ROOT, 'deploy/plumbline.example.yaml')], { encoding: 'utf8' });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('is valid');
    const demo = spawnSync(process.execPath, [join(out, 'cli.js'), 'demo'], { encoding: 'utf8' });
    expect(demo.status).toBe(2);
    expect(demo.stderr).toContain('the demo runs from a source checkout');
  }, 120_000);
});
