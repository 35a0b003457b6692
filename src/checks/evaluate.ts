/**
 * Statistics -> findings. Pure: a baseline profile and a day profile in, findings out
 * (without alert state; see alert-state.ts). Drift status is decided on effect size (PSI,
 * KS D); PSI must also clear its sample-size-aware noise floor and KS its
 * Benjamini-Hochberg adjusted p-value, so a day of millions of rows does not page on
 * differences nobody cares about.
 */
import type { AboveThreshold, Config, FeatureConfig } from '../config/index.ts';
import type { BaselineProfile, CategoricalProfile, DatasetCounts, DayProfile, NumericProfile, WithinListCounts } from '../profile/index.ts';
import type { CheckName, Finding } from '../report/index.ts';
import {
  benjaminiHochberg,
  binCountsSorted,
  binLabels,
  categoryPsi,
  NULL_CATEGORY,
  OTHER_CATEGORY,
  ks2Sorted,
  ksPValue,
  psi,
  type BinSpec,
} from '../stats/index.ts';
import { associationFindings, outcomeFindings, ownOutcome, type OutcomeInput } from './ranking.ts';
import { psiFinding } from './psi-finding.ts';
import { learnThreshold, type LearnedThreshold } from './adaptive.ts';
import { distinctFinding } from './distinct.ts';
import { extremeFinding } from './extremes.ts';
import { applied, appliedBand, fmt, pct, statusAbove, statusBand } from './status.ts';

export type FindingDraft = Omit<Finding, 'alert'>;

function ratio(numerator: number, denominator: number): number {
  return denominator > 0 ? numerator / denominator : 0;
}

function threshold(config: Config, feature: FeatureConfig | null, check: keyof Config['thresholds'] & keyof NonNullable<FeatureConfig['thresholds']>): AboveThreshold {
  return (feature?.thresholds?.[check] ?? config.thresholds[check]) as AboveThreshold;
}

/**
 * The drift threshold of a feature: learned from the baseline's day-to-day variation when
 * thresholds.adaptive is on, the feature has no explicit override and the window has enough
 * days (checks/adaptive.ts); the fixed one otherwise.
 */
function driftThreshold(ctx: Context, f: FeatureConfig, check: 'psi' | 'ks'): { t: AboveThreshold; learned: LearnedThreshold | null } {
  const fixed = threshold(ctx.config, f, check);
  const a = ctx.config.thresholds.adaptive;
  if (!a.enabled || f.thresholds?.[check] !== undefined) return { t: fixed, learned: null };
  const learned = learnThreshold(check, ctx.baseline.variation?.[f.name]?.[check], fixed, a);
  return learned === null ? { t: fixed, learned: null } : { t: learned.threshold, learned };
}

/** Marks a drift finding's thresholds as learned and puts how into its evidence. */
function withLearned(learned: LearnedThreshold | null, draft: FindingDraft): FindingDraft {
  if (learned === null || draft.thresholds.type !== 'above') return draft;
  return { ...draft, thresholds: { ...draft.thresholds, learned: true }, evidence: { ...draft.evidence, learnedThreshold: learned.evidence } };
}

/** A yes/no finding: critical when raised (value 1), ok otherwise (value 0). */
function flagFinding(feature: string | null, check: CheckName, raised: boolean, summary: string, evidence: Record<string, unknown>): FindingDraft {
  const v = raised ? 1 : 0;
  return { feature, check, rule: null, value: v, score: v, status: raised ? 'critical' : 'ok', thresholds: { type: 'flag' }, summary, evidence };
}

/**
 * A finding on the increase of a ratio over its baseline value. A null baseline means there
 * is none yet (no baseline day, or a feature new to the config): the finding is ok and says
 * so, since nothing can have risen over a baseline that does not exist. Checks against a
 * declared expectation (a non-nullable feature, a valid range, a within-list rule) pass 0.
 */
