/**
 * Ranking checks: the within-list association of each feature with the served order and
 * with the model score, and the outcome of the served order from labels (MRR, NDCG@k, the
 * click curve). Each compares the day with the baseline's per-day values, so the yardstick
 * is the day-to-day spread (weekly seasonality included) plus the day's own list sampling
 * noise (stats dailyMeanShift). Pure: profiles in, findings out.
 */
import type { AboveThreshold, Config, FeatureConfig } from '../config/index.ts';
import type { AssociationCounts, BaselineProfile, DayProfile, OutcomeCounts, RankCorrelationSums } from '../profile/index.ts';
import type { CheckName, Finding, Status } from '../report/index.ts';
import { POSITION_BUCKET_LABELS, dailyMeanShift, psi, type MeanShift } from '../stats/index.ts';
import { psiFinding } from './psi-finding.ts';
import { applied, fmt, pct, statusAbove } from './status.ts';

type FindingDraft = Omit<Finding, 'alert'>;

/** The outcome to evaluate: the day's own, or an older day's re-read when labels lag. */
export interface OutcomeInput {
  /** Snapshot date whose labels are evaluated. */
  date: string;
  current: OutcomeCounts | null;
  /** The baseline days' outcomes (one per day with data). */
  baselineDays: { date: string; outcome: OutcomeCounts | null }[];
}

function correlationThreshold(config: Config, f: FeatureConfig, check: 'position_rank_correlation' | 'score_rank_correlation'): AboveThreshold {
  return f.thresholds?.[check] ?? config.thresholds[check];
}

/**
 * Status of a shift: ok while it stays within rankingNoiseZ noise standard deviations,
 * otherwise by the size of the change against the thresholds.
 */
function shiftStatus(s: MeanShift, t: AboveThreshold, z: number): Status {
  if (s.z < z) return 'ok';
  return statusAbove(Math.abs(s.change), t);
}

function shiftEvidence(s: MeanShift, lists: number): Record<string, unknown> {
  return {
    baseline: s.baselineMean,
    current: s.current,
    change: s.change,
    noise: s.noise,
    z: s.z,
    baselineDaySd: s.baselineDaySd,
    betweenDaySd: s.betweenDaySd,
    currentSe: s.currentSe,
    baselineDays: s.days,
    lists,
  };
}

/** Share of lists whose rho has the sign opposite to `sign` (the baseline's mean sign). */
function oppositeShare(s: RankCorrelationSums, sign: number): number {
  if (s.count === 0) return 0;
  return (sign >= 0 ? s.negative : s.positive) / s.count;
}

function correlationFinding(config: Config, f: FeatureConfig, check: 'position_rank_correlation' | 'score_rank_correlation', cur: RankCorrelationSums, days: RankCorrelationSums[]): FindingDraft | null {
  const s = dailyMeanShift(cur, days);
  if (s === null) return null;
  const t = correlationThreshold(config, f, check);
  const status = shiftStatus(s, t, config.thresholds.rankingNoiseZ);
  const sign = Math.sign(s.baselineMean);
  const counted = days.filter((d) => d.count > 0);
  const baseOpposite = counted.reduce((a, d) => a + oppositeShare(d, sign), 0) / counted.length;
  const curOpposite = oppositeShare(cur, sign);
  const against = check === 'position_rank_correlation' ? 'position' : 'model score';
  return {
    feature: f.name,
    check,
    rule: null,
    value: s.current,
    score: Math.abs(s.change),
    status,
    thresholds: applied(t),
    summary:
      `mean within-list rank correlation with the ${against} ${fmt(s.current)} (baseline ${fmt(s.baselineMean)}, change ${s.change >= 0 ? '+' : ''}${fmt(s.change)}, ` +
      `${fmt(s.z)} x noise); ${pct(curOpposite)} of lists against the baseline's sign (baseline ${pct(baseOpposite)}); ${status} at |change| >= ${t.warn} / ${t.critical} beyond ${config.thresholds.rankingNoiseZ} x noise`,
    evidence: {
      ...shiftEvidence(s, cur.count),
      oppositeSignShare: curOpposite,
      baselineOppositeSignShare: baseOpposite,
      // The pushdown engine's default: the day's lists are those of its whole-list sample.
      ...(config.source.engine === 'pushdown' && config.source.pushdownAssociation === 'sample' ? { listsFrom: 'whole-list sample' } : {}),
    },
  };
}

