import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { loadConfigFile } from '../../../src/config/index.ts';
import {
  CATEGORIES,
  DEMO_FAULTS,
  DEMO_SCENARIO,
  DEMO_TABLE,
  DEMO_TABLE_JSONB,
  FEATURES,
  LABEL_COLUMN,
  NEW_CATEGORY,
  NOMINAL_SD,
  NULLABLE_FEATURES,
  SCORE_COLUMN,
  addDays,
  faultsOn,
  generateDay,
  scenarioDates,
  withStartDate,
  type FaultPlan,
  type Row,
  type ScenarioOptions,
} from '../../../demo-data/index.ts';

const BASE: ScenarioOptions = { startDate: '2025-02-03', days: 14, listsPerDay: 300, meanListSize: 20, seed: 99 };
const DAY = '2025-02-05'; // a Wednesday

const rowsOf = (opts: ScenarioOptions, date = DAY): Row[] => [...generateDay(opts, date)];
const withFaults = (...faults: Omit<FaultPlan, 'date'>[]): ScenarioOptions => ({ ...BASE, faults: faults.map((f) => ({ date: DAY, ...f })) });

function byList(rows: Row[]): Row[][] {
  const lists = new Map<string, Row[]>();
  for (const r of rows) {
    const key = r.list_id as string;
    let l = lists.get(key);
    if (l === undefined) lists.set(key, (l = []));
    l.push(r);
  }
  return [...lists.values()];
}

const nums = (rows: Row[], f: string): number[] => rows.map((r) => r[f]).filter((v): v is number => typeof v === 'number');
const mean = (x: number[]): number => x.reduce((a, b) => a + b, 0) / x.length;
const popSd = (x: number[]): number => {
  const m = mean(x);
  return Math.sqrt(x.reduce((a, b) => a + (b - m) ** 2, 0) / x.length);
};
/** Empirical quantile, type 1 (inverse of the empirical CDF). */
const quantile = (sorted: number[], p: number): number => sorted[Math.max(0, Math.ceil(p * sorted.length) - 1)];
/** Two-sample KS statistic D, ties handled by advancing both samples past each value. */
function ksD(a: number[], b: number[]): number {
  const x = [...a].sort((p, q) => p - q);
  const y = [...b].sort((p, q) => p - q);
  let i = 0;
  let j = 0;
  let d = 0;
  while (i < x.length && j < y.length) {
    const v = Math.min(x[i], y[j]);
    while (i < x.length && x[i] <= v) i++;
    while (j < y.length && y[j] <= v) j++;
    d = Math.max(d, Math.abs(i / x.length - j / y.length));
  }
  return d;
}

function expectRulesHold(rows: Row[]): void {
  for (const list of byList(rows)) {
    const n = list.length;
    const norm = nums(list, 'text_match_norm');
    expect(Math.min(...norm)).toBe(0);
    expect(Math.max(...norm)).toBe(1);
    const z = nums(list, 'price_z');
    const allSamePrice = new Set(list.map((r) => r.price)).size === 1;
    if (!allSamePrice) {
      expect(Math.abs(mean(z))).toBeLessThan(1e-9);
      expect(Math.abs(popSd(z) - 1)).toBeLessThan(1e-9);
    }
    expect(nums(list, 'popularity_rank').sort((a, b) => a - b)).toEqual(Array.from({ length: n }, (_, i) => i + 1));
    expect(Math.abs(nums(list, 'click_share').reduce((a, b) => a + b, 0) - 1)).toBeLessThan(1e-9);
    expect(list.map((r) => r.position)).toEqual(Array.from({ length: n }, (_, i) => i + 1));
  }
}

describe('generateDay: determinism', () => {
  it('gives the same rows for the same seed and date', () => {
    expect(rowsOf(BASE)).toEqual(rowsOf(BASE));
  });

  it('gives other rows for another seed or another date', () => {
    const a = rowsOf(BASE);
    const b = rowsOf({ ...BASE, seed: 100 });
    expect(b.map((r) => r.text_match)).not.toEqual(a.map((r) => r.text_match));
    const c = rowsOf(BASE, addDays(DAY, 7));
    expect(c.map((r) => r.text_match)).not.toEqual(a.map((r) => r.text_match));
  });

  it("does not depend on the scenario's start or length, only on the date", () => {
    expect(rowsOf({ ...BASE, startDate: '2024-12-30', days: 60 })).toEqual(rowsOf(BASE));
  });
});

