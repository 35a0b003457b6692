/**
 * Profiles -> findings, on small hand-built profiles: statuses and thresholds, overrides,
 * ratio checks as increases over the baseline, the gates on KS (Benjamini-Hochberg) and PSI
 * (noise floor), dataset checks, and the empty day.
 */
import { describe, expect, it } from 'vitest';
import { evaluateDay, statusAbove, statusBand } from '../../../src/checks/index.ts';
import { parseConfig, type Config, type ConfigInput } from '../../../src/config/index.ts';
import type { Finding } from '../../../src/report/index.ts';
import { baseline, categorical, dataset, day, numeric, quality } from './profiles.ts';

type Draft = Omit<Finding, 'alert'>;

function config(features: ConfigInput['features'], extra: Partial<ConfigInput> = {}): Config {
  return parseConfig({ source: { table: 'shop.results' }, features, ...extra });
}

function one(findings: Draft[], feature: string | null, check: string): Draft {
  const hits = findings.filter((f) => f.feature === feature && f.check === check);
  expect(hits, `${feature ?? 'dataset'} ${check}`).toHaveLength(1);
  return hits[0]!;
}

const DS = dataset(10, 10); // 10 lists of 10 items
const range = (from: number, to: number): number[] => Array.from({ length: to - from + 1 }, (_, i) => from + i);

describe('statusAbove and statusBand', () => {
  it('rise at warn and critical, both included', () => {
    const t = { warn: 0.1, critical: 0.25 };
    expect([0, 0.0999, 0.1, 0.2499, 0.25, 7].map((v) => statusAbove(v, t))).toEqual(['ok', 'ok', 'warn', 'warn', 'critical', 'critical']);
  });

  it('leave a band around 1, its edges included', () => {
    const t = { warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 3 };
    expect([0, 0.49, 0.5, 0.69, 0.7, 1, 1.5, 1.51, 3, 3.01].map((r) => statusBand(r, t))).toEqual([
      'critical',
      'critical',
      'warn',
      'warn',
      'ok',
      'ok',
      'ok',
      'warn',
      'warn',
      'critical',
    ]);
  });
});

describe('ratio checks: the increase over the baseline decides', () => {
  const cfg = config([
    { name: 'rating', nullable: true },
    { name: 'price', nullable: false },
    { name: 'noisy', nullable: true, thresholds: { null_ratio: { warn: 0.2, critical: 0.5 } } },
  ]);
  // Baseline: 30 % nulls in each feature. Empty baseline samples keep drift checks out of the way.
  const base = baseline(DS, {
    rating: numeric([], { quality: quality(100, { nulls: 30 }) }),
    price: numeric([], { quality: quality(100, { nulls: 30 }) }),
    noisy: numeric([], { quality: quality(100, { nulls: 30 }) }),
  });
  const run = (nulls: { rating: number; price: number; noisy: number }): Draft[] =>
    evaluateDay(
      cfg,
      base,
      day('2025-03-03', DS, {
        rating: numeric(range(1, 100 - nulls.rating), { quality: quality(100, { nulls: nulls.rating }) }),
        price: numeric(range(1, 100 - nulls.price), { quality: quality(100, { nulls: nulls.price }) }),
        noisy: numeric(range(1, 100 - nulls.noisy), { quality: quality(100, { nulls: nulls.noisy }) }),
      }),
    );

  it('a feature that is always 30 % null stays quiet', () => {
    const f = one(run({ rating: 30, price: 0, noisy: 30 }), 'rating', 'null_ratio');
    expect(f).toMatchObject({ value: 0.3, score: 0, status: 'ok', thresholds: { type: 'above', warn: 0.01, critical: 0.05 } });
    expect(f.evidence).toMatchObject({ baseline: 0.3, current: 0.3, nulls: 30, rows: 100 });
  });

  it('3 and 40 points more nulls are warn and critical (defaults 0.01 / 0.05)', () => {
    const warn = one(run({ rating: 33, price: 0, noisy: 30 }), 'rating', 'null_ratio');
    expect(warn.status).toBe('warn');
    expect(warn.score).toBeCloseTo(0.03, 12);
    const critical = one(run({ rating: 70, price: 0, noisy: 30 }), 'rating', 'null_ratio');
    expect(critical.status).toBe('critical');
    expect(critical.score).toBeCloseTo(0.4, 12);
    // Fewer nulls than the baseline is not a problem.
    expect(one(run({ rating: 0, price: 0, noisy: 30 }), 'rating', 'null_ratio')).toMatchObject({ score: 0, status: 'ok' });
  });

  it('a non-nullable feature is measured against zero nulls, whatever its baseline had', () => {
    const f = one(run({ rating: 30, price: 2, noisy: 30 }), 'price', 'null_ratio');
    expect(f).toMatchObject({ value: 0.02, score: 0.02, status: 'warn' });
    expect(f.evidence).toMatchObject({ baseline: 0, nullable: false });
  });

  it('a per-feature override wins over the default', () => {
    const findings = run({ rating: 40, price: 0, noisy: 40 });
    // The same increase of 0.1: critical under the default 0.05, ok under the override 0.2.
    expect(one(findings, 'rating', 'null_ratio')).toMatchObject({ status: 'critical', thresholds: { warn: 0.01, critical: 0.05 } });
    expect(one(findings, 'noisy', 'null_ratio')).toMatchObject({ status: 'ok', thresholds: { type: 'above', warn: 0.2, critical: 0.5 } });
    expect(one(run({ rating: 30, price: 0, noisy: 55 }), 'noisy', 'null_ratio').status).toBe('warn');
  });
});

