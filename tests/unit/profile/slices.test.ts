/**
 * Slices of a day's columns: which slices a day has (top-k, the most frequent segment values,
 * the pooled rest), their rows, and that a slice's profile is exactly the profile of a day
 * made of those rows alone (the same profiler, on the same rows).
 */
import { describe, expect, it } from 'vitest';
import { parseConfig, type Config } from '../../../src/config/index.ts';
import { buildDayAndSliceProfiles, buildDayProfile, planSlices, planSlicesOfColumns, segmentLabel, sliceColumns, sliceRows, subsetColumns, tallySegment, type SliceDef, type SliceProfile } from '../../../src/profile/index.ts';
import { NULL_POSITION, type DayColumns } from '../../../src/source/index.ts';
import { MISSING_NULL, binEdgesFromSorted, ks2Sorted, radixSortedCopy, type BinSpec } from '../../../src/stats/index.ts';

/** Each slice profiled in full, on its own rows, without the day's shortcuts. */
async function fullSliceProfiles(cols: DayColumns, c: Config, defs: readonly SliceDef[], binsOf: (slice: string) => Record<string, BinSpec> | null): Promise<SliceProfile[]> {
  const out: SliceProfile[] = [];
  for (const def of defs) out.push({ slice: def.name, kind: def.kind, profile: await buildDayProfile(sliceColumns(cols, sliceRows(cols, def), c), c, binsOf(def.name)) });
  return out;
}

function config(slices: Config['slices'] | Record<string, unknown>): Config {
  return parseConfig(
    {
      source: { table: 'impressions' },
      features: [
        { name: 'score', withinList: { rule: 'minmax' } },
        { name: 'family', kind: 'categorical' },
      ],
      slices,
    },
    'test',
  );
}

/*
 * Twelve rows in four lists, row by row (list, position, market, score, family):
 *  L0: positions 1..4, market north; L1: positions 1..3, market south;
 *  L2: positions 1..3, market north; L3: positions 1, 2, market null; rows interleaved.
 */
const LIST = [0, 1, 0, 2, 1, 0, 3, 2, 0, 1, 2, 3];
const POS = [1, 1, 2, 1, 2, 3, 1, 2, 4, 3, 3, NULL_POSITION];
const MARKET = [0, 1, 0, 0, 1, 0, -1, 0, 0, 1, 0, -1]; // codes of ['north', 'south']
const SCORE = [0, 0.2, 0.5, 1, 1, 0.7, 0.3, 0, 1, 0, Number.NaN, 0.3];
const FAMILY = [0, 1, 0, 2, 1, 0, 0, 2, 1, 1, 2, -1]; // codes of ['fern', 'aroid', 'herb']

function day(): DayColumns {
  const n = LIST.length;
  const missing = new Uint8Array(new SharedArrayBuffer(n));
  missing[10] = MISSING_NULL;
  return {
    date: '2031-05-10',
    rows: n,
    totalRows: n,
    sampled: false,
    listOf: Int32Array.from(LIST),
    lists: 4,
    itemHash: Float64Array.from(LIST.map((l, i) => l * 100 + POS[i]!)),
    position: Int32Array.from(POS),
    label: null,
    numeric: [Float64Array.from(SCORE), null],
    missing: [missing, null],
    categorical: [null, { codes: Int32Array.from(FAMILY), dictionary: ['fern', 'aroid', 'herb'] }],
    segments: [{ codes: Int32Array.from(MARKET), dictionary: ['north', 'south'] }],
  };
}

/** The same rows as a day of their own, written out by hand (not through subsetColumns). */
function dayOf(rows: number[]): DayColumns {
  const d = day();
  const lists = [...new Set(rows.map((i) => LIST[i]!))];
  const missing = new Uint8Array(new SharedArrayBuffer(rows.length));
  rows.forEach((i, k) => (missing[k] = d.missing[0]![i]!));
  const fam = [...new Set(rows.map((i) => FAMILY[i]!).filter((c) => c >= 0))];
  return {
    ...d,
    rows: rows.length,
    totalRows: rows.length,
    listOf: Int32Array.from(rows.map((i) => lists.indexOf(LIST[i]!))),
    lists: lists.length,
    itemHash: Float64Array.from(rows.map((i) => d.itemHash[i]!)),
    position: Int32Array.from(rows.map((i) => POS[i]!)),
    numeric: [Float64Array.from(rows.map((i) => SCORE[i]!)), null],
    missing: [missing.some((x) => x !== 0) ? missing : null, null],
    categorical: [null, { codes: Int32Array.from(rows.map((i) => (FAMILY[i]! < 0 ? -1 : fam.indexOf(FAMILY[i]!)))), dictionary: fam.map((c) => ['fern', 'aroid', 'herb'][c]!) }],
  };
}