describe('generateDay: a clean day', () => {
  const rows = rowsOf(BASE);
  const lists = byList(rows);

  it('has about listsPerDay x weekday factor lists of about meanListSize items', () => {
    expect(lists.length).toBeGreaterThan(0.8 * BASE.listsPerDay);
    expect(lists.length).toBeLessThan(1.1 * BASE.listsPerDay);
    expect(rows.length / lists.length).toBeGreaterThan(17);
    expect(rows.length / lists.length).toBeLessThan(23);
    expect(Math.min(...lists.map((l) => l.length))).toBeGreaterThanOrEqual(2);
  });

  it('holds every within-list rule exactly (minmax, zscore, rank, sum_to_one)', () => {
    expectRulesHold(rows);
  });

  it('keeps the query-level feature constant inside each list, and varies it across lists', () => {
    for (const list of lists) expect(new Set(list.map((r) => r.query_length)).size).toBe(1);
    expect(new Set(lists.map((l) => l[0].query_length)).size).toBeGreaterThan(3);
  });

  it('has unique items per list, ids and dates filled in', () => {
    for (const list of lists) expect(new Set(list.map((r) => r.item_id)).size).toBe(list.length);
    for (const r of rows) {
      expect(r.snapshot_date).toBe(DAY);
      expect(r.list_id).toMatch(/^imp_20250205_\d{5}$/);
      expect(r.item_id).toMatch(/^itm-\d{6}$/);
      expect(Number.isFinite(r.model_score)).toBe(true);
    }
  });

  it('stays inside the declared ranges, with nulls only where the feature allows them', () => {
    for (const f of FEATURES) {
      for (const r of rows) {
        const v = r[f.name];
        if (v === null) {
          expect(NULLABLE_FEATURES).toContain(f.name);
          continue;
        }
        if (f.kind === 'categorical') expect(CATEGORIES as readonly string[]).toContain(v);
        else if (f.kind === 'binary') expect([0, 1]).toContain(v);
        else {
          expect(typeof v).toBe('number');
          expect(Number.isFinite(v)).toBe(true);
          if (f.range?.min !== undefined) expect(v as number).toBeGreaterThanOrEqual(f.range.min);
          if (f.range?.max !== undefined) expect(v as number).toBeLessThanOrEqual(f.range.max);
        }
      }
    }
    const ratingNulls = rows.filter((r) => r.seller_rating === null).length / rows.length;
    expect(ratingNulls).toBeGreaterThan(0.01);
    expect(ratingNulls).toBeLessThan(0.1);
  });

  it('has a point mass at zero in the review counts and a heavy tail', () => {
    const reviews = nums(rows, 'review_count');
    const zeros = reviews.filter((v) => v === 0).length / reviews.length;
    expect(zeros).toBeGreaterThan(0.25);
    expect(zeros).toBeLessThan(0.6);
    expect(Math.max(...reviews)).toBeGreaterThan(20 * mean(reviews));
    expect(reviews.every((v) => Number.isInteger(v))).toBe(true);
  });

  it('uses about six categories with no dominant one', () => {
    const shares = CATEGORIES.map((c) => rows.filter((r) => r.plant_family === c).length / rows.length);
    for (const s of shares) {
      expect(s).toBeGreaterThan(0.05);
      expect(s).toBeLessThan(0.35);
    }
  });
});

describe('generateDay: labels and seasonality over a week', () => {
  const week = scenarioDates({ ...BASE, days: 7 }).map((d) => rowsOf(BASE, d));
  const all = week.flat();

  it('has a sparse click label (3-8 % positive) that falls with position', () => {
    const rate = all.filter((r) => r.clicked === 1).length / all.length;
    expect(rate).toBeGreaterThan(0.03);
    expect(rate).toBeLessThan(0.08);
    const rateAt = (p: number): number => {
      const at = all.filter((r) => r.position === p);
      return at.filter((r) => r.clicked === 1).length / at.length;
    };
    expect(rateAt(1)).toBeGreaterThan(2 * rateAt(15));
  });

  it('has more traffic on the weekend and no two identical days', () => {
    const listsPerDay = week.map((d) => new Set(d.map((r) => r.list_id)).size);
    const weekday = mean(listsPerDay.slice(0, 5)); // 2025-02-03 is a Monday
    const weekend = mean(listsPerDay.slice(5));
    expect(weekend).toBeGreaterThan(1.15 * weekday);
    expect(new Set(week.map((d) => d.length)).size).toBe(7);
    expect(mean(nums(week[5], 'query_length'))).toBeGreaterThan(mean(nums(week[2], 'query_length')));
  });

  it("has nominal standard deviations within 15 % of the demo's first clean week", () => {
    // NOMINAL_SD was measured on the demo's seed; heavy-tailed review counts make the sd
    // of another seed's catalogue differ by more than that.
    const demoClean = { ...DEMO_SCENARIO, faults: [] };
    const demoWeek = scenarioDates(demoClean)
      .slice(0, 7)
      .flatMap((d) => rowsOf(demoClean, d));
    for (const [name, sd] of Object.entries(NOMINAL_SD)) {
      const measured = popSd(nums(demoWeek, name));
      expect(Math.abs(measured / sd - 1), name).toBeLessThan(0.15);
    }
  });
});