function increaseFinding(
  feature: string | null,
  check: CheckName,
  label: string,
  current: number,
  baseline: number | null,
  t: AboveThreshold,
  evidence: Record<string, unknown> = {},
): FindingDraft {
  if (baseline === null) {
    return { feature, check, rule: null, value: current, score: 0, status: 'ok', thresholds: applied(t), summary: `${label} ${pct(current)} (no baseline yet)`, evidence: { baseline: null, current, ...evidence } };
  }
  const score = Math.max(0, current - baseline);
  const status = statusAbove(score, t);
  return {
    feature,
    check,
    rule: null,
    value: current,
    score,
    status,
    thresholds: applied(t),
    summary: `${label} ${pct(current)} (baseline ${pct(baseline)}; ${status} at +${pct(t.warn)} / +${pct(t.critical)})`,
    evidence: { baseline, current, ...evidence },
  };
}

interface Context {
  config: Config;
  baseline: BaselineProfile;
  current: DayProfile;
  hasBaseline: boolean;
  /** Not a single baseline day: checks that compare with the baseline say "no baseline yet". */
  noBaseline: boolean;
}

function numericFindings(ctx: Context, f: FeatureConfig, base: NumericProfile | undefined, cur: NumericProfile, ksQueue: { draft: FindingDraft; p: number }[]): FindingDraft[] {
  const out: FindingDraft[] = [];
  const { config } = ctx;
  const q = cur.quality;
  // No baseline day at all: the rates compared with the baseline have nothing to compare with.
  const bq = ctx.noBaseline ? undefined : base?.quality;
  const rows = q.rows;

  // Data quality: a non-nullable feature and a declared range are judged without a baseline.
  const nullRatio = ratio(q.nulls, rows);
  const baseNull = !f.nullable ? 0 : bq === undefined ? null : ratio(bq.nulls, bq.rows);
  out.push(increaseFinding(f.name, 'null_ratio', 'null', nullRatio, baseNull, threshold(config, f, 'null_ratio'), { nulls: q.nulls, rows, nullable: f.nullable }));
  const nonfinite = q.nan + q.posInf + q.negInf;
  out.push(
    increaseFinding(f.name, 'nonfinite_ratio', 'NaN/Infinity', ratio(nonfinite, rows), bq === undefined ? null : ratio(bq.nan + bq.posInf + bq.negInf, bq.rows), threshold(config, f, 'nonfinite_ratio'), {
      nan: q.nan,
      posInf: q.posInf,
      negInf: q.negInf,
      rows,
    }),
  );
  if (f.key !== undefined) {
    out.push(increaseFinding(f.name, 'type_error_ratio', 'non-numeric values', ratio(q.typeErrors, rows), bq === undefined ? null : ratio(bq.typeErrors, bq.rows), threshold(config, f, 'type_error_ratio'), { typeErrors: q.typeErrors, rows }));
  }
  if (f.range !== undefined) {
    out.push(
      increaseFinding(f.name, 'out_of_range_ratio', 'out of range', ratio(q.outOfRange, q.finite), bq === undefined ? 0 : ratio(bq.outOfRange, bq.finite), threshold(config, f, 'out_of_range_ratio'), {
        outOfRange: q.outOfRange,
        finite: q.finite,
        range: f.range,
        min: cur.sortedSample.length > 0 ? cur.sortedSample[0] : null,
        max: cur.sortedSample.length > 0 ? cur.sortedSample[cur.sortedSample.length - 1] : null,
      }),
    );
  }

  if (base !== undefined && ctx.hasBaseline && base.sortedSample.length > 0) {
    // A feature stuck at one value, where the baseline varied.
    const stuck = cur.distinct === 1 && cur.sortedSample.length > 1 && base.distinct > 1;
    out.push(
      flagFinding(
        f.name,
        'constant',
        stuck,
        stuck ? `every value is ${fmt(cur.sortedSample[0])} (baseline had ${base.distinct} distinct values)` : `varies (${cur.distinct} distinct values)`,
        { baseline: base.distinct, current: cur.distinct, value: stuck ? cur.sortedSample[0] : null },
      ),
    );

    // Distinct values against the baseline days' own (checks/distinct.ts).
    if (f.kind === 'numeric' && cur.sortedSample.length > 1) {
      out.push(distinctFinding(f.name, base, cur, ctx.baseline.variation?.[f.name], threshold(config, f, 'distinct_ratio_drop')));
    }

    // Values beyond the baseline's extremes (checks/extremes.ts).
    if (f.kind === 'numeric') {
      const x = extremeFinding(f.name, base, cur, config.thresholds.extremeIqrMultiple, threshold(config, f, 'extreme_value_ratio'));
      if (x !== null) out.push(x);
    }

    // PSI over the baseline's quantile bins (nulls in the last bin).
    const spec = ctx.baseline.bins[f.name];
    if (spec !== undefined && cur.binCounts.length === base.binCounts.length) {
      const r = psi(base.binCounts, cur.binCounts);
      const { t, learned } = driftThreshold(ctx, f, 'psi');
      out.push(
        withLearned(learned, psiFinding({
          feature: f.name,
          check: 'psi',
          result: r,
          labels: [...binLabels(spec), 'missing'],
          t,
          // The baseline's bin shares come from its value sample: that is its sample size.
          n: base.sortedSample.length,
          m: cur.quality.rows,
          quantile: config.thresholds.psiNoiseQuantile,
          summary: (status, floor) => `PSI ${fmt(r.psi)} (${status}; ${learned === null ? '' : 'learned '}warn >= ${fmt(t.warn)}, critical >= ${fmt(t.critical)}; noise floor ${fmt(floor)})`,
          evidence: { baseline: base.mean, current: cur.mean },
        })),
      );
    }

    // Pushdown engine: KS D from the day's counts over the baseline's fine bins, with its error bound.
    const fine = ctx.baseline.fineBins?.[f.name];
    if (f.kind === 'numeric' && cur.fineBinCounts !== undefined && fine !== undefined) {
      if (q.finite > 0) ksQueue.push(binnedKsFinding(ctx, f, base, cur, fine, cur.fineBinCounts, out));
    } else if (f.kind === 'numeric' && cur.sortedSample.length > 0) {
      // Two-sample KS on the baseline sample and the day's values (binary features: PSI only).
      const { d, n, m } = ks2Sorted(base.sortedSample, cur.sortedSample);
      const k = ksDraft(ctx, f, base, cur, d, n, m, {});
      ksQueue.push(k);
      out.push(k.draft);
    }
  }

  const wl = withinListFindings(ctx, f, ctx.noBaseline ? null : (base?.withinList ?? null), cur.withinList);
  out.push(...wl);
  return out;
}