/** Within-list association findings of every item-level numeric feature. */
export function associationFindings(config: Config, baseline: BaselineProfile, current: DayProfile): FindingDraft[] {
  const days = baseline.rankingDays ?? [];
  if (days.length === 0) return [];
  const out: FindingDraft[] = [];
  for (const f of config.features) {
    const cur = current.features[f.name];
    if (cur === undefined || cur.kind === 'categorical' || f.scope !== 'item') continue;
    const a = cur.association;
    if (a === undefined || a === null) continue;
    const baseDays = days.map((d) => d.association[f.name]).filter((x): x is AssociationCounts => x !== undefined);
    if (baseDays.length === 0) continue;
    const p = correlationFinding(config, f, 'position_rank_correlation', a.position, baseDays.map((d) => d.position));
    if (p !== null) out.push(p);
    if (a.score !== null) {
      const sd = baseDays.map((d) => d.score).filter((x): x is RankCorrelationSums => x !== null);
      const s = sd.length > 0 ? correlationFinding(config, f, 'score_rank_correlation', a.score, sd) : null;
      if (s !== null) out.push(s);
    }
  }
  return out;
}

function outcomeShiftFinding(config: Config, check: CheckName & ('mean_reciprocal_rank' | 'ndcg'), label: string, date: string, cur: OutcomeCounts, days: OutcomeCounts[]): FindingDraft | null {
  const pick = (o: OutcomeCounts): OutcomeCounts['ndcg'] => (check === 'ndcg' ? o.ndcg : o.reciprocalRank);
  const s = dailyMeanShift(pick(cur), days.map(pick));
  if (s === null) return null;
  const t = config.thresholds[check];
  const status = shiftStatus(s, t, config.thresholds.rankingNoiseZ);
  return {
    feature: null,
    check,
    rule: null,
    value: s.current,
    score: Math.abs(s.change),
    status,
    thresholds: applied(t),
    summary: `${label} of ${date} ${fmt(s.current)} (baseline ${fmt(s.baselineMean)}, change ${s.change >= 0 ? '+' : ''}${fmt(s.change)}, ${fmt(s.z)} x noise; ${status} at |change| >= ${t.warn} / ${t.critical})`,
    evidence: { ...shiftEvidence(s, cur.lists), outcomeDate: date, k: cur.k },
  };
}

/** Outcome findings (dataset level): MRR, NDCG@k and the PSI of positives over served-rank buckets. */
export function outcomeFindings(config: Config, input: OutcomeInput): FindingDraft[] {
  const cur = input.current;
  const days = input.baselineDays.map((d) => d.outcome).filter((o): o is OutcomeCounts => o !== null && o.lists > 0 && o.k === cur?.k);
  if (cur === null || cur.lists === 0 || days.length === 0) return [];
  const out: FindingDraft[] = [];
  const mrr = outcomeShiftFinding(config, 'mean_reciprocal_rank', 'mean reciprocal rank of the first positive', input.date, cur, days);
  if (mrr !== null) out.push(mrr);
  const nd = outcomeShiftFinding(config, 'ndcg', `NDCG@${cur.k}`, input.date, cur, days);
  if (nd !== null) out.push(nd);
  const base = cur.positivesByBucket.map((_, i) => days.reduce((a, d) => a + (d.positivesByBucket[i] ?? 0), 0));
  const n = base.reduce((a, b) => a + b, 0);
  const m = cur.positivesByBucket.reduce((a, b) => a + b, 0);
  if (n > 0 && m > 0) {
    const r = psi(base, cur.positivesByBucket);
    const t = config.thresholds.positive_position_psi;
    const top = (c: readonly number[], total: number): number => (c[0] ?? 0) / total;
    out.push(
      psiFinding({
        feature: null,
        check: 'positive_position_psi',
        result: r,
        labels: POSITION_BUCKET_LABELS,
        t,
        n,
        m,
        quantile: config.thresholds.psiNoiseQuantile,
        summary: (status, floor) => `positives by served rank (${input.date}): PSI ${fmt(r.psi)}, ${pct(top(cur.positivesByBucket, m))} at rank 1 (baseline ${pct(top(base, n))}); ${status} at ${t.warn} / ${t.critical}, noise floor ${fmt(floor)}`,
        evidence: { baseline: top(base, n), current: top(cur.positivesByBucket, m), outcomeDate: input.date },
      }),
    );
  }
  return out;
}

/** The outcome input of a day evaluated with its own labels (outcome.labelLagDays = 0). */
export function ownOutcome(baseline: BaselineProfile, current: DayProfile): OutcomeInput {
  return { date: current.date, current: current.outcome ?? null, baselineDays: (baseline.rankingDays ?? []).map((d) => ({ date: d.date, outcome: d.outcome })) };
}