describe('faults', () => {
  const clean = rowsOf(BASE);

  it('act only on their dates', () => {
    const opts = withFaults({ kind: 'unit_change', feature: 'price', untilDate: addDays(DAY, 1) });
    expect(rowsOf(opts, addDays(DAY, -1))).toEqual(rowsOf(BASE, addDays(DAY, -1)));
    expect(rowsOf(opts, addDays(DAY, 2))).toEqual(rowsOf(BASE, addDays(DAY, 2)));
    expect(rowsOf(opts, addDays(DAY, 1))).not.toEqual(rowsOf(BASE, addDays(DAY, 1)));
    expect(faultsOn(opts, DAY)).toHaveLength(1);
    expect(faultsOn(opts, addDays(DAY, 2))).toHaveLength(0);
  });

  it('mean_shift adds amount x nominal sd to every value and leaves other features alone', () => {
    const rows = rowsOf(withFaults({ kind: 'mean_shift', feature: 'semantic_similarity', amount: 0.5 }));
    expect(rows).toHaveLength(clean.length);
    rows.forEach((r, i) => {
      expect(r.semantic_similarity as number).toBeCloseTo((clean[i].semantic_similarity as number) + 0.5 * NOMINAL_SD.semantic_similarity, 12);
      expect({ ...r, semantic_similarity: 0 }).toEqual({ ...clean[i], semantic_similarity: 0 });
    });
  });

  it('mean_shift on a binary feature turns about amount of the zeros into ones', () => {
    const rows = rowsOf(withFaults({ kind: 'mean_shift', feature: 'ships_free', amount: 0.5 }));
    const zerosBefore = clean.filter((r) => r.ships_free === 0).length;
    const flipped = rows.filter((r, i) => r.ships_free === 1 && clean[i].ships_free === 0).length;
    expect(rows.every((r, i) => !(clean[i].ships_free === 1 && r.ships_free === 0))).toBe(true);
    // Binomial(zerosBefore, 0.5): 5 standard errors.
    expect(Math.abs(flipped / zerosBefore - 0.5)).toBeLessThan(5 * Math.sqrt(0.25 / zerosBefore));
  });

  it('creeping_drift grows by amount x sd every day', () => {
    const opts: ScenarioOptions = { ...BASE, faults: [{ date: DAY, untilDate: addDays(DAY, 5), kind: 'creeping_drift', feature: 'text_match', amount: 0.1 }] };
    for (const k of [0, 3]) {
      const date = addDays(DAY, k);
      const base = rowsOf(BASE, date);
      rowsOf(opts, date).forEach((r, i) => {
        expect(r.text_match as number).toBeCloseTo((base[i].text_match as number) + 0.1 * (k + 1) * NOMINAL_SD.text_match, 12);
      });
    }
  });

  it('unit_change multiplies the values, and a per-list z-score of the log does not see it', () => {
    const rows = rowsOf(withFaults({ kind: 'unit_change', feature: 'price', amount: 100 }));
    rows.forEach((r, i) => {
      expect(r.price as number).toBeCloseTo((clean[i].price as number) * 100, 9);
      expect(r.price_z).toBe(clean[i].price_z);
    });
  });

  it('null_spike nulls about the given fraction and leaves the other values as they were', () => {
    const rows = rowsOf(withFaults({ kind: 'null_spike', feature: 'review_count', amount: 0.2 }));
    const nulls = rows.filter((r) => r.review_count === null).length / rows.length;
    expect(Math.abs(nulls - 0.2)).toBeLessThan(5 * Math.sqrt((0.2 * 0.8) / rows.length));
    rows.forEach((r, i) => {
      if (r.review_count !== null) expect(r.review_count).toBe(clean[i].review_count);
    });
  });

  it('minmax_raw writes the unnormalised values, breaking the minmax rule in every list', () => {
    const rows = rowsOf(withFaults({ kind: 'minmax_raw', feature: 'text_match_norm' }));
    rows.forEach((r, i) => expect(r.text_match_norm).toBe(clean[i].text_match));
    const broken = byList(rows).filter((l) => Math.min(...nums(l, 'text_match_norm')) !== 0 || Math.max(...nums(l, 'text_match_norm')) !== 1);
    expect(broken.length).toBe(byList(rows).length);
  });

  it('stuck_default gives every row one value', () => {
    const rows = rowsOf(withFaults({ kind: 'stuck_default', feature: 'listing_age_days', amount: -1 }));
    expect(new Set(rows.map((r) => r.listing_age_days))).toEqual(new Set([-1]));
    const cats = rowsOf(withFaults({ kind: 'stuck_default', feature: 'plant_family' }));
    expect(new Set(cats.map((r) => r.plant_family))).toEqual(new Set(['unknown']));
  });

  it('flat_within_lists makes every list flat while the day distribution stays close', () => {
    const rows = rowsOf(withFaults({ kind: 'flat_within_lists', feature: 'photo_quality' }));
    const lists = byList(rows);
    const cleanLists = byList(clean);
    lists.forEach((l, k) => {
      expect(new Set(l.map((r) => r.photo_quality)).size).toBe(1);
      // The list's one value is one of its own clean values: a draw from the usual marginal.
      expect(cleanLists[k].map((r) => r.photo_quality)).toContain(l[0].photo_quality);
    });
    const a = nums(clean, 'photo_quality').sort((x, y) => x - y);
    const b = nums(rows, 'photo_quality').sort((x, y) => x - y);
    for (const p of [0.1, 0.25, 0.5, 0.75, 0.9]) expect(Math.abs(quantile(a, p) - quantile(b, p)), `quantile ${p}`).toBeLessThan(0.05);
    // Below the default KS warn threshold (0.1), so only a within-list check can see it.
    expect(ksD(a, b)).toBeLessThan(0.1);
    // The clean day has (almost) no flat lists.
    expect(cleanLists.filter((l) => new Set(l.map((r) => r.photo_quality)).size === 1).length).toBeLessThan(0.02 * cleanLists.length);
  });

  it('list_truncation cuts every list to a fraction of its size and recomputes the features', () => {
    const rows = rowsOf(withFaults({ kind: 'list_truncation', amount: 0.4 }));
    const lists = byList(rows);
    const cleanLists = byList(clean);
    expect(lists.length).toBe(cleanLists.length);
    lists.forEach((l, k) => expect(l.length).toBe(Math.max(2, Math.round(cleanLists[k].length * 0.4))));
    expect(rows.length / clean.length).toBeLessThan(0.45);
    expectRulesHold(rows);
  });

  it('duplicate_items repeats an item in about the given share of lists, keeping positions and rules', () => {
    const rows = rowsOf(withFaults({ kind: 'duplicate_items', amount: 0.3 }));
    const lists = byList(rows);
    const eligible = lists.filter((l) => l.length >= 3).length;
    const withDup = lists.filter((l) => new Set(l.map((r) => r.item_id)).size === l.length - 1).length;
    const other = lists.filter((l) => new Set(l.map((r) => r.item_id)).size < l.length - 1).length;
    expect(other).toBe(0);
    expect(Math.abs(withDup / eligible - 0.3)).toBeLessThan(5 * Math.sqrt((0.3 * 0.7) / eligible));
    expectRulesHold(rows);
  });

  it('new_category moves about the given share of items into a new category, consistently per item', () => {
    const rows = rowsOf(withFaults({ kind: 'new_category', feature: 'plant_family', amount: 0.3 }));
    const share = rows.filter((r) => r.plant_family === NEW_CATEGORY).length / rows.length;
    expect(share).toBeGreaterThan(0.2);
    expect(share).toBeLessThan(0.4);
    const byItem = new Map<string, Set<string | number | null>>();
    for (const r of rows) byItem.set(r.item_id, (byItem.get(r.item_id) ?? new Set()).add(r.plant_family));
    for (const cats of byItem.values()) expect(cats.size).toBe(1);
  });

  it('nonfinite writes NaN and both infinities into about the given fraction of rows', () => {
    const rows = rowsOf(withFaults({ kind: 'nonfinite', feature: 'photo_quality', amount: 0.03 }));
    const v = rows.map((r) => r.photo_quality as number);
    const nan = v.filter((x) => Number.isNaN(x)).length;
    const pos = v.filter((x) => x === Infinity).length;
    const neg = v.filter((x) => x === -Infinity).length;
    expect(nan).toBeGreaterThan(0);
    expect(pos).toBeGreaterThan(0);
    expect(neg).toBeGreaterThan(0);
    expect(Math.abs((nan + pos + neg) / rows.length - 0.03)).toBeLessThan(5 * Math.sqrt((0.03 * 0.97) / rows.length));
  });

  it('type_error writes numbers as text with a decimal comma', () => {
    const rows = rowsOf(withFaults({ kind: 'type_error', feature: 'price', amount: 0.05 }));
    const texts = rows.filter((r) => typeof r.price === 'string');
    expect(texts.length).toBeGreaterThan(0);
    for (const r of texts) expect(r.price).toMatch(/^\d+,\d{2}$/);
    expect(Math.abs(texts.length / rows.length - 0.05)).toBeLessThan(5 * Math.sqrt((0.05 * 0.95) / rows.length));
  });

  const sortedValues = (l: Row[], name: string): number[] => l.map((r) => r[name] as number).sort((x, y) => x - y);

  it('polarity_flip reverses the order of the values inside each list and keeps each list\'s values', () => {
    const lists = byList(rowsOf(withFaults({ kind: 'polarity_flip', feature: 'semantic_similarity' })));
    const cleanLists = byList(clean);
    lists.forEach((l, k) => {
      const before = cleanLists[k].map((r) => r.semantic_similarity as number);
      const after = l.map((r) => r.semantic_similarity as number);
      expect(sortedValues(l, 'semantic_similarity')).toEqual(sortedValues(cleanLists[k], 'semantic_similarity'));
      // The largest value goes where the smallest was, and the other way round.
      expect(after[before.indexOf(Math.max(...before))]).toBe(Math.min(...before));
      expect(after[before.indexOf(Math.min(...before))]).toBe(Math.max(...before));
      expect(l.map((r) => ({ ...r, semantic_similarity: 0 }))).toEqual(cleanLists[k].map((r) => ({ ...r, semantic_similarity: 0 })));
    });
  });

  it('shuffle_within_lists keeps each list\'s values and moves them between its items', () => {
    const lists = byList(rowsOf(withFaults({ kind: 'shuffle_within_lists', feature: 'text_match' })));
    const cleanLists = byList(clean);
    let moved = 0;
    lists.forEach((l, k) => {
      expect(sortedValues(l, 'text_match')).toEqual(sortedValues(cleanLists[k], 'text_match'));
      if (l.some((r, i) => r.text_match !== cleanLists[k][i].text_match)) moved++;
    });
    expect(moved).toBeGreaterThan(0.9 * lists.length);
  });

  it('order_scrambled serves about amount of the lists in another order, with the same items and values', () => {
    const lists = byList(rowsOf(withFaults({ kind: 'order_scrambled', amount: 0.3 })));
    const cleanLists = byList(clean);
    let scrambled = 0;
    lists.forEach((l, k) => {
      const key = (r: Row): string => r.item_id;
      expect([...l].sort((a, b) => key(a).localeCompare(key(b))).map((r) => ({ ...r, position: 0, clicked: 0 }))).toEqual(
        [...cleanLists[k]].sort((a, b) => key(a).localeCompare(key(b))).map((r) => ({ ...r, position: 0, clicked: 0 })),
      );
      if (l.some((r, i) => r.item_id !== cleanLists[k][i].item_id)) scrambled++;
    });
    // Binomial(lists, 0.3), 5 standard errors.
    expect(Math.abs(scrambled / lists.length - 0.3)).toBeLessThan(5 * Math.sqrt(0.21 / lists.length));
  });

  it('rejects faults that cannot apply', () => {
    const bad: Omit<FaultPlan, 'date'>[] = [
      { kind: 'mean_shift' },
      { kind: 'mean_shift', feature: 'no_such_feature' },
      { kind: 'minmax_raw', feature: 'price' },
      { kind: 'unit_change', feature: 'plant_family' },
      { kind: 'new_category', feature: 'price' },
      { kind: 'flat_within_lists', feature: 'query_length' },
      { kind: 'polarity_flip', feature: 'query_length' },
      { kind: 'shuffle_within_lists', feature: 'plant_family' },
    ];
    for (const f of bad) expect(() => rowsOf(withFaults(f)), f.kind).toThrow(RangeError);
    expect(() => rowsOf({ ...BASE, faults: [{ date: DAY, untilDate: addDays(DAY, -1), kind: 'list_truncation' }] })).toThrow(/untilDate/);
    expect(() => rowsOf(BASE, '2025-02-30')).toThrow(/calendar date/);
  });
});