/**
 * Two-sample Kolmogorov-Smirnov D over fine bins, when the day's values were counted into
 * the baseline's fine bins in SQL (pushdown engine) instead of coming to Plumbline.
 *
 * What: both empirical CDFs are known exactly at every fine-bin boundary (the baseline's by
 * counting its sorted sample into the same bins), so D_binned = max over boundaries of
 * |F_baseline - F_current| never exceeds the exact D. Inside an interval bin each ECDF rises
 * by at most that bin's share, so the exact D is at most D_binned + max over interval bins of
 * max(baseline share, current share); a point-mass bin holds a single value and adds nothing.
 * D_binned decides the status; the bound goes into the evidence.
 *
 * Cost: O(B) for B fine bins plus O(B log n) to count the baseline sample.
 *
 * Source: Smirnov (1939) for D; the bound follows from the monotonicity of both ECDFs.
 */
function binnedKsFinding(ctx: Context, f: FeatureConfig, base: NumericProfile, cur: NumericProfile, spec: BinSpec, counts: readonly number[], out: FindingDraft[]): { draft: FindingDraft; p: number } {
  const baseCounts = binCountsSorted(spec, base.sortedSample);
  if (baseCounts.length !== counts.length) throw new Error(`fine bins of ${f.name}: ${counts.length} day counts for ${baseCounts.length} bins`);
  // Which bins are single points: the bin after each point-mass edge's open interval.
  const singleton = new Uint8Array(counts.length);
  let bin = 0;
  spec.pointMass.forEach((pm) => {
    bin++;
    if (pm) singleton[bin++] = 1;
  });
  const n = base.sortedSample.length;
  let m = 0;
  for (const c of counts) m += c;
  let cb = 0;
  let cc = 0;
  let d = 0;
  let bound = 0;
  for (let i = 0; i < counts.length; i++) {
    cb += baseCounts[i]!;
    cc += counts[i]!;
    const gap = Math.abs(cb / n - cc / m);
    if (gap > d) d = gap;
    if (singleton[i] === 0) bound = Math.max(bound, baseCounts[i]! / n, counts[i]! / m);
  }
  const k = ksDraft(ctx, f, base, cur, d, n, m, { ksMethod: 'binned', fineBins: counts.length, dErrorBound: bound, dUpperBound: Math.min(1, d + bound) });
  out.push(k.draft);
  return k;
}