describe('planSlices', () => {
  it('names top-k slices and the most frequent segment values, pooling the rest and nulls', () => {
    const c = config({ topK: [2, 10], segments: [{ column: 'market', maxValues: 1, minRows: 2 }] });
    const defs = planSlicesOfColumns(c, day());
    expect(defs.map((d) => d.name)).toEqual(['top2', 'top10', 'segment:market=north', 'segment:market:other']);
    expect(defs[0]).toMatchObject({ kind: 'top', below: 3 });
    expect(defs[3]).toMatchObject({ kind: 'segment', value: null, chosen: ['north'] });
  });

  it('leaves out values and a rest below minRows, and counts positions from 0 when told', () => {
    const c = config({ topK: [1], firstPosition: 0, segments: [{ column: 'market', maxValues: 5, minRows: 4 }] });
    const defs = planSlicesOfColumns(c, day());
    // north has 7 rows, south 3 (below 4): south and the 2 null rows are pooled, 5 rows.
    expect(defs.map((d) => d.name)).toEqual(['top1', 'segment:market=north', 'segment:market:other']);
    expect(defs[0]).toMatchObject({ below: 1 });
    expect(Array.from(sliceRows(day(), defs[0]!))).toEqual([]);
  });

  it('ranks ties by the bytes of the value, and gives a label collision to the more frequent value only', () => {
    const c = config({ segments: [{ column: 'market', maxValues: 3, minRows: 1 }] });
    const long = 'x'.repeat(70);
    const defs = planSlices(c, [
      {
        ranked: [
          { value: `${long}a`, rows: 5 },
          { value: `${long}b`, rows: 4 },
          { value: 'b', rows: 2 },
          { value: 'a', rows: 2 },
        ].sort((p, q) => q.rows - p.rows || Buffer.compare(Buffer.from(p.value), Buffer.from(q.value))),
        totalRows: 20,
      },
    ]);
    expect(defs.map((d) => d.name)).toEqual([`segment:market=${'x'.repeat(64)}...`, 'segment:market=a', 'segment:market=b', 'segment:market:other']);
    expect((defs[3] as Extract<SliceDef, { kind: 'segment' }>).chosen).toEqual([`${long}a`, 'a', 'b']);
  });

  it('keeps segment labels bounded and free of control characters, and slice names out of object keys', () => {
    expect(segmentLabel('north\u0000\n')).toBe('north??');
    expect([...segmentLabel('é'.repeat(100))].length).toBe(67);
    const c = config({ segments: [{ column: 'market', maxValues: 2, minRows: 1 }] });
    const defs = planSlicesOfColumns(c, { ...day(), segments: [{ codes: Int32Array.from(MARKET), dictionary: ['__proto__', 'constructor'] }] });
    expect(defs.map((d) => d.name)).toEqual(['segment:market=__proto__', 'segment:market=constructor', 'segment:market:other']);
  });

  it('tallies a segment column by rows, most first', () => {
    expect(tallySegment(day().segments![0]!)).toEqual({ ranked: [{ value: 'north', rows: 7 }, { value: 'south', rows: 3 }], totalRows: 12 });
  });
});

