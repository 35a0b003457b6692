/**
 * Slices: row subsets of a day that are profiled and checked like the whole day. A shift
 * confined to the top positions, or to one segment (a market, a device class) of a few
 * percent of the lists, is diluted in the whole-day histogram; on its own rows it is not.
 *
 * A slice is a set of rows: the rows at the first k positions of every list (`top<k>`), or
 * the rows whose segment column holds one value (`segment:<column>=<value>`), the rows of
 * the values that did not get a slice of their own pooled (`segment:<column>:other`). Each
 * slice's rows go through the same profiler as the whole day into a DayProfile of their
 * own, so whatever a day profile computes is computed per slice by the same code.
 *
 * Segment values are data: a label is the value with control characters replaced and cut
 * to SEGMENT_LABEL_MAX characters; slices are kept in arrays, never as object keys.
 */
import type { Config } from '../config/index.ts';
import type { BinSpec } from '../stats/index.ts';
import { correlationSumsOfLists } from './association.ts';
import { buildDayProfile, gatherValues, type NumericProfiler, profileOnThisThread } from './day.ts';
import { LIST_BREAKS_RULE, LIST_FLAT, LIST_JUDGED, NULL_POSITION, type CategoricalColumn, type DayColumns, type DayProfile, type NumericProfile, type SliceProfile } from './types.ts';

/** Longest segment value label, in characters. */
export const SEGMENT_LABEL_MAX = 64;

/** The name of the whole day, as a slice. */
export const WHOLE_DAY = 'all';

/** Rows of one segment value, for choosing the values that get a slice. */
export interface SegmentTally {
  /** Non-null values with their rows: most rows first, ties in byte order of the UTF-8 value. */
  ranked: { value: string; rows: number }[];
  /** Rows of the day (null values included). */
  totalRows: number;
}

export type SliceDef =
  | { name: string; kind: 'top'; k: number; /** positions below this are in the slice */ below: number }
  | {
      name: string;
      kind: 'segment';
      /** Index in config.slices.segments. */
      segment: number;
      column: string;
      /** The value of this slice, or null for the pooled rest. */
      value: string | null;
      /** Values that have slices of their own (what the pooled rest excludes). */
      chosen: string[];
    };

export function hasSlices(config: Config): boolean {
  return config.slices.topK.length > 0 || config.slices.segments.length > 0;
}

/** A segment value as it may appear in a slice name: no control characters, bounded length. */
export function segmentLabel(value: string): string {
  const clean = value.replace(/\p{Cc}/gu, '?');
  const chars = [...clean];
  return chars.length <= SEGMENT_LABEL_MAX ? clean : `${chars.slice(0, SEGMENT_LABEL_MAX).join('')}...`;
}

/** Orders tallies as the SQL `ORDER BY rows DESC, value COLLATE "C"` does. */
export function compareTally(a: { value: string; rows: number }, b: { value: string; rows: number }): number {
  return b.rows - a.rows || Buffer.compare(Buffer.from(a.value, 'utf8'), Buffer.from(b.value, 'utf8'));
}

/**
 * The slices of a day: one per top-k, and per segment column the most frequent values with
 * at least minRows rows (at most maxValues of them), then the pooled rest when it has
 * minRows rows. Two values whose labels coincide share the first one's slice name: the
 * second is pooled with the rest.
 */
export function planSlices(config: Config, tallies: readonly SegmentTally[]): SliceDef[] {
  const out: SliceDef[] = [];
  for (const k of config.slices.topK) out.push({ name: `top${k}`, kind: 'top', k, below: config.slices.firstPosition + k });
  config.slices.segments.forEach((seg, s) => {
    const tally = tallies[s];
    if (tally === undefined) return;
    const names = new Set<string>();
    const chosen: { value: string; rows: number; name: string }[] = [];
    for (const t of tally.ranked) {
      if (chosen.length >= seg.maxValues || t.rows < seg.minRows) break;
      const name = `segment:${seg.column}=${segmentLabel(t.value)}`;
      if (names.has(name)) continue;
      names.add(name);
      chosen.push({ ...t, name });
    }
    const values = chosen.map((c) => c.value);
    for (const c of chosen) out.push({ name: c.name, kind: 'segment', segment: s, column: seg.column, value: c.value, chosen: values });
    const rest = tally.totalRows - chosen.reduce((sum, c) => sum + c.rows, 0);
    if (rest >= seg.minRows) out.push({ name: `segment:${seg.column}:other`, kind: 'segment', segment: s, column: seg.column, value: null, chosen: values });
  });
  return out;
}