describe('the demo story', () => {
  it('keeps 28 clean days before the first fault, and every fault inside the five weeks and a day', () => {
    const dates = scenarioDates(DEMO_SCENARIO);
    expect(dates).toHaveLength(36);
    const first = DEMO_FAULTS.map((f) => f.date).sort()[0];
    expect(first).toBe(addDays(DEMO_SCENARIO.startDate, 28));
    for (const f of DEMO_FAULTS) expect(dates).toContain(f.untilDate ?? f.date);
    for (const d of dates.slice(0, 28)) expect(faultsOn(DEMO_SCENARIO, d)).toEqual([]);
  });

  it('covers the nine breaks the README tells, on valid features', () => {
    expect(new Set(DEMO_FAULTS.map((f) => f.kind))).toEqual(
      new Set(['mean_shift', 'unit_change', 'null_spike', 'minmax_raw', 'flat_within_lists', 'list_truncation', 'new_category', 'creeping_drift', 'polarity_flip']),
    );
    // Generating a small version of each fault day runs the fault validation.
    const small = { ...DEMO_SCENARIO, listsPerDay: 5 };
    for (const f of DEMO_FAULTS) expect(rowsOf(small, f.date).length).toBeGreaterThan(0);
  });

  it('is told in README.md: every fault with its kind, feature and dates', () => {
    const readme = readFileSync(new URL('../../../demo-data/README.md', import.meta.url), 'utf8');
    for (const f of DEMO_FAULTS) {
      const dates = f.untilDate !== undefined ? `${f.date} to [A-Za-z]{3} ${f.untilDate}` : `${f.date}`;
      const row = new RegExp(`\\| [A-Za-z]{3} ${dates} \\|[^\\n]*\\| \`${f.kind}\`${f.feature !== undefined ? ` on \`${f.feature}\`` : ''}`);
      expect(readme, `${f.kind} ${f.date}`).toMatch(row);
    }
  });

  it('withStartDate moves the scenario and its faults together', () => {
    const moved = withStartDate(DEMO_SCENARIO, '2025-06-02');
    expect(scenarioDates(moved)[0]).toBe('2025-06-02');
    // DEMO_FAULTS[0] runs from day 29 to day 35: 2025-06-02 + 28 days and + 34 days.
    expect(moved.faults?.[0].date).toBe('2025-06-30');
    expect(moved.faults?.[0].untilDate).toBe('2025-07-06');
  });
});

describe('the demo configs', () => {
  for (const [file, table, jsonb] of [
    ['demo-data/plumbline.demo.yaml', DEMO_TABLE, false],
    ['demo-data/plumbline.demo-jsonb.yaml', DEMO_TABLE_JSONB, true],
  ] as const) {
    it(`${file} validates and declares exactly the generated features`, () => {
      const config = loadConfigFile(new URL(`../../../${file}`, import.meta.url).pathname);
      expect(config.source.table).toBe(table);
      expect(config.source.columns.label).toBe(LABEL_COLUMN);
      expect(config.source.columns.score).toBe(SCORE_COLUMN);
      expect(config.source.featuresColumn).toBe(jsonb ? 'features' : undefined);
      expect(config.baseline.window).toEqual({ type: 'trailing', days: 28 });
      // The declared features, then the model score column, which Plumbline watches as a feature too.
      expect(config.features.map((f) => f.name)).toEqual([...FEATURES.map((f) => f.name), SCORE_COLUMN]);
      for (const f of FEATURES) {
        const c = config.features.find((x) => x.name === f.name);
        expect(c?.kind, f.name).toBe(f.kind);
        expect(c?.scope, f.name).toBe(f.scope);
        expect(c?.withinList?.rule, f.name).toBe(f.rule);
        expect(c?.range, f.name).toEqual(f.range);
        expect(c?.nullable, f.name).toBe(NULLABLE_FEATURES.includes(f.name));
        expect(c?.key, f.name).toBe(jsonb ? f.name : undefined);
      }
    });
  }
});