describe('slice profiles', () => {
  const c = config({ topK: [2], segments: [{ column: 'market', maxValues: 1, minRows: 1 }] });

  it('selects the rows of each slice', () => {
    const defs = planSlicesOfColumns(c, day());
    expect(defs.map((d) => Array.from(sliceRows(day(), d)))).toEqual([
      [0, 1, 2, 3, 4, 6, 7], // positions 1 and 2 (the null position is not in the top)
      [0, 2, 3, 5, 7, 8, 10], // north
      [1, 4, 6, 9, 11], // south and the null market
    ]);
  });

  it('profiles a slice exactly as a day made of its rows alone', async () => {
    const cols = day();
    const defs = planSlicesOfColumns(c, cols);
    const slices = await fullSliceProfiles(cols, c, defs, () => null);
    const expected = [[0, 1, 2, 3, 4, 6, 7], [0, 2, 3, 5, 7, 8, 10], [1, 4, 6, 9, 11]];
    for (const [i, s] of slices.entries()) {
      expect(s.slice).toBe(defs[i]!.name);
      expect(s.profile).toEqual(await buildDayProfile(dayOf(expected[i]!), c, null));
    }
    // The day's own columns are untouched by slicing: the whole day profiles as before.
    expect(await buildDayProfile(cols, c, null)).toEqual(await buildDayProfile(day(), c, null));
    // top2: L0 keeps positions 1, 2 (0, 0.5), L1 1, 2 (0.2, 1), L2 1, 2 (1, 0), L3 1 (0.3).
    expect(slices[0]!.profile.dataset).toMatchObject({ rows: 7, lists: 4, singletonLists: 1 });
    expect(slices[0]!.profile.features['score']).toMatchObject({ withinList: { listsJudged: 3, flatLists: 0, ruleViolations: 2 } });
  });

  it('scales a slice of a sampled day like the day', () => {
    const sub = subsetColumns({ ...day(), sampled: true, totalRows: 24 }, Int32Array.of(0, 1, 2));
    expect(sub).toMatchObject({ rows: 3, totalRows: 6, sampled: true, lists: 2 });
  });
});

/** A day of `lists` lists of 1-12 rows with a market per list (or, when `mixed`, one list split between two). */
function randomDay(lists: number, mixed: boolean): DayColumns {
  let seed = 12345;
  const rand = (): number => ((seed = (Math.imul(seed, 1103515245) + 12345) >>> 0) / 2 ** 32);
  const listOf: number[] = [];
  const position: number[] = [];
  const market: number[] = [];
  for (let l = 0; l < lists; l++) {
    const n = 1 + Math.floor(rand() * 12);
    const m = rand() < 0.1 ? -1 : Math.floor(rand() * 3);
    for (let p = 1; p <= n; p++) {
      listOf.push(l);
      position.push(rand() < 0.03 ? NULL_POSITION : p);
      market.push(mixed && l === 7 && p > 1 ? (m + 1) % 3 : m);
    }
  }
  const rows = listOf.length;
  const column = (f: (i: number) => number): Float64Array => {
    const v = new Float64Array(new SharedArrayBuffer(rows * 8));
    for (let i = 0; i < rows; i++) v[i] = f(i);
    return v;
  };
  // Relevance falls with position (with ties and missing values); the score follows it; price is noise.
  const relevance = column((i) => (rand() < 0.05 ? Number.NaN : Math.round((20 - position[i]! + 4 * rand()) * 2) / 2));
  const score = column((i) => (rand() < 0.02 ? Number.NaN : relevance[i]! + rand()));
  const price = column(() => Math.round(rand() * 50));
  return {
    date: '2031-05-11',
    rows,
    totalRows: rows,
    sampled: false,
    listOf: Int32Array.from(listOf),
    lists,
    itemHash: Float64Array.from(listOf.map((l, i) => l * 1000 + i)),
    position: Int32Array.from(position),
    label: null,
    numeric: [relevance, score, price],
    missing: [null, null, null],
    categorical: [null, null, null],
    segments: [{ codes: Int32Array.from(market), dictionary: ['north', 'south', 'east'] }],
  };
}

