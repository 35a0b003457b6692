/**
 * Plumbline installed the way README and deploy/ say: `npm pack` (which builds dist/ through
 * the prepack script), `npm install -g --prefix DIR` of the tarball, then the `plumbline`
 * command through npm's bin link, as an operator or the systemd unit runs it. The installed
 * package holds compiled JavaScript and its runtime dependencies only: no TypeScript loader,
 * no embedded database. It runs a day over the worker-thread threshold (the compiled worker
 * needs no loader), and `plumbline serve` stops on SIGTERM and releases its port.
 *
 * npm reaches the registry for the runtime dependencies (its local cache first).
 */
import { spawn, spawnSync, type SpawnSyncReturns } from 'node:child_process';
import { existsSync, lstatSync, mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { loadConfigFile } from '../../src/config/index.ts';
import { memoryEstimate } from '../../src/run/index.ts';
import { createBigDay, type BigDay } from '../support/big-day.ts';
import { testDatabaseUrl } from '../support/pg.ts';
import { REPO_ROOT } from '../support/service.ts';
import { cleanEnv, freePort, listenOnce, until } from '../support/tools.ts';

const url = testDatabaseUrl();
const pkg = JSON.parse(readFileSync(join(REPO_ROOT, 'package.json'), 'utf8')) as { version: string; dependencies: Record<string, string> };

function npm(args: string[], cwd: string): SpawnSyncReturns<string> {
  const r = spawnSync('npm', args, { cwd, env: cleanEnv(), encoding: 'utf8', timeout: 300_000 });
  if (r.status !== 0) throw new Error(`npm ${args.join(' ')} failed (${r.status}): ${r.stderr}`);
  return r;
}

describe('the packed and installed package', () => {
  let dir: string;
  let tarball: string;
  let shipped: string[];
  let prefix: string;
  let bin: string;
  let installed: string;

  beforeAll(() => {
    dir = mkdtempSync(join(tmpdir(), 'plumbline-pack-'));
    // The prepack script's output may precede the JSON (older npm writes it to stdout).
    const out = npm(['pack', '--json', '--pack-destination', dir], REPO_ROOT).stdout;
    const packed = JSON.parse(out.slice(out.search(/^\[/m))) as { filename: string; files: { path: string }[] }[];
    tarball = join(dir, packed[0]!.filename);
    shipped = packed[0]!.files.map((f) => f.path).sort();
    prefix = join(dir, 'prefix');
    npm(['install', '--global', '--prefix', prefix, '--no-audit', '--no-fund', '--prefer-offline', tarball], dir);
    bin = join(prefix, 'bin', 'plumbline');
    installed = join(prefix, 'lib', 'node_modules', 'plumbline');
  }, 600_000);

  afterAll(() => {
    if (dir !== undefined) rmSync(dir, { recursive: true, force: true });
  });

  it('ships the build, the migrations, deploy/, README and LICENSE, and no sources or tests', () => {
    const sqlFiles = readdirSync(join(REPO_ROOT, 'sql')).filter((f) => f.endsWith('.sql'));
    expect(shipped).toEqual(expect.arrayContaining(['LICENSE', 'README.md', 'package.json', 'dist/cli.js', 'dist/profile/worker.js', 'deploy/systemd/plumbline.service', 'deploy/plumbline.example.yaml', 'deploy/prometheus/plumbline.rules.yml', ...sqlFiles.map((f) => `sql/${f}`)]));
    expect(shipped.filter((p) => /^(src|tests|demo-data|node_modules)\//.test(p) || p.startsWith('dist/demo/') || p.endsWith('.map') || p.endsWith('.ts'))).toEqual([]);
  });

  it('installs the command as a link to dist/cli.js with the runtime dependencies only', () => {
    expect(lstatSync(bin).isSymbolicLink()).toBe(true);
    const deps = readdirSync(join(installed, 'node_modules'));
    for (const name of Object.keys(pkg.dependencies)) expect(existsSync(join(installed, 'node_modules', name)), name).toBe(true);
    expect(deps).not.toContain('tsx');
    expect(deps).not.toContain('@electric-sql');
    expect(deps).not.toContain('typescript');
  });

  const run = (args: string[], extra: Record<string, string> = {}) => spawnSync(bin, args, { cwd: dir, env: cleanEnv(extra), encoding: 'utf8', timeout: 180_000 });

  it('plumbline --version and --help answer through the bin link', () => {
    const v = run(['--version']);
    expect(v.status).toBe(0);
    expect(v.stdout).toBe(`${pkg.version}\n`);
    const h = run(['--help']);
    expect(h.status).toBe(0);
    expect(h.stdout).toContain('Usage:');
    expect(h.stdout).toContain('plumbline serve');
  });

  it('plumbline check-config accepts the shipped example', () => {
    const r = run(['check-config', join(installed, 'deploy/plumbline.example.yaml')]);
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0);
    expect(r.stdout).toContain('is valid');
    const mem = memoryEstimate(loadConfigFile(join(REPO_ROOT, 'deploy/plumbline.example.yaml')));
    expect(r.stdout).toContain(`# memory at the cap: about ${Math.ceil(mem.bytes / 2 ** 20)} MiB (stream engine, ${mem.rows} rows x ${mem.features} features; README "Sizing")\n`);
  });

  describe.skipIf(url === undefined)('against the test server (needs PLUMBLINE_TEST_DATABASE_URL)', () => {
    let day: BigDay;
    let config: string;
    beforeAll(async () => {
      day = await createBigDay(url!, 'pack');
      config = join(dir, 'plumbline.yaml');
      writeFileSync(config, JSON.stringify(day.config));
    });
    afterAll(async () => {
      await day?.drop();
    });

    it('plumbline migrate creates the store, then finds it up to date', () => {
      const first = run(['migrate', '--config', config], { PLUMBLINE_SOURCE_URL: url! });
      expect(first.stderr).toBe('');
      expect(first.status).toBe(0);
      expect(first.stdout).toMatch(/^applied: 001_init\.sql/);
      const again = run(['migrate', '--config', config], { PLUMBLINE_SOURCE_URL: url! });
      expect(again.stdout).toBe('store is up to date\n');
    });

    it('plumbline run evaluates a day over the worker-thread threshold with the compiled worker', () => {
      const r = run(['run', '--config', config, '--date', day.bigDate, '--format', 'json'], { PLUMBLINE_SOURCE_URL: url! });
      expect(r.status, r.stderr).toBe(0);
      const report = JSON.parse(r.stdout) as { runDate: string; current: { rows: number }; findings: unknown[] };
      expect(report.runDate).toBe(day.bigDate);
      expect(report.current.rows).toBe(day.bigRows);
      expect(report.findings.length).toBeGreaterThan(0);
    }, 180_000);

    it('plumbline run profiles slices with the compiled worker: a top-k slice and segment slices of whole lists over the thread threshold', () => {
      // slices.valuesPerDay 1000: each region (about 70,000 rows) sorts a sample, and takes its
      // within-list checks from the day's lists; top10 (about 42,000 rows) is profiled in full.
      const slicedConfig = join(dir, 'plumbline-slices.yaml');
      writeFileSync(slicedConfig, JSON.stringify({ ...day.config, slices: { topK: [10], segments: [{ column: 'region', maxValues: 5, minRows: 1000 }], valuesPerDay: 1000 } }));
      const r = run(['run', '--config', slicedConfig, '--date', day.bigDate, '--format', 'json'], { PLUMBLINE_SOURCE_URL: url! });
      expect(r.status, r.stderr).toBe(0);
      const report = JSON.parse(r.stdout) as { slices?: { slice: string; rows: number; lists: number }[]; findings: { slice?: string; feature: string | null; check: string; evidence: Record<string, unknown> }[] };
      const bigLists = day.bigRows / 50;
      expect(report.slices?.map((s) => s.slice).sort()).toEqual(['segment:region=coast', 'segment:region=hills', 'segment:region=plain', 'top10']);
      expect(report.slices?.find((s) => s.slice === 'top10')).toMatchObject({ rows: bigLists * 10, lists: bigLists });
      const regions = report.slices!.filter((s) => s.slice.startsWith('segment:'));
      expect(regions.reduce((n, s) => n + s.rows, 0)).toBe(day.bigRows);
      // Every slice is checked feature by feature, within-list checks included.
      for (const s of report.slices!) {
        const checks = new Set(report.findings.filter((f) => f.slice === s.slice && f.feature === 'relevance_hint').map((f) => f.check));
        expect([...checks], s.slice).toEqual(expect.arrayContaining(['psi', 'ks', 'flat_list_ratio']));
      }
    }, 180_000);

    it('plumbline serve stops on SIGTERM within seconds and releases its port', async () => {
      const port = await freePort();
      const serveConfig = join(dir, 'serve.yaml');
      writeFileSync(serveConfig, JSON.stringify({ ...day.config, http: { port } }));
      const child = spawn(bin, ['serve', '--config', serveConfig], { cwd: dir, env: cleanEnv({ PLUMBLINE_SOURCE_URL: url! }), stdio: ['ignore', 'ignore', 'pipe'] });
      let stderr = '';
      child.stderr!.setEncoding('utf8').on('data', (c: string) => (stderr += c));
      const exited = new Promise<{ code: number | null; signal: string | null }>((resolve) => child.once('exit', (code, signal) => resolve({ code, signal })));
      try {
        await until(`the service to answer on port ${port} (${stderr})`, 30_000, async () => ((await fetch(`http://127.0.0.1:${port}/healthz`)).ok ? true : undefined));
        const t0 = Date.now();
        child.kill('SIGTERM');
        const exit = await Promise.race([exited, new Promise<null>((resolve) => setTimeout(() => resolve(null), 15_000))]);
        expect(exit, `still running 15 s after SIGTERM: ${stderr}`).toEqual({ code: 0, signal: null });
        expect(Date.now() - t0).toBeLessThan(15_000);
        expect(stderr).toContain('"msg":"stopped"');
        // The port is free again: this process can listen on it.
        await listenOnce(port);
      } finally {
        if (child.exitCode === null && child.signalCode === null) child.kill('SIGKILL');
      }
    }, 60_000);
  });
});