/**
 * A KS finding before the Benjamini-Hochberg step: status by D against its thresholds;
 * evaluateDay then gates it on the adjusted p-value and writes the summary.
 */
function ksDraft(ctx: Context, f: FeatureConfig, base: NumericProfile, cur: NumericProfile, d: number, n: number, m: number, evidence: Record<string, unknown>): { draft: FindingDraft; p: number } {
  const p = ksPValue(Math.min(1, d), n, m);
  const { t, learned } = driftThreshold(ctx, f, 'ks');
  const draft: FindingDraft = withLearned(learned, {
    feature: f.name,
    check: 'ks',
    rule: null,
    value: d,
    score: d,
    status: statusAbove(d, t),
    thresholds: applied(t),
    summary: '',
    evidence: { baseline: base.mean, current: cur.mean, n, m, pValue: p.pValue, pValueMethod: p.method, adjustedPValue: null, ...evidence },
  });
  return { draft, p: p.pValue };
}

function withinListFindings(ctx: Context, f: FeatureConfig, base: WithinListCounts | null, cur: WithinListCounts | null): FindingDraft[] {
  if (f.scope === 'list' || cur === null || cur.listsJudged === 0) return [];
  const out: FindingDraft[] = [];
  // Increases are measured against whatever baseline there is (as for null_ratio): minDays
  // gates the drift and count comparisons only, and a zero stand-in would page on every list
  // that is flat by nature (a category shared by a whole list) until the window fills up.
  const baseFlat = base !== null ? ratio(base.flatLists, base.listsJudged) : null;
  out.push(
    increaseFinding(f.name, 'flat_list_ratio', 'lists where it does not vary:', ratio(cur.flatLists, cur.listsJudged), baseFlat, threshold(ctx.config, f, 'flat_list_ratio'), {
      flatLists: cur.flatLists,
      listsJudged: cur.listsJudged,
    }),
  );
  if (f.withinList !== undefined) {
    const judged = cur.listsJudged - cur.flatLists;
    const baseJudged = base === null ? 0 : base.listsJudged - base.flatLists;
    // A declared rule is judged against 0 until there is a baseline.
    const baseRatio = base !== null ? ratio(base.ruleViolations, baseJudged) : 0;
    const finding = increaseFinding(
      f.name,
      'rule_violation_ratio',
      `lists breaking ${f.withinList.rule}:`,
      ratio(cur.ruleViolations, judged),
      baseRatio,
      threshold(ctx.config, f, 'rule_violation_ratio'),
      { violations: cur.ruleViolations, listsJudged: judged, tolerance: f.withinList.tolerance },
    );
    finding.rule = f.withinList.rule;
    out.push(finding);
  }
  return out;
}

