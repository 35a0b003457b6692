/**
 * The optional Alertmanager push (alerting.alertmanagerUrl) of the replica that ran a day:
 * the alerting findings of the latest report, resent after every run (their endsAt lies past
 * the next expected run) and resolved once they stop alerting. A failed push is logged
 * (without credentials) and retried with the next report; it never fails a run.
 */
import { maskUrl } from '../config/index.ts';
import { pushAlerts, type AlertLabels } from '../exporter/index.ts';
import type { Logger } from '../log.ts';
import type { Report } from '../report/index.ts';

export class AlertPusher {
  #pushed: AlertLabels[] | null = null;

  constructor(
    private readonly target: string | undefined,
    private readonly log: Logger,
    private readonly options: { bearerToken?: string; now: () => Date },
  ) {}

  async push(report: Report | null): Promise<void> {
    if (this.target === undefined || report === null) return;
    const result = await pushAlerts(this.target, report, {
      previous: this.#pushed,
      now: this.options.now,
      ...(this.options.bearerToken !== undefined ? { bearerToken: this.options.bearerToken } : {}),
    });
    this.#pushed = result.active;
    if (!result.ok) this.log.warn('alertmanager push failed', { target: maskUrl(this.target), error: result.error ?? 'unknown', status: result.status ?? null });
    else this.log.info('alerts pushed to alertmanager', { firing: result.firing, resolved: result.resolved });
  }
}
