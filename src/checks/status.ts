/** Thresholds -> status. */
import type { AboveThreshold, BandThreshold } from '../config/index.ts';
import type { AppliedThresholds, Status } from '../report/index.ts';

export function statusAbove(score: number, t: AboveThreshold): Status {
  if (score >= t.critical) return 'critical';
  if (score >= t.warn) return 'warn';
  return 'ok';
}

export function statusBand(ratio: number, t: BandThreshold): Status {
  if (ratio < t.criticalBelow || ratio > t.criticalAbove) return 'critical';
  if (ratio < t.warnBelow || ratio > t.warnAbove) return 'warn';
  return 'ok';
}

export function applied(t: AboveThreshold): AppliedThresholds {
  return { type: 'above', warn: t.warn, critical: t.critical };
}

export function appliedBand(t: BandThreshold): AppliedThresholds {
  return { type: 'band', ...t };
}

/** Formats a number for summaries: short, and never "NaN" without saying so. */
export function fmt(x: number | null | undefined): string {
  if (x === null || x === undefined) return 'n/a';
  if (!Number.isFinite(x)) return String(x);
  if (x === 0) return '0';
  const a = Math.abs(x);
  if (a >= 1000) return Math.round(x).toLocaleString('en-US');
  if (a >= 0.01) return x.toFixed(3).replace(/\.?0+$/, '');
  return x.toExponential(2);
}

export function pct(x: number | null | undefined): string {
  if (x === null || x === undefined || !Number.isFinite(x)) return 'n/a';
  const p = x * 100;
  return `${Math.abs(p) >= 1 ? p.toFixed(1) : p.toPrecision(2)}%`;
}