function categoricalFindings(ctx: Context, f: FeatureConfig, base: CategoricalProfile | undefined, cur: CategoricalProfile): FindingDraft[] {
  const { config } = ctx;
  const q = cur.quality;
  const out: FindingDraft[] = [];
  const baseNull = !f.nullable ? 0 : base === undefined || ctx.noBaseline ? null : ratio(base.quality.nulls, base.quality.rows);
  out.push(increaseFinding(f.name, 'null_ratio', 'null', ratio(q.nulls, q.rows), baseNull, threshold(config, f, 'null_ratio'), { nulls: q.nulls, rows: q.rows, nullable: f.nullable }));
  if (base !== undefined && ctx.hasBaseline && base.categories.size > 0 && q.finite > 0) {
    const [bc, cc] = comparableCategories(base, cur);
    const r = categoryPsi(bc, cc);
    // The buckets of other categories and of missing values are never "new categories".
    const unseen = r.unseen.filter((c) => c !== OTHER_CATEGORY && c !== NULL_CATEGORY);
    let currentRows = 0;
    for (const v of cc.values()) currentRows += v;
    const unseenShare = ratio(unseen.reduce((sum, c) => sum + cc.get(c)!, 0), currentRows);
    const { t, learned } = driftThreshold(ctx, f, 'psi');
    out.push(
      withLearned(learned, psiFinding({
        feature: f.name,
        check: 'psi',
        result: r,
        labels: r.categories.map(categoryLabel),
        t,
        n: base.quality.rows,
        m: q.rows,
        quantile: config.thresholds.psiNoiseQuantile,
        summary: (status) => `PSI ${fmt(r.psi)} over ${r.categories.length} categories (${status}; ${learned === null ? '' : 'learned '}warn >= ${fmt(t.warn)}, critical >= ${fmt(t.critical)})`,
      })),
    );
    const tn = threshold(config, f, 'new_category_ratio');
    const newStatus = statusAbove(unseenShare, tn);
    out.push({
      feature: f.name,
      check: 'new_category_ratio',
      rule: null,
      value: unseenShare,
      score: unseenShare,
      status: newStatus,
      thresholds: applied(tn),
      summary: unseen.length === 0 ? 'no category unseen in the baseline' : `${pct(unseenShare)} of rows in ${unseen.length} categor${unseen.length === 1 ? 'y' : 'ies'} unseen in the baseline`,
      // Category names are values of a declared feature (bounded, cut to maxCategoryLength), not ids; keep a few.
      evidence: { current: unseenShare, unseen: unseen.slice(0, 10), unseenCount: unseen.length },
    });
    out.push(cardinalityFinding(ctx, f, base, cur));
    const stuck = cur.distinct === 1 && base.distinct > 1 && q.finite > 1;
    out.push(flagFinding(f.name, 'constant', stuck, stuck ? `one category only (baseline had ${base.distinct})` : `${cur.distinct} categories`, { baseline: base.distinct, current: cur.distinct }));
  }
  out.push(...withinListFindings(ctx, f, base?.withinList ?? null, cur.withinList));
  return out;
}

/** Evidence label of a category bin. */
function categoryLabel(c: string): string {
  if (c === OTHER_CATEGORY) return 'other categories';
  if (c === NULL_CATEGORY) return 'null';
  return `category ${JSON.stringify(c)}`;
}

/**
 * The two sides of a categorical comparison, missing values as a bin of their own. When the
 * baseline kept only its most frequent categories, a day's category outside them may be one
 * of the baseline's tail: it is compared within the "other" bucket, not called new.
 */
function comparableCategories(base: CategoricalProfile, cur: CategoricalProfile): [Map<string, number>, Map<string, number>] {
  const b = new Map(base.categories);
  const c = new Map<string, number>();
  const folded = base.otherRows > 0;
  for (const [k, v] of cur.categories) {
    const key = folded && !b.has(k) ? OTHER_CATEGORY : k;
    c.set(key, (c.get(key) ?? 0) + v);
  }
  if (folded) b.set(OTHER_CATEGORY, base.otherRows);
  if (cur.otherRows > 0) c.set(OTHER_CATEGORY, (c.get(OTHER_CATEGORY) ?? 0) + cur.otherRows);
  if (base.quality.nulls > 0) b.set(NULL_CATEGORY, base.quality.nulls);
  if (cur.quality.nulls > 0) c.set(NULL_CATEGORY, cur.quality.nulls);
  return [b, c];
}

/**
 * Distinct categories of the day against the baseline's (its largest daily count): a
 * category column that suddenly takes thousands of values (ids or free text leaking into it)
 * is a data break even when the most frequent categories still look the same.
 */
function cardinalityFinding(ctx: Context, f: FeatureConfig, base: CategoricalProfile, cur: CategoricalProfile): FindingDraft {
  const t = threshold(ctx.config, f, 'category_cardinality');
  const score = cur.distinct / Math.max(1, base.distinct);
  const status = statusAbove(score, t);
  const kept = ctx.config.source.maxCategories;
  const other = cur.otherRows;
  return {
    feature: f.name,
    check: 'category_cardinality',
    rule: null,
    value: cur.distinct,
    score,
    status,
    thresholds: applied(t),
    summary:
      `${fmt(cur.distinct)} distinct categories, ${fmt(score)} x the baseline's ${fmt(base.distinct)} (${status}; warn >= ${t.warn} x, critical >= ${t.critical} x)` +
      (other > 0 ? `; ${pct(ratio(other, cur.quality.finite))} of rows beyond the ${fmt(kept)} most frequent` : ''),
    evidence: { baseline: base.distinct, current: cur.distinct, keptCategories: kept, otherShare: ratio(other, cur.quality.finite) },
  };
}

