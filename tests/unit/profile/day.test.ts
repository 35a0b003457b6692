/**
 * A day's columns -> its profile, on a hand-made day of three lists and two rows without a
 * list id, rows of each list interleaved: grouping, dataset counts (sizes, duplicates,
 * position gaps including null positions, singletons, labels), quality counts and the
 * within-list counts of a feature per rule.
 */
import { describe, expect, it } from 'vitest';
import { parseConfig } from '../../../src/config/index.ts';
import { MAX_LIST_SIZE_BIN, buildDayProfile, countsOverBins, groupByList, type NumericProfile } from '../../../src/profile/index.ts';
import { NULL_POSITION, type DayColumns } from '../../../src/source/index.ts';
import { MISSING_NULL, MISSING_TYPE_ERROR, type BinSpec } from '../../../src/stats/index.ts';

describe('groupByList', () => {
  it('groups row indexes by list, keeps row order inside a list, and leaves out rows without a list', () => {
    const g = groupByList(Int32Array.of(1, -1, 0, 1, -1, 2, 0, 1), 3);
    expect(Array.from(g.start)).toEqual([0, 2, 5, 6]);
    expect(Array.from(g.order)).toEqual([2, 6, 0, 3, 7, 5]);
  });

  it('handles lists without rows, no lists, and only null list ids', () => {
    const g = groupByList(Int32Array.of(2, 2, 0), 4);
    expect(Array.from(g.start)).toEqual([0, 1, 1, 3, 3]);
    expect(Array.from(g.order)).toEqual([2, 0, 1]);
    const none = groupByList(Int32Array.of(-1, -1), 0);
    expect(Array.from(none.start)).toEqual([0]);
    expect(none.order.length).toBe(0);
  });
});

/*
 * The day, row by row (list, item, position, label, then the features):
 *
 *  row list item pos  label | norm  z        rank sum   query instrument
 *   0   L0   A    1    1    | 0     -1.5/s   3    0.1   4     piano
 *   1   L1   E    0    0    | 0.1   1        1    0.5   2     piano
 *   2   --   X    1    1    | 0.9   0        1    0.3   7     null
 *   3   L0   B    2    0    | null  -0.5/s   1    0.2   4     piano
 *   4   L2   G   null  null | 0.7   0        1    0.2   3     harp
 *   5   L1   E    2    0    | 0.5   2        1    0.5   2     violin
 *   6   L0   C    3    0    | 0.5   0.5/s    4    0.3   4     piano
 *   7   --  null  2    0    | NaN   0        1    0.3   7     piano
 *   8   L1   F    3   null  | 1     3        2    0.5   2     piano
 *   9   L0  null  4    0    | 1     1.5/s    2    0.4   4     piano
 *
 * s = sqrt(1.25), the population standard deviation of 1, 2, 3, 4: L0's z values are the
 * z-scores of 1..4. L0 is a good list for every rule; L1 breaks minmax (min 0.1), zscore
 * (raw values 1, 2, 3), rank (1, 1, 2) and is flat in `sum` (0.5 three times); L2 is a
 * singleton with a null position.
 */
const S = Math.sqrt(1.25);
const LIST = [0, 1, -1, 0, 2, 1, 0, -1, 1, 0];
const ITEM = ['A', 'E', 'X', 'B', 'G', 'E', 'C', null, 'F', null];
const POSITION = [1, 0, 1, 2, NULL_POSITION, 2, 3, 2, 3, 4];
const LABEL = [1, 0, 1, 0, Number.NaN, 0, 0, 0, Number.NaN, 0];
const NORM = [0, 0.1, 0.9, Number.NaN, 0.7, 0.5, 0.5, Number.NaN, 1, 1];
const NORM_MISSING = [0, 0, 0, MISSING_NULL, 0, 0, 0, 0, 0, 0]; // row 7 is NaN, a value
const Z = [-1.5 / S, 1, 0, -0.5 / S, 0, 2, 0.5 / S, 0, 3, 1.5 / S];
const RANK = [3, 1, 1, 1, 1, 1, 4, 1, 2, 2];
const SUM = [0.1, 0.5, 0.3, 0.2, 0.2, 0.5, 0.3, 0.3, 0.5, 0.4];
const QUERY = [4, 2, 7, 4, 3, 2, 4, 7, 2, 4];
const INSTRUMENT = [0, 0, -1, 0, 1, 2, 0, 0, 0, 0]; // piano, harp, violin
const ITEM_HASH: Record<string, number> = { A: 11, B: 12, C: 13, D: 14, E: 15, F: 16, G: 17, X: 18, Y: 19 };

