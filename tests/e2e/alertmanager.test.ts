/**
 * pushAlerts against a real Alertmanager (Debian's prometheus-alertmanager, 0.25): started on
 * a free loopback port with a temporary config and storage path, clustering off. The pushed
 * alerts are read back through its API v2, then resolved by the next push.
 *
 * A missing binary fails the test in CI (CI=true installs it) and skips it elsewhere.
 */
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { pushAlerts, type AlertLabels } from '../../src/exporter/index.ts';
import { findAlertmanager, startAlertmanager, type ChildServer } from '../support/prometheus.ts';
import { until } from '../support/tools.ts';
import { sampleReport } from '../unit/exporter/fixtures.ts';

const ALERTMANAGER = findAlertmanager();
const IN_CI = process.env.CI === 'true';

interface GettableAlert {
  labels: Record<string, string>;
  annotations: Record<string, string>;
  startsAt: string;
  endsAt: string;
  status: { state: string };
}

if (ALERTMANAGER === undefined && !IN_CI) {
  describe.skip('a real Alertmanager (skipped: prometheus-alertmanager is not installed; apt-get install prometheus-alertmanager)', () => {
    it('needs the binary', () => undefined);
  });
} else {
  describe('pushAlerts to a real Alertmanager', () => {
    let am: ChildServer | undefined;
    let amUrl = '';

    beforeAll(async () => {
      if (ALERTMANAGER === undefined) throw new Error('prometheus-alertmanager is not installed; CI must install it (apt-get install prometheus-alertmanager)');
      am = await startAlertmanager(ALERTMANAGER);
      amUrl = am.url;
    });

    afterAll(async () => {
      await am?.stop();
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