describe('Kolmogorov-Smirnov: D decides, the Benjamini-Hochberg adjusted p-value gates', () => {
  const alone = config([{ name: 'a' }]);

  it('a D of 1 on three values against three stays ok: p = 0.1 >= ksAlpha', () => {
    const f = one(evaluateDay(alone, baseline(DS, { a: numeric([1, 2, 3]) }), day('2025-03-03', DS, { a: numeric([10, 11, 12]) })), 'a', 'ks');
    expect(f.value).toBe(1);
    // SciPy 1.17.1: scipy.stats.ks_2samp([1,2,3], [10,11,12], method='exact').pvalue = 0.09999999999999999
    expect(f.evidence.pValue).toBeCloseTo(0.1, 12);
    expect(f.evidence.adjustedPValue).toBeCloseTo(0.1, 12); // one test: BH leaves it as it is
    expect(f.status).toBe('ok');
    expect(f.summary).toContain('(ok;');
  });

  it('a D of 1 on five against five is critical alone (p < 0.01) and ok among three tests', () => {
    // SciPy 1.17.1: scipy.stats.ks_2samp([1,2,3,4,5], [6,7,8,9,10], method='exact').pvalue = 0.007936507936507936 (2 / C(10, 5))
    const P = 0.007936507936507936;
    const single = one(evaluateDay(alone, baseline(DS, { a: numeric(range(1, 5)) }), day('2025-03-03', DS, { a: numeric(range(6, 10)) })), 'a', 'ks');
    expect(single.evidence.pValue).toBeCloseTo(P, 14);
    expect(single.status).toBe('critical');

    const three = config([{ name: 'a' }, { name: 'b' }, { name: 'c' }]);
    const same = numeric([1, 2, 3, 4, 5]);
    const findings = evaluateDay(three, baseline(DS, { a: numeric(range(1, 5)), b: same, c: same }), day('2025-03-03', DS, { a: numeric(range(6, 10)), b: same, c: same }));
    const a = one(findings, 'a', 'ks');
    // Benjamini & Hochberg (1995) step-up: the smallest of 3 p-values (the others are 1) is
    // adjusted to min(1, 3 p / 1) = 0.0238..., above ksAlpha 0.01.
    expect(a.evidence.adjustedPValue).toBeCloseTo(3 * P, 14);
    expect(a.value).toBe(1);
    expect(a.status).toBe('ok');
    expect(one(findings, 'b', 'ks')).toMatchObject({ value: 0, status: 'ok' });
  });

  it('a loose ksAlpha lets the same D through', () => {
    const loose = config([{ name: 'a' }], { thresholds: { ksAlpha: 0.2 } });
    expect(one(evaluateDay(loose, baseline(DS, { a: numeric([1, 2, 3]) }), day('2025-03-03', DS, { a: numeric([10, 11, 12]) })), 'a', 'ks').status).toBe('critical');
  });

  it('is not run for binary features', () => {
    const bin = config([{ name: 'flag', kind: 'binary' }]);
    const findings = evaluateDay(bin, baseline(DS, { flag: numeric([0, 1, 0, 1], { kind: 'binary' }) }), day('2025-03-03', DS, { flag: numeric([1, 1, 1, 0], { kind: 'binary' }) }));
    expect(findings.filter((f) => f.check === 'ks')).toEqual([]);
  });
});