const config = parseConfig({
  source: { table: 'shop.results', columns: { label: 'clicked' } },
  features: [
    { name: 'norm', withinList: { rule: 'minmax' }, range: { min: 0, max: 0.8 } },
    { name: 'z', withinList: { rule: 'zscore', tolerance: 1e-9 } },
    { name: 'rank', withinList: { rule: 'rank' } },
    { name: 'sum', withinList: { rule: 'sum_to_one' } },
    { name: 'query', scope: 'list' },
    { name: 'instrument', kind: 'categorical' },
  ],
});

function columns(): DayColumns {
  return {
    date: '2025-03-10',
    rows: 10,
    totalRows: 10,
    sampled: false,
    listOf: Int32Array.from(LIST),
    lists: 3,
    itemHash: Float64Array.from(ITEM.map((i) => (i === null ? Number.NaN : ITEM_HASH[i]!))),
    position: Int32Array.from(POSITION),
    label: Float64Array.from(LABEL),
    numeric: [Float64Array.from(NORM), Float64Array.from(Z), Float64Array.from(RANK), Float64Array.from(SUM), Float64Array.from(QUERY), null],
    missing: [Uint8Array.from(NORM_MISSING), null, null, null, null, null],
    categorical: [null, null, null, null, null, { codes: Int32Array.from(INSTRUMENT), dictionary: ['piano', 'harp', 'violin'] }],
  };
}

describe('buildDayProfile on three lists', () => {
  it('counts the dataset: sizes, duplicates, position gaps, singletons, rows without a list, labels', async () => {
    const p = await buildDayProfile(columns(), config, null);
    const sizes = new Array<number>(MAX_LIST_SIZE_BIN).fill(0);
    sizes[0] = 1; // L2
    sizes[2] = 1; // L1
    sizes[3] = 1; // L0
    expect(p.dataset).toEqual({
      rows: 10,
      lists: 3,
      nullListIdRows: 2,
      nullItemIdRows: 2, // rows 7 (no list) and 9 (in L0, which then holds no duplicate)
      listSizeCounts: sizes,
      singletonLists: 1,
      listsWithDuplicateItems: 1, // L1 holds E twice
      listsWithPositionGaps: 2, // L1: 0, 2, 3; L2: a null position
      labelRows: 6, // labelled rows inside lists: 4 in L0, 2 in L1
      labelPositives: 1,
      listsWithoutPositive: 2, // L1, and L2 (no labelled row)
    });
    expect(p).toMatchObject({ date: '2025-03-10', totalRows: 10, totalLists: 3, sampled: false });
    expect(Object.keys(p.features)).toEqual(['norm', 'z', 'rank', 'sum', 'query', 'instrument']);
  });

  it('counts within-list judgements per rule (lists of two or more values)', async () => {
    const p = await buildDayProfile(columns(), config, null);
    const wl = (name: string) => p.features[name]!.withinList;
    expect(wl('norm')).toEqual({ listsJudged: 2, flatLists: 0, ruleViolations: 1 });
    expect(wl('z')).toEqual({ listsJudged: 2, flatLists: 0, ruleViolations: 1 });
    expect(wl('rank')).toEqual({ listsJudged: 2, flatLists: 0, ruleViolations: 1 });
    expect(wl('sum')).toEqual({ listsJudged: 2, flatLists: 1, ruleViolations: 0 });
    // A list-level feature is constant in a list by design: no within-list counts.
    expect(wl('query')).toBeNull();
    // Categorical: L0 is all piano (flat), L1 has piano and violin.
    expect(wl('instrument')).toEqual({ listsJudged: 2, flatLists: 1, ruleViolations: 0 });
  });

  it('counts quality over every row, including those without a list, and sorts the finite values', async () => {
    const p = await buildDayProfile(columns(), config, null);
    const norm = p.features['norm'] as NumericProfile;
    // Range [0, 0.8]: 0.9, 1 and 1 are out of range.
    expect(norm.quality).toEqual({ rows: 10, nulls: 1, nan: 1, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 3, finite: 8 });
    expect(Array.from(norm.sortedSample)).toEqual([0, 0.1, 0.5, 0.5, 0.7, 0.9, 1, 1]);
    expect(norm.distinct).toBe(6);
    expect(norm.mean).toBeCloseTo(4.7 / 8, 12);
    expect(norm.binCounts).toEqual([]);
    expect(p.features['instrument']).toEqual({
      kind: 'categorical',
      quality: { rows: 10, nulls: 1, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, finite: 9 },
      categories: new Map([['piano', 7], ['harp', 1], ['violin', 1]]),
      otherRows: 0,
      distinct: 3,
      withinList: { listsJudged: 2, flatLists: 1, ruleViolations: 0 },
    });
  });

  it('counts over the baseline bins when given, nulls and NaN in the last bin', async () => {
    const bins: Record<string, BinSpec> = { norm: { edges: [0.5], pointMass: [true] } };
    const p = await buildDayProfile(columns(), config, bins);
    // Bins (-inf, 0.5), [0.5, 0.5], (0.5, +inf), missing: 0 and 0.1; two 0.5; 0.7, 0.9, 1, 1; one null and one NaN.
    expect((p.features['norm'] as NumericProfile).binCounts).toEqual([2, 2, 4, 2]);
    expect((p.features['z'] as NumericProfile).binCounts).toEqual([]);
  });

  it('scales the list count of a sampled day like its rows', async () => {
    const p = await buildDayProfile({ ...columns(), sampled: true, totalRows: 1000 }, config, null);
    expect(p.totalRows).toBe(1000);
    expect(p.totalLists).toBe(300);
    expect(p.dataset.rows).toBe(10);
  });

  it('does not count two null item ids in one list as a duplicate', async () => {
    const cols = columns();
    cols.itemHash[1] = Number.NaN; // L1: E -> null
    cols.itemHash[5] = Number.NaN; // L1: E -> null
    expect((await buildDayProfile(cols, config, null)).dataset.listsWithDuplicateItems).toBe(0);
  });

  it('accepts positions starting at 0 and rejects a list starting at 2', async () => {
    const cols = columns();
    // L0 positions 1..4 -> 0..3: still no gap.
    for (const r of [0, 3, 6, 9]) cols.position[r] = cols.position[r]! - 1;
    expect((await buildDayProfile(cols, config, null)).dataset.listsWithPositionGaps).toBe(2);
    // buildDayProfile consumes the numeric columns: the second case starts from fresh ones.
    const shifted = columns();
    for (const r of [0, 3, 6, 9]) shifted.position[r] = shifted.position[r]! + 1; // 2..5
    expect((await buildDayProfile(shifted, config, null)).dataset.listsWithPositionGaps).toBe(3);
  });
});