describe('buildDayAndSliceProfiles', () => {
  const c = parseConfig(
    {
      source: { table: 'impressions', columns: { score: 'model_score' } },
      features: [{ name: 'relevance', withinList: { rule: 'minmax' } }, { name: 'model_score' }, { name: 'price' }],
      slices: { topK: [3], segments: [{ column: 'market', maxValues: 2, minRows: 10 }] },
    },
    'test',
  );

  it.each([
    ['segments of whole lists (within-list checks taken from the day)', false],
    ['a list split between two segments (those slices profiled in full)', true],
  ])('gives the same day and slices as profiling each slice in full: %s', async (_, mixed) => {
    const defs = planSlicesOfColumns(c, randomDay(400, mixed));
    expect(defs.map((d) => d.kind)).toEqual(['top', 'segment', 'segment', 'segment']);
    const both = await buildDayAndSliceProfiles(randomDay(400, mixed), c, null, defs, () => null);
    const slices = await fullSliceProfiles(randomDay(400, mixed), c, defs, () => null);
    expect(both.slices).toEqual(slices);
    expect(both.profile).toEqual(await buildDayProfile(randomDay(400, mixed), c, null));
    // The per-list records served the slices and are gone from the day's profile.
    expect(Object.values(both.profile.features).some((f) => 'perList' in f)).toBe(false);
    // The comparison has something to compare: association with position and score, and rules.
    const east = slices[1]!.profile.features['relevance'];
    expect(east).toMatchObject({ withinList: { listsJudged: expect.any(Number) }, association: { position: { count: expect.any(Number) }, score: { count: expect.any(Number) } } });
    if (east?.kind === 'categorical' || east?.association === undefined || east.association === null) throw new Error('no association');
    expect(east.association.position.count).toBeGreaterThan(50);
    expect(east.association.position.sum).toBeLessThan(0);
    expect(east.withinList!.listsJudged).toBeGreaterThan(50);
  });
});

describe('a slice with more values than slices.valuesPerDay', () => {
  it('sorts a sample by row holding the extremes, scales its bin counts, and counts everything else over every row', async () => {
    const c = parseConfig(
      {
        source: { table: 'impressions', columns: { score: 'model_score' } },
        features: [{ name: 'relevance', withinList: { rule: 'minmax' } }, { name: 'model_score' }, { name: 'price' }],
        slices: { segments: [{ column: 'market', maxValues: 1, minRows: 10 }], valuesPerDay: 1000 },
      },
      'test',
    );
    const cols = randomDay(3000, false);
    const def = planSlicesOfColumns(c, cols)[0]!;
    const rows = sliceRows(cols, def);
    expect(rows.length).toBeGreaterThan(4000);
    // Bins from the slice's own values, so that bin counts are compared on real bins.
    const bins = Object.fromEntries(
      c.features.map((f, fi) => [f.name, binEdgesFromSorted(radixSortedCopy(Float64Array.from(rows, (r) => cols.numeric[fi]![r]!)).filter(Number.isFinite), 10)]),
    );
    const [sampled] = await fullSliceProfiles(cols, c, [def], () => bins);
    const full = await buildDayProfile(subsetColumns(randomDay(3000, false), rows), c, bins);
    for (const f of c.features) {
      const s = sampled!.profile.features[f.name]!;
      const a = full.features[f.name]!;
      if (s.kind === 'categorical' || a.kind === 'categorical') throw new Error('numeric expected');
      const { sortedSample, distinct, binCounts, ...rest } = s;
      const { sortedSample: all, distinct: allDistinct, binCounts: allBins, ...allRest } = a;
      // Quality counts, mean, within-list checks and association: every row.
      expect(rest).toEqual(allRest);
      // Bin counts: the sample's, scaled to every finite value (the same total), each bin close.
      expect(binCounts.reduce((x, y) => x + y, 0)).toBeCloseTo(allBins.reduce((x, y) => x + y, 0), 6);
      binCounts.forEach((c, i) => expect(Math.abs(c - allBins[i]!) / rows.length, `bin ${i}`).toBeLessThan(0.03));
      // About valuesPerDay values (a binomial count), plus the smallest and largest.
      expect(sortedSample.length).toBeGreaterThan(800);
      expect(sortedSample.length).toBeLessThan(1250);
      expect(sortedSample[0]).toBe(all[0]);
      expect(sortedSample[sortedSample.length - 1]).toBe(all[all.length - 1]);
      expect(distinct).toBeLessThanOrEqual(allDistinct);
      // A sample by row, not a biased part: its ECDF stays close to the slice's.
      expect(ks2Sorted(sortedSample, all).d).toBeLessThan(0.06);
    }
  });
});