describe('PSI: effect size above a sample-size-aware noise floor', () => {
  const cfg = config([{ name: 'p' }]);
  // Two interval bins, (-inf, 0.5] and (0.5, +inf), plus the missing bin.
  const bins = { p: { edges: [0.5], pointMass: [false] } };
  // PSI of shares (0.5, 0.5, -) against (0.8, 0.2, -), the empty missing bin adding nothing:
  // 0.3 ln(1.6) + (-0.3) ln(0.4) = 0.41588830833596724 (by hand; NumPy 2.4.6 ((c-b)*np.log(c/b)).sum() agrees)
  const PSI = 0.41588830833596724;
  // SciPy 1.17.1: scipy.stats.chi2.ppf(0.999, 1) = 10.827566170662733
  const CHI2_999_1 = 10.827566170662733;

  function psiFinding(n: number): Draft {
    const low = Array.from({ length: n / 2 }, (_, i) => 0.1 + (0.3 * i) / n);
    const high = Array.from({ length: n / 2 }, (_, i) => 0.6 + (0.3 * i) / n);
    const base = numeric([...low, ...high], { binCounts: [n / 2, n / 2, 0] });
    const cur = numeric([...low, ...low.slice(0, (3 * n) / 10), ...high.slice(0, n / 5)], { binCounts: [(4 * n) / 5, n / 5, 0] });
    return one(evaluateDay(cfg, baseline(DS, { p: base }, bins), day('2025-03-03', DS, { p: cur })), 'p', 'psi');
  }

  it('a PSI of 0.42 on 10 values each is below its noise floor, so ok', () => {
    const f = psiFinding(10);
    expect(f.value).toBeCloseTo(PSI, 12);
    // (1/n + 1/m) chi2_{0.999}(B - 1) with n = m = 10 and B = 2 used bins (Yurdakul & Naranjo 2020)
    expect(f.evidence.noiseFloor).toBeCloseTo((1 / 10 + 1 / 10) * CHI2_999_1, 10);
    expect(f.evidence).toMatchObject({ n: 10, m: 10, binsUsed: 2 });
    expect(f.status).toBe('ok');
  });

  it('the same PSI on 1000 values each is critical', () => {
    const f = psiFinding(1000);
    expect(f.value).toBeCloseTo(PSI, 12);
    expect(f.evidence.noiseFloor).toBeCloseTo((2 / 1000) * CHI2_999_1, 10);
    expect(f.status).toBe('critical');
    expect(f.thresholds).toEqual({ type: 'above', warn: 0.1, critical: 0.25 });
    // Evidence: the moved bins, largest contribution first.
    const moved = f.evidence.bins!;
    expect(moved.map((b) => [b.baselineShare, b.currentShare])).toEqual([
      [0.5, 0.2],
      [0.5, 0.8],
    ]);
    expect(moved[0]!.contribution).toBeCloseTo(-0.3 * Math.log(0.4), 12);
  });

  it('a per-feature PSI threshold overrides the default', () => {
    const lenient = config([{ name: 'p', thresholds: { psi: { warn: 0.4, critical: 0.9 } } }]);
    const n = 1000;
    const base = numeric(range(1, n).map((i) => i / (n + 1)), { binCounts: [n / 2, n / 2, 0] });
    const cur = numeric(range(1, n).map((i) => i / (n + 1)), { binCounts: [(4 * n) / 5, n / 5, 0] });
    expect(one(evaluateDay(lenient, baseline(DS, { p: base }, bins), day('2025-03-03', DS, { p: cur })), 'p', 'psi')).toMatchObject({
      status: 'warn',
      thresholds: { type: 'above', warn: 0.4, critical: 0.9 },
    });
  });
});

