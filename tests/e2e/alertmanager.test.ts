/**
 * pushAlerts against a real Alertmanager (Debian's prometheus-alertmanager, 0.25): started on
 * a free loopback port with a temporary config and storage path, clustering off. The pushed
 * alerts are read back through its API v2, then resolved by the next push.
 *
 * A missing binary fails the test in CI (CI=true installs it) and skips it elsewhere.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { accessSync, constants, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { createServer } from 'node:net';
import { tmpdir } from 'node:os';
import { delimiter, join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pushAlerts, type AlertLabels } from '../../src/exporter/index.ts';
import { sampleReport } from '../unit/exporter/fixtures.ts';

function findBinary(names: string[]): string | null {
  for (const name of names) {
    for (const dir of [...(process.env.PATH ?? '').split(delimiter), '/usr/bin', '/usr/local/bin']) {
      if (dir === '') continue;
      try {
        accessSync(join(dir, name), constants.X_OK);
        return join(dir, name);
      } catch {
        /* not here */
      }
    }
  }
  return null;
}

const ALERTMANAGER = findBinary(['prometheus-alertmanager', 'alertmanager']);
const IN_CI = process.env.CI === 'true';

const sleep = (ms: number) => new Promise((resolve) => setTimeout(resolve, ms));

async function until<T>(what: string, limitMs: number, probe: () => Promise<T | undefined>): Promise<T> {
  const deadline = Date.now() + limitMs;
  let last: unknown;
  while (Date.now() < deadline) {
    try {
      const v = await probe();
      if (v !== undefined) return v;
    } catch (err) {
      last = err;
    }
    await sleep(200);
  }
  throw new Error(`timed out waiting for ${what}${last ? `: ${String(last)}` : ''}`);
}

async function freePort(): Promise<number> {
  const s = createServer();
  await new Promise<void>((resolve) => s.listen(0, '127.0.0.1', resolve));
  const port = (s.address() as { port: number }).port;
  await new Promise<void>((resolve) => s.close(() => resolve()));
  return port;
}

interface GettableAlert {
  labels: Record<string, string>;
  annotations: Record<string, string>;
  startsAt: string;
  endsAt: string;
  status: { state: string };
}

if (ALERTMANAGER === null && !IN_CI) {
  describe.skip('a real Alertmanager (skipped: prometheus-alertmanager is not installed; apt-get install prometheus-alertmanager)', () => {
    it('needs the binary', () => undefined);
  });
} else {
  describe('pushAlerts to a real Alertmanager', () => {
    let am: ChildProcess | undefined;
    let amUrl = '';
    let dir = '';
    let amLog = '';

    beforeAll(async () => {
      if (ALERTMANAGER === null) throw new Error('prometheus-alertmanager is not installed; CI must install it (apt-get install prometheus-alertmanager)');
      dir = mkdtempSync(join(tmpdir(), 'plumbline-am-'));
      writeFileSync(join(dir, 'alertmanager.yml'), 'route:\n  receiver: nowhere\nreceivers:\n  - name: nowhere\n');
      const port = await freePort();
      amUrl = `http://127.0.0.1:${port}`;
      am = spawn(
        ALERTMANAGER,
        [`--config.file=${join(dir, 'alertmanager.yml')}`, `--storage.path=${join(dir, 'data')}`, `--web.listen-address=127.0.0.1:${port}`, '--cluster.listen-address=', '--log.level=warn'],
        { stdio: ['ignore', 'pipe', 'pipe'] },
      );
      am.stdout?.on('data', (c: Buffer) => (amLog += c.toString()));
      am.stderr?.on('data', (c: Buffer) => (amLog += c.toString()));
      await until(`Alertmanager to be ready (${amLog})`, 30_000, async () => ((await fetch(`${amUrl}/-/ready`)).ok ? true : undefined));
    });

    afterAll(async () => {
      if (am && am.exitCode === null) {
        const exited = new Promise((resolve) => am!.once('exit', resolve));
        am.kill('SIGTERM');
        await Promise.race([exited, sleep(10_000)]);
        if (am.exitCode === null) am.kill('SIGKILL');
      }
      if (dir) rmSync(dir, { recursive: true, force: true });
    });

    async function alerts(): Promise<GettableAlert[]> {
      const res = await fetch(`${amUrl}/api/v2/alerts`);
      if (!res.ok) throw new Error(`GET /api/v2/alerts: ${res.status}`);
      return (await res.json()) as GettableAlert[];
    }

    let firstActive: AlertLabels[] = [];

    it('accepts the pushed alerts and shows them active with their labels and annotations', async () => {
      const now = new Date();
      const result = await pushAlerts(amUrl, sampleReport(), { now: () => now, timeoutMs: 5000 });
      expect(result.error).toBeUndefined();
      expect(result).toMatchObject({ ok: true, firing: 5, resolved: 0 });
      firstActive = result.active;

      const got = await until('five active alerts', 20_000, async () => {
        const list = (await alerts()).filter((a) => a.status.state === 'active');
        return list.length === 5 ? list : undefined;
      });
      const byCheck = new Map(got.map((a) => [a.labels.check, a]));
      expect(byCheck.get('rule_violation_ratio')!.labels).toEqual({
        alertname: 'PlumblineWithinListRuleBroken',
        severity: 'page',
        feature: 'price_rel',
        check: 'rule_violation_ratio',
        rule: 'zscore',
      });
      expect(byCheck.get('duplicate_item_ratio')!.labels).toEqual({ alertname: 'PlumblineDatasetBroken', severity: 'page', check: 'duplicate_item_ratio' });
      expect(byCheck.get('flat_list_ratio')!.labels.severity).toBe('ticket');
      const psi = byCheck.get('psi')!;
      expect(psi.annotations.runbook_url).toBe('https://runbooks.example.org/plumbline/RUNBOOK.md#plumblinefeaturedrifted');
      expect(psi.annotations.summary).toBe('Ranking feature price_rel: psi alerting at critical');
      // endsAt as sent: now + 86400 s + 3600 s (defaults), so it resolves by itself if not resent.
      expect(Date.parse(psi.endsAt)).toBe(now.getTime() + 90_000_000);
    });

    it('resolves the alerts that stopped alerting with the next push', async () => {
      expect(firstActive).toHaveLength(5);
      const quietDay = sampleReport({ runDate: '2031-05-15', findings: [] });
      const result = await pushAlerts(amUrl, quietDay, { previous: firstActive, timeoutMs: 5000 });
      expect(result).toMatchObject({ ok: true, firing: 0, resolved: 5, active: [] });
      // The v2 API lists only unresolved alerts by default: all five must be gone.
      await until('the alerts to resolve', 20_000, async () => ((await alerts()).length === 0 ? true : undefined));
    });
  });
}