/** Rows per value of a segment column of the day's columns, ranked as planSlices wants them. */
export function tallySegment(col: CategoricalColumn): SegmentTally {
  const counts = new Float64Array(col.dictionary.length);
  for (let i = 0; i < col.codes.length; i++) {
    const c = col.codes[i]!;
    if (c >= 0) counts[c]!++;
  }
  const ranked = col.dictionary.map((value, c) => ({ value, rows: counts[c]! })).filter((t) => t.rows > 0);
  ranked.sort(compareTally);
  return { ranked, totalRows: col.codes.length };
}

/** Indexes (ascending) of the rows of the day that belong to a slice. */
export function sliceRows(cols: DayColumns, def: SliceDef): Int32Array {
  const keep = new Uint8Array(cols.rows);
  let n = 0;
  if (def.kind === 'top') {
    for (let i = 0; i < cols.rows; i++) {
      const p = cols.position[i]!;
      if (p !== NULL_POSITION && p < def.below) {
        keep[i] = 1;
        n++;
      }
    }
  } else {
    const col = cols.segments?.[def.segment];
    if (col === undefined) throw new Error(`segment column ${def.column} was not read`);
    // Per dictionary code: in the slice or not.
    const member = new Uint8Array(col.dictionary.length);
    const chosen = new Set(def.chosen);
    col.dictionary.forEach((v, c) => (member[c] = def.value === null ? (chosen.has(v) ? 0 : 1) : v === def.value ? 1 : 0));
    const nullIn = def.value === null ? 1 : 0;
    for (let i = 0; i < cols.rows; i++) {
      const c = col.codes[i]!;
      if (c < 0 ? nullIn : member[c]) {
        keep[i] = 1;
        n++;
      }
    }
  }
  const rows = new Int32Array(n);
  for (let i = 0, k = 0; i < cols.rows; i++) if (keep[i]) rows[k++] = i;
  return rows;
}

/** Codes of a subset with a dictionary of the values that occur in it (so distinct counts hold). */
function gatherCategorical(col: CategoricalColumn, rows: Int32Array): CategoricalColumn {
  const remap = new Int32Array(col.dictionary.length).fill(-1);
  const dictionary: string[] = [];
  const codes = new Int32Array(rows.length);
  for (let k = 0; k < rows.length; k++) {
    const c = col.codes[rows[k]!]!;
    if (c < 0) {
      codes[k] = -1;
      continue;
    }
    if (remap[c]! < 0) {
      remap[c] = dictionary.length;
      dictionary.push(col.dictionary[c]!);
    }
    codes[k] = remap[c]!;
  }
  return { codes, dictionary };
}

/**
 * The columns of a slice: the given rows of every column, lists renumbered (a list's rows in
 * the slice form a list of the slice). Numeric columns are not copied here: the slice refers
 * to the day's (DayColumns.parentRows). The day's columns are not changed.
 */
export function subsetColumns(cols: DayColumns, rows: Int32Array): DayColumns {
  const listMap = new Int32Array(cols.lists).fill(-1);
  const listOf = new Int32Array(rows.length);
  let lists = 0;
  for (let k = 0; k < rows.length; k++) {
    const l = cols.listOf[rows[k]!]!;
    if (l < 0) {
      listOf[k] = -1;
      continue;
    }
    if (listMap[l]! < 0) listMap[l] = lists++;
    listOf[k] = listMap[l]!;
  }
  const position = new Int32Array(rows.length);
  for (let k = 0; k < rows.length; k++) position[k] = cols.position[rows[k]!]!;
  // Rows in the day's own columns (through the day's parent rows when it is a slice itself);
  // shared, so that worker threads read them without a copy.
  const parentRows = new Int32Array(new SharedArrayBuffer(Math.max(1, rows.length) * 4)).subarray(0, rows.length);
  for (let k = 0; k < rows.length; k++) parentRows[k] = cols.parentRows === undefined ? rows[k]! : cols.parentRows[rows[k]!]!;
  // A sampled day stands for all its rows; so does each slice of it.
  const scale = cols.rows > 0 ? cols.totalRows / cols.rows : 1;
  return {
    date: cols.date,
    rows: rows.length,
    totalRows: cols.sampled ? Math.round(rows.length * scale) : rows.length,
    sampled: cols.sampled,
    listOf,
    lists,
    itemHash: gatherValues(cols.itemHash, rows),
    position,
    label: cols.label === null ? null : gatherValues(cols.label, rows),
    // The day's numeric columns, gathered feature by feature by the profiling thread.
    numeric: cols.numeric.slice(),
    missing: cols.missing.slice(),
    parentRows,
    categorical: cols.categorical.map((c) => (c === null ? null : gatherCategorical(c, rows))),
  };
}

/**
 * A slice's columns as its profile wants them: its rows (subsetColumns) and its cap on sorted
 * values. buildDayProfile of these is the slice's profile in full.
 */