describe('flags and within-list checks', () => {
  it('a feature stuck at one value is a critical flag', () => {
    const cfg = config([{ name: 'age' }]);
    const f = one(evaluateDay(cfg, baseline(DS, { age: numeric([1, 2, 3, 4]) }), day('2025-03-03', DS, { age: numeric([7, 7, 7]) })), 'age', 'constant');
    expect(f).toMatchObject({ value: 1, status: 'critical', thresholds: { type: 'flag' }, evidence: { baseline: 4, current: 1, value: 7 } });
    const fine = one(evaluateDay(cfg, baseline(DS, { age: numeric([1, 2, 3, 4]) }), day('2025-03-03', DS, { age: numeric([7, 8, 7]) })), 'age', 'constant');
    expect(fine).toMatchObject({ value: 0, status: 'ok' });
  });

  it('rule violations count among the lists that are not flat, as an increase over the baseline', () => {
    const cfg = config([{ name: 'norm', withinList: { rule: 'minmax' } }]);
    const base = numeric([], { withinList: { listsJudged: 100, flatLists: 10, ruleViolations: 0 } });
    const cur = numeric([0, 1], { withinList: { listsJudged: 100, flatLists: 10, ruleViolations: 9 } });
    const findings = evaluateDay(cfg, baseline(DS, { norm: base }), day('2025-03-03', DS, { norm: cur }));
    expect(one(findings, 'norm', 'rule_violation_ratio')).toMatchObject({ rule: 'minmax', value: 0.1, score: 0.1, status: 'critical', evidence: { violations: 9, listsJudged: 90 } });
    // 10 % flat lists, as in the baseline: quiet.
    expect(one(findings, 'norm', 'flat_list_ratio')).toMatchObject({ rule: null, value: 0.1, score: 0, status: 'ok' });
  });

  it('a categorical feature gets PSI and new-category findings', () => {
    const cfg = config([{ name: 'instrument', kind: 'categorical' }]);
    const base = categorical({ piano: 500, violin: 500 });
    const cur = categorical({ piano: 450, violin: 450, harp: 100 });
    const findings = evaluateDay(cfg, baseline(DS, { instrument: base }), day('2025-03-03', DS, { instrument: cur }));
    expect(one(findings, 'instrument', 'new_category_ratio')).toMatchObject({ value: 0.1, status: 'critical', evidence: { unseen: ['harp'], unseenCount: 1 } });
    expect(one(findings, 'instrument', 'constant').status).toBe('ok');
  });
});