function datasetFindings(ctx: Context): FindingDraft[] {
  const { config, baseline } = ctx;
  const cur = ctx.current.dataset;
  const base: DatasetCounts = baseline.dataset;
  const th = config.thresholds;
  const out: FindingDraft[] = [];
  const days = Math.max(1, baseline.days.length);
  const meanRows = baseline.days.reduce((s, d) => s + d.rows, 0) / days;
  const meanLists = baseline.days.reduce((s, d) => s + d.lists, 0) / days;

  if (ctx.hasBaseline) {
    for (const [check, value, mean, what] of [
      ['row_count_ratio', ctx.current.totalRows, meanRows, 'rows'],
      ['list_count_ratio', ctx.current.totalLists, meanLists, 'lists'],
    ] as const) {
      const t = th[check];
      const r = ratio(value, mean);
      const status = statusBand(r, t);
      out.push({
        feature: null,
        check,
        rule: null,
        value: r,
        score: r,
        status,
        thresholds: appliedBand(t),
        summary: `${fmt(value)} ${what}, ${fmt(r)} x the baseline's daily mean of ${fmt(mean)}`,
        evidence: { baseline: mean, current: value },
      });
    }
    if (base.lists > 0 && cur.lists > 0) {
      const len = Math.max(base.listSizeCounts.length, cur.listSizeCounts.length);
      const pad = (a: number[]): number[] => Array.from({ length: len }, (_, i) => a[i] ?? 0);
      const r = psi(pad(base.listSizeCounts), pad(cur.listSizeCounts));
      const meanSize = (c: DatasetCounts): number => ratio(c.rows - c.nullListIdRows, c.lists);
      out.push(
        psiFinding({
          feature: null,
          check: 'list_size_psi',
          result: r,
          labels: Array.from({ length: len }, (_, i) => (i === len - 1 ? `size >= ${i + 1}` : `size ${i + 1}`)),
          t: th.list_size_psi,
          n: base.lists,
          m: cur.lists,
          quantile: th.psiNoiseQuantile,
          summary: () => `list sizes: PSI ${fmt(r.psi)}; mean size ${fmt(meanSize(cur))} (baseline ${fmt(meanSize(base))})`,
          evidence: { baseline: meanSize(base), current: meanSize(cur) },
        }),
      );
    }
  }
  // Increases over the baseline's rate, even below minDays (see withinListFindings); "no baseline yet" without any baseline day.
  const none = ctx.noBaseline;
  const vsBase = (n: number, d: number): number | null => (none ? null : ratio(n, d));
  out.push(increaseFinding(null, 'duplicate_item_ratio', 'lists with a duplicated item:', ratio(cur.listsWithDuplicateItems, cur.lists), vsBase(base.listsWithDuplicateItems, base.lists), th.duplicate_item_ratio, { lists: cur.listsWithDuplicateItems }));
  out.push(increaseFinding(null, 'position_gap_ratio', 'lists with position gaps:', ratio(cur.listsWithPositionGaps, cur.lists), vsBase(base.listsWithPositionGaps, base.lists), th.position_gap_ratio, { lists: cur.listsWithPositionGaps }));
  out.push(increaseFinding(null, 'null_list_id_ratio', 'rows without a list id:', ratio(cur.nullListIdRows, cur.rows), vsBase(base.nullListIdRows, base.rows), th.null_list_id_ratio, { rows: cur.nullListIdRows }));
  out.push(increaseFinding(null, 'null_item_id_ratio', 'rows without an item id:', ratio(cur.nullItemIdRows, cur.rows), vsBase(base.nullItemIdRows, base.rows), th.null_item_id_ratio, { rows: cur.nullItemIdRows }));
  out.push(increaseFinding(null, 'singleton_list_ratio', 'lists of one item:', ratio(cur.singletonLists, cur.lists), vsBase(base.singletonLists, base.lists), th.singleton_list_ratio, { lists: cur.singletonLists }));
  if (config.source.columns.label !== undefined) {
    // Rows in lists without a label (null or NaN): left out of the positive rate, not counted as negatives.
    const inLists = (c: DatasetCounts): number => c.rows - c.nullListIdRows;
    const nullLabels = inLists(cur) - cur.labelRows;
    out.push(increaseFinding(null, 'null_label_ratio', 'rows without a label:', ratio(nullLabels, inLists(cur)), vsBase(inLists(base) - base.labelRows, inLists(base)), th.null_label_ratio, { rows: nullLabels }));
  }
  if (config.source.columns.label !== undefined && cur.labelRows > 0) {
    const curRate = ratio(cur.labelPositives, cur.labelRows);
    const baseRate = ratio(base.labelPositives, base.labelRows);
    if (ctx.hasBaseline && baseRate > 0) {
      const t = th.label_positive_ratio;
      const r = curRate / baseRate;
      out.push({
        feature: null,
        check: 'label_positive_ratio',
        rule: null,
        value: r,
        score: r,
        status: statusBand(r, t),
        thresholds: appliedBand(t),
        summary: `positive label rate ${pct(curRate)}, ${fmt(r)} x the baseline's ${pct(baseRate)}`,
        evidence: { baseline: baseRate, current: curRate },
      });
    }
    out.push(increaseFinding(null, 'no_positive_list_ratio', 'lists without a positive label:', ratio(cur.listsWithoutPositive, cur.lists), vsBase(base.listsWithoutPositive, base.lists), th.no_positive_list_ratio));
  }
  return out;
}