export function sliceColumns(cols: DayColumns, rows: Int32Array, config: Config): DayColumns {
  return { ...subsetColumns(cols, rows), valueCap: config.slices.valuesPerDay };
}

/** The slices of a day read into columns (stream engine, and the pushdown engine's sample). */
export function planSlicesOfColumns(config: Config, cols: DayColumns): SliceDef[] {
  return planSlices(config, (cols.segments ?? []).map(tallySegment));
}

/**
 * For a slice's rows: per list of the day, 1 when the list lies wholly in the slice; null when
 * some list lies partly in it (a segment value that changes inside a list).
 */
function wholeListsOf(cols: DayColumns, rows: Int32Array, listSizes: Int32Array): Uint8Array | null {
  const inSlice = new Int32Array(cols.lists);
  for (let k = 0; k < rows.length; k++) {
    const l = cols.listOf[rows[k]!]!;
    if (l >= 0) inSlice[l]!++;
  }
  const member = new Uint8Array(cols.lists);
  for (let l = 0; l < cols.lists; l++) {
    if (inSlice[l] === 0) continue;
    if (inSlice[l] !== listSizes[l]) return null;
    member[l] = 1;
  }
  return member;
}

/** The within-list checks of a slice of whole lists, from the day's per-list records. */
function fillFromDayLists(slice: NumericProfile, day: NumericProfile, member: Uint8Array): void {
  const rec = day.perList;
  if (rec === undefined) throw new Error('the day was profiled without per-list records');
  if (day.withinList !== null) {
    let listsJudged = 0;
    let flatLists = 0;
    let ruleViolations = 0;
    for (let l = 0; l < member.length; l++) {
      if (member[l] !== 1) continue;
      const f = rec.flags[l]!;
      if (f & LIST_JUDGED) listsJudged++;
      if (f & LIST_FLAT) flatLists++;
      if (f & LIST_BREAKS_RULE) ruleViolations++;
    }
    slice.withinList = { listsJudged, flatLists, ruleViolations };
  }
  if (day.association !== undefined && day.association !== null && rec.positionRho !== null) {
    slice.association = { position: correlationSumsOfLists(rec.positionRho, member), score: rec.scoreRho === null ? null : correlationSumsOfLists(rec.scoreRho, member) };
  }
}

/**
 * The day's profile and its slices' (stream engine). Slices are profiled first, on copies of
 * their rows (profiling the whole day consumes its columns). A segment slice made of whole
 * lists (the usual case: the segment is a list-level column) skips its within-list checks,
 * the costliest part of a profile, and takes them from the day's own per-list results, which
 * are the same lists: the sums come out the same as profiling the slice in full.
 */
export async function buildDayAndSliceProfiles(
  cols: DayColumns,
  config: Config,
  bins: Record<string, BinSpec> | null,
  defs: readonly SliceDef[],
  binsOf: (slice: string) => Record<string, BinSpec> | null,
  sliceProfiler: NumericProfiler = profileOnThisThread,
  dayProfiler: NumericProfiler = profileOnThisThread,
): Promise<{ profile: DayProfile; slices: SliceProfile[]; /** Time spent on the slices (before the whole day). */ sliceMilliseconds: number }> {
  const t0 = performance.now();
  const listSizes = new Int32Array(cols.lists);
  for (let i = 0; i < cols.rows; i++) {
    const l = cols.listOf[i]!;
    if (l >= 0) listSizes[l]!++;
  }
  const slices: SliceProfile[] = [];
  const members: (Uint8Array | null)[] = [];
  // One slice at a time: its copy of the columns is released (profiled) before the next is made.
  for (const def of defs) {
    const rows = sliceRows(cols, def);
    const member = def.kind === 'segment' ? wholeListsOf(cols, rows, listSizes) : null;
    members.push(member);
    slices.push({ slice: def.name, kind: def.kind, profile: await buildDayProfile(sliceColumns(cols, rows, config), config, binsOf(def.name), sliceProfiler, member === null ? undefined : 'skip') });
  }
  const sliceMilliseconds = performance.now() - t0;
  const fromDay = members.some((m) => m !== null);
  const profile = await buildDayProfile(cols, config, bins, dayProfiler, fromDay ? 'record' : undefined);
  if (fromDay) {
    slices.forEach((s, i) => {
      const member = members[i];
      if (member === null || member === undefined) return;
      for (const [name, f] of Object.entries(s.profile.features)) {
        const day = profile.features[name];
        if (f.kind !== 'categorical' && day !== undefined && day.kind !== 'categorical') fillFromDayLists(f, day, member);
      }
    });
    // The records served the slices; they are not part of a stored profile.
    for (const f of Object.values(profile.features)) if (f.kind !== 'categorical') delete f.perList;
  }
  return { profile, slices, sliceMilliseconds };
}