describe('dataset checks', () => {
  const cfg = config([{ name: 'a' }]);
  // Baseline: 2 days of 50 rows and 5 lists each.
  const base = baseline(DS, { a: numeric([]) });

  it.each([
    [50, 1, 'ok'],
    [35, 0.7, 'ok'],
    [34, 0.68, 'warn'],
    [25, 0.5, 'warn'],
    [20, 0.4, 'critical'],
    [75, 1.5, 'ok'],
    [80, 1.6, 'warn'],
    [160, 3.2, 'critical'],
  ] as const)('row_count_ratio: %i rows against a daily mean of 50 is %f, %s', (rows, ratio, status) => {
    const f = one(evaluateDay(cfg, base, day('2025-03-03', dataset(5, 10), { a: numeric([1]) }, { rows })), null, 'row_count_ratio');
    expect(f.value).toBeCloseTo(ratio, 12);
    expect(f.status).toBe(status);
    expect(f.thresholds).toEqual({ type: 'band', warnBelow: 0.7, criticalBelow: 0.5, warnAbove: 1.5, criticalAbove: 3 });
    expect(f.evidence).toMatchObject({ baseline: 50, current: rows });
  });

  it('dataset ratios are increases over the baseline', () => {
    const cur = dataset(10, 10, { listsWithDuplicateItems: 1, listsWithPositionGaps: 1, singletonLists: 0 });
    const baseWithGaps = baseline(dataset(10, 10, { listsWithPositionGaps: 1 }), { a: numeric([]) });
    const findings = evaluateDay(cfg, baseWithGaps, day('2025-03-03', cur, { a: numeric([1]) }));
    expect(one(findings, null, 'duplicate_item_ratio')).toMatchObject({ value: 0.1, score: 0.1, status: 'critical' });
    expect(one(findings, null, 'position_gap_ratio')).toMatchObject({ value: 0.1, score: 0, status: 'ok' });
    expect(one(findings, null, 'list_count_ratio')).toMatchObject({ value: 2, status: 'warn' });
  });

  it('no row-count checks before the baseline has minDays days', () => {
    const strict = config([{ name: 'a' }], { baseline: { minDays: 3 } });
    const findings = evaluateDay(strict, base, day('2025-03-03', DS, { a: numeric([1]) }));
    expect(findings.filter((f) => f.check === 'row_count_ratio' || f.check === 'list_size_psi')).toEqual([]);
    expect(findings.some((f) => f.check === 'duplicate_item_ratio')).toBe(true);
  });

  // Regression: below minDays the increases were measured against zero, so a feature that is
  // flat in 30 % of its lists on every day paged on each of the first days of a deployment.
  it('ratio checks use a baseline shorter than minDays; only drift and count comparisons wait for it', () => {
    const strict = config([{ name: 'instrument', kind: 'categorical' }], { baseline: { minDays: 3 } });
    const wl = { listsJudged: 100, flatLists: 30, ruleViolations: 0 };
    const shortBase = baseline(dataset(10, 10, { singletonLists: 2, listsWithPositionGaps: 1 }), { instrument: categorical({ piano: 70, harp: 30 }, 0, wl) }); // 2 days
    const cur = day('2025-03-03', dataset(10, 10, { singletonLists: 2, listsWithPositionGaps: 1 }), { instrument: categorical({ piano: 70, harp: 30 }, 0, wl) });
    const findings = evaluateDay(strict, shortBase, cur);
    expect(one(findings, 'instrument', 'flat_list_ratio')).toMatchObject({ value: 0.3, score: 0, status: 'ok' });
    expect(one(findings, null, 'singleton_list_ratio')).toMatchObject({ value: 0.2, score: 0, status: 'ok' });
    expect(one(findings, null, 'position_gap_ratio')).toMatchObject({ value: 0.1, score: 0, status: 'ok' });
    expect(findings.filter((f) => ['psi', 'new_category_ratio', 'row_count_ratio', 'list_size_psi'].includes(f.check))).toEqual([]);
    // Without any baseline day there is nothing to rise over: ok, and the summary says why.
    const none = evaluateDay(strict, { ...shortBase, days: [], dataset: dataset(0, 1, { rows: 0, lists: 0, listSizeCounts: [] }), features: {} }, cur);
    expect(one(none, 'instrument', 'flat_list_ratio')).toMatchObject({ value: 0.3, score: 0, status: 'ok', summary: expect.stringContaining('no baseline yet') });
  });

  it('an empty day gives only a critical snapshot_missing finding', () => {
    const empty = day('2025-03-03', dataset(0, 1, { rows: 0, lists: 0, listSizeCounts: [] }), {});
    expect(evaluateDay(cfg, base, empty)).toEqual([
      {
        feature: null,
        check: 'snapshot_missing',
        rule: null,
        value: 1,
        score: 1,
        status: 'critical',
        thresholds: { type: 'flag' },
        summary: 'no snapshot rows for 2025-03-03: the source has no rows for this date',
        evidence: { current: 0 },
      },
    ]);
  });
});

