/**
 * The PSI finding every PSI check shares (feature values, list sizes, positives over
 * positions): status by effect size, but ok while PSI stays within its no-drift noise floor,
 * with the bins that moved most as evidence.
 */
import type { AboveThreshold } from '../config/index.ts';
import type { BinEvidence, Finding, Status } from '../report/index.ts';
import { psiNoiseFloor, type PsiResult } from '../stats/index.ts';
import { applied, statusAbove } from './status.ts';

type FindingDraft = Omit<Finding, 'alert'>;

/**
 * How many bins a finding keeps as evidence, those that moved most first: every bin of a
 * numeric feature (at most about 2 x baseline.bins), the top ones of a large categorical.
 */
const TOP_BINS = 24;

function topBins(result: PsiResult, labels: readonly string[]): BinEvidence[] {
  return result.contributions
    .map((contribution, i) => ({ bin: labels[i] ?? `bin ${i}`, baselineShare: result.baselineShares[i]!, currentShare: result.currentShares[i]!, contribution }))
    .filter((b) => b.baselineShare > 0 || b.currentShare > 0)
    .sort((a, b) => Math.abs(b.contribution) - Math.abs(a.contribution))
    .slice(0, TOP_BINS);
}

/**
 * A PSI finding: status by effect size (thresholds), but ok while PSI stays within its
 * no-drift noise floor, (1/n + 1/m) x the chi-square(B - 1) quantile over the B bins in use.
 */
export function psiFinding(p: {
  feature: string | null;
  check: 'psi' | 'list_size_psi' | 'positive_position_psi';
  result: PsiResult;
  labels: readonly string[];
  t: AboveThreshold;
  n: number;
  m: number;
  quantile: number;
  /** The summary, given the status and the noise floor. */
  summary: (status: Status, floor: number) => string;
  evidence?: Record<string, unknown>;
}): FindingDraft {
  const { result, t, n, m } = p;
  const binsUsed = result.baselineShares.filter((b, i) => b > 0 || result.currentShares[i]! > 0).length;
  const noiseFloor = binsUsed > 1 && n > 0 && m > 0 ? psiNoiseFloor(n, m, binsUsed, p.quantile) : 0;
  const status: Status = result.psi <= noiseFloor ? 'ok' : statusAbove(result.psi, t);
  return {
    feature: p.feature,
    check: p.check,
    rule: null,
    value: result.psi,
    score: result.psi,
    status,
    thresholds: applied(t),
    summary: p.summary(status, noiseFloor),
    evidence: { ...p.evidence, n, m, noiseFloor, bins: topBins(result, p.labels), binsUsed },
  };
}