describe('countsOverBins', () => {
  it('scales a sample up to the finite count and adds infinities and missing values', () => {
    const spec: BinSpec = { edges: [1, 2], pointMass: [false, false] }; // (-inf,1] (1,2] (2,+inf)
    const sample = Float64Array.of(0.5, 1.5, 1.7, 3);
    const q = { rows: 14, nulls: 1, nan: 2, posInf: 1, negInf: 1, typeErrors: 1, outOfRange: 0, finite: 8 };
    // Each sample value stands for 8 / 4 = 2 finite values.
    expect(countsOverBins(spec, sample, q)).toEqual([2 + 1, 4, 2 + 1, 1 + 2 + 1]);
    // The counts add up to the rows.
    expect(countsOverBins(spec, sample, q).reduce((a, b) => a + b, 0)).toBe(14);
  });

  it('handles a column without finite values', () => {
    const spec: BinSpec = { edges: [1], pointMass: [false] };
    expect(countsOverBins(spec, new Float64Array(0), { rows: 3, nulls: 3, nan: 0, posInf: 0, negInf: 0, typeErrors: 0, outOfRange: 0, finite: 0 })).toEqual([0, 0, 3]);
  });

  it('uses the missing codes of a jsonb column (type errors are missing too)', async () => {
    const cfg = parseConfig({ source: { table: 't', featuresColumn: 'extras' }, features: [{ name: 'k', key: 'k' }] });
    const cols: DayColumns = {
      date: '2025-03-10',
      rows: 4,
      totalRows: 4,
      sampled: false,
      listOf: Int32Array.of(0, 0, 0, 0),
      lists: 1,
      itemHash: Float64Array.of(1, 2, 3, 4),
      position: Int32Array.of(1, 2, 3, 4),
      label: null,
      numeric: [Float64Array.of(1, Number.NaN, Number.NaN, 2)],
      missing: [Uint8Array.of(0, MISSING_TYPE_ERROR, MISSING_NULL, 0)],
      categorical: [null],
    };
    const p = await buildDayProfile(cols, cfg, { k: { edges: [1.5], pointMass: [false] } });
    const k = p.features['k'] as NumericProfile;
    expect(k.quality).toMatchObject({ rows: 4, nulls: 1, typeErrors: 1, nan: 0, finite: 2 });
    expect(k.binCounts).toEqual([1, 1, 2]);
    expect(p.dataset).toMatchObject({ labelRows: 0, listsWithoutPositive: 0 });
  });
});