describe('bounded categories and their cardinality', () => {
  const cfg = config([{ name: 'shelf', kind: 'categorical' }]);
  const withOther = (counts: Record<string, number>, otherRows: number, distinct: number) => ({ ...categorical(counts), otherRows, distinct, quality: quality(Object.values(counts).reduce((a, b) => a + b, 0) + otherRows) });

  it('category_cardinality is the day\'s distinct count over the baseline\'s, status on the ratio (3 / 10 x)', () => {
    const base = baseline(DS, { shelf: categorical({ fern: 60, moss: 40 }) });
    const steady = evaluateDay(cfg, base, day('2025-03-03', DS, { shelf: categorical({ fern: 50, moss: 50 }) }));
    expect(one(steady, 'shelf', 'category_cardinality')).toMatchObject({ value: 2, score: 1, status: 'ok' });
    // 2 kept + 4,998 beyond the kept ones: 5,000 distinct against 2.
    const exploded = evaluateDay(cfg, base, day('2025-03-03', DS, { shelf: withOther({ fern: 50, moss: 40 }, 10, 5000) }));
    const card = one(exploded, 'shelf', 'category_cardinality');
    expect(card).toMatchObject({ value: 5000, score: 2500, status: 'critical', evidence: { baseline: 2, current: 5000, keptCategories: 1000, otherShare: 0.1 } });
    expect(card.summary).toContain('10.0% of rows beyond the 1,000 most frequent');
    // The other bucket is compared as a bin, never called a new category.
    expect(one(exploded, 'shelf', 'new_category_ratio')).toMatchObject({ value: 0, evidence: { unseen: [], unseenCount: 0 } });
    expect((one(exploded, 'shelf', 'psi').evidence['bins'] as { bin: string }[]).map((b) => b.bin)).toContain('other categories');
  });

  it('when the baseline kept only its most frequent categories, a day\'s category outside them counts as "other", not as new', () => {
    const base = baseline(DS, { shelf: withOther({ fern: 60, moss: 30 }, 10, 40) });
    const cur = day('2025-03-03', DS, { shelf: categorical({ fern: 60, moss: 30, lichen: 10 }) });
    const findings = evaluateDay(cfg, base, cur);
    expect(one(findings, 'shelf', 'new_category_ratio')).toMatchObject({ value: 0, status: 'ok' });
    // Same shares on both sides (60 / 30 / 10 with lichen in the other bucket): PSI 0.
    expect(one(findings, 'shelf', 'psi')).toMatchObject({ value: 0, status: 'ok' });
  });
});

describe('NULL item ids and labels, and the first run without a baseline', () => {
  const cfg = config([{ name: 'a' }], { source: { table: 'shop.results', columns: { label: 'clicked' } } });
  const labelled = (extra: Parameters<typeof dataset>[2] = {}) => dataset(10, 10, { labelRows: 100, labelPositives: 10, listsWithoutPositive: 0, ...extra });

  it('null_item_id_ratio and null_label_ratio are increases over the baseline; null labels are left out of the positive rate', () => {
    const base = baseline(labelled(), { a: numeric([1, 2]) });
    // 5 rows without an item id; 20 rows without a label, 8 positives among the 80 labelled rows.
    const cur = day('2025-03-03', labelled({ nullItemIdRows: 5, labelRows: 80, labelPositives: 8 }), { a: numeric([1, 2]) });
    const findings = evaluateDay(cfg, base, cur);
    expect(one(findings, null, 'null_item_id_ratio')).toMatchObject({ value: 0.05, score: 0.05, status: 'critical', evidence: { rows: 5 } });
    expect(one(findings, null, 'null_label_ratio')).toMatchObject({ value: 0.2, score: 0.2, status: 'critical', evidence: { rows: 20 } });
    // 8 / 80 = 10 %, as in the baseline: the unlabelled rows are not negatives.
    expect(one(findings, null, 'label_positive_ratio')).toMatchObject({ value: 1, status: 'ok' });
  });

  it('without a single baseline day, every check against the baseline is ok and says "no baseline yet"', () => {
    const empty = { ...baseline(dataset(0, 1, { rows: 0, lists: 0, listSizeCounts: [] }), {}), days: [] };
    // Half the lists without a positive: against a baseline of 0 % this paged on the first run.
    const cur = day('2025-03-03', labelled({ listsWithoutPositive: 5, nullItemIdRows: 3, listsWithDuplicateItems: 2 }), { a: numeric([1, 2], { quality: quality(3, { nulls: 1 }) }) });
    const findings = evaluateDay(cfg, empty, cur);
    expect(findings.filter((f) => f.status !== 'ok')).toEqual([]);
    for (const check of ['no_positive_list_ratio', 'null_item_id_ratio', 'duplicate_item_ratio', 'null_label_ratio']) {
      expect(one(findings, null, check).summary, check).toContain('no baseline yet');
    }
    expect(one(findings, null, 'no_positive_list_ratio')).toMatchObject({ value: 0.5, score: 0, evidence: { baseline: null } });
    expect(one(findings, 'a', 'null_ratio').summary).toContain('no baseline yet');
    // A non-nullable feature is judged against zero nulls without a baseline.
    const strict = evaluateDay(config([{ name: 'a', nullable: false }], { source: { table: 'shop.results', columns: { label: 'clicked' } } }), empty, cur);
    expect(one(strict, 'a', 'null_ratio')).toMatchObject({ score: 1 / 3, status: 'critical' });
  });
});