/** A critical dataset-level finding for a day without rows; the other checks do not run. */
export function snapshotMissingFinding(date: string, reason: string): FindingDraft {
  return flagFinding(null, 'snapshot_missing', true, `no snapshot rows for ${date}: ${reason}`, { current: 0 });
}

/**
 * Benjamini-Hochberg across a family of KS tests (a day's features; src/checks/slices.ts:
 * every slice of a day): D decides the status, the adjusted p-value gates it (it can only
 * turn a finding ok).
 */
export function gateKs(config: Config, family: readonly { draft: FindingDraft; p: number }[]): void {
  if (family.length === 0) return;
  const adjusted = benjaminiHochberg(family.map((k) => k.p));
  family.forEach(({ draft }, i) => {
    const adj = adjusted[i]!;
    draft.evidence.adjustedPValue = adj;
    const t = draft.thresholds as { warn: number; critical: number };
    if (adj >= config.thresholds.ksAlpha) draft.status = 'ok';
    draft.summary = `KS D ${fmt(draft.value)} (${draft.status}; ${draft.evidence['learnedThreshold'] === undefined ? '' : 'learned '}warn >= ${fmt(t.warn)}, critical >= ${fmt(t.critical)}; adjusted p ${fmt(adj)})`;
    if (draft.evidence['ksMethod'] === 'binned') draft.summary += `; from ${String(draft.evidence['fineBins'])} fine bins, exact D at most ${fmt(draft.evidence['dUpperBound'] as number)}`;
  });
}

/**
 * All findings of one day, before alert hysteresis. `outcome` is the label outcome to judge
 * when labels lag (an older day re-read at run time); by default the day's own.
 */
export function evaluateDay(config: Config, baseline: BaselineProfile, current: DayProfile, outcome?: OutcomeInput): FindingDraft[] {
  if (current.dataset.rows === 0) return [snapshotMissingFinding(current.date, 'the source has no rows for this date')];
  const ctx: Context = { config, baseline, current, hasBaseline: baseline.days.length >= config.baseline.minDays, noBaseline: baseline.days.length === 0 };
  const findings: FindingDraft[] = [];
  const ksQueue: { draft: FindingDraft; p: number }[] = [];
  for (const f of config.features) {
    const cur = current.features[f.name];
    if (cur === undefined) continue;
    const base = baseline.features[f.name];
    if (cur.kind === 'categorical') findings.push(...categoricalFindings(ctx, f, base as CategoricalProfile | undefined, cur));
    else findings.push(...numericFindings(ctx, f, base as NumericProfile | undefined, cur, ksQueue));
  }
  gateKs(config, ksQueue);
  findings.push(...datasetFindings(ctx));
  if (ctx.hasBaseline) {
    findings.push(...associationFindings(config, baseline, current));
    if (config.source.columns.label !== undefined) findings.push(...outcomeFindings(config, outcome ?? ownOutcome(baseline, current)));
  }
  return findings;
}
