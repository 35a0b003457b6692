/**
 * The `pushdown` engine: the day's statistics are computed inside PostgreSQL and only
 * aggregates come back (a few hundred rows at most, whatever the size of the day).
 *
 * Three aggregate statements run in the caller's REPEATABLE READ READ ONLY transaction:
 *
 * - the list pass groups the day by list id and reduces each list to a few flags (size,
 *   duplicate items, position gaps, label counts, and per feature: judged / flat / rule
 *   broken, decided in SQL with the same float8 arithmetic as stats/withinlist.ts), then
 *   counts those flags by list size. The inner grouping is on the list id only, so on a
 *   table partitioned by list id with partition-wise aggregation the whole inner query is
 *   sent to the partitions (postgres_fdw ships it to the shards as one remote GROUP BY);
 * - the value pass turns every row into one (feature, code) pair per feature and counts
 *   them. One `width_bucket` call gives the code (see valueCoding): -Infinity, +Infinity
 *   and NaN have codes of their own, SQL null is a null code (jsonb type errors one more),
 *   and a finite value's code names its bin (thresholds that reproduce assignBin exactly:
 *   right-closed intervals, point masses) and whether it is out of range. Category values
 *   are counted too;
 * - the sum pass: the split sum, minimum and maximum of each numeric feature's finite values,
 *   one row.
 *
 * On a partitioned table whose partitions are all foreign tables (postgres_fdw shards) the
 * value and sum passes become one statement: per feature and partition a grouped query that
 * postgres_fdw ships whole to the partition's server (counts, sums, minima and maxima per
 * code), run concurrently by Async Append and merged on the coordinator. PostgreSQL 15's
 * postgres_fdw pushes a GROUP BY down only for one foreign table, or for a partitioned table
 * when the grouping holds the partition key (full partition-wise aggregation); never partial
 * aggregates, GROUPING SETS or a join with a LATERAL unnest, which the one-scan value pass
 * needs. Each shard then scans its rows once per feature, in exchange for sending kilobytes.
 *
 * SQL text is built from quoted identifiers only; dates, jsonb keys, ranges, tolerances
 * and bin thresholds are bound parameters (thresholds as float8[]).
 *
 * The DayProfile is then assembled from these exact counts and from a small whole-list
 * sample of the day (read by the stream reader), which supplies the value sample that later
 * baselines pool and the distinct-value checks use.
 */
import { featureSource, type Config, type FeatureConfig } from '../config/index.ts';
import { quoteIdent, type PoolClient } from '../db/index.ts';
import { DataError } from '../errors.ts';
import type { CategoricalProfile, DatasetCounts, DayProfile, FeatureProfile, NumericProfile, WithinListCounts } from '../profile/index.ts';
import { LARGE_MAGNITUDE, LARGE_SCALE_EXP, boundCategories, emptyQualityCounts, meanOfSplitSum, type BinSpec, type QualityCounts, type SplitSum } from '../stats/index.ts';
import type { SourcePlan } from './plan.ts';

/** Bin specs the value pass counts into: the baseline's PSI bins and its fine KS bins. */
export interface PushdownSpecs {
  /** The baseline's PSI bins per numeric feature, or null (a baseline day: no bins yet). */
  bins: Record<string, BinSpec> | null;
  /** Fine bins per numeric feature, refining `bins` (every PSI bin is a union of fine bins). */
  fineBins: Record<string, BinSpec> | null;
  /**
   * The baseline's extreme-value bounds per numeric feature (checks/extremes.ts): the value
   * pass counts the finite values strictly below `lower` and strictly above `upper`.
   */
  extremeBounds?: Record<string, ExtremeLimits> | null;
}

export interface ExtremeLimits {
  lower: number;
  upper: number;
}

export interface SqlStatement {
  text: string;
  values: unknown[];
}

export interface PushdownQueries {
  listPass: SqlStatement;
  /** Counts per feature and code; on foreign partitions also the sums, minima and maxima per code. */
  valuePass: SqlStatement;
  /** Sums, minima and maxima of each numeric feature's finite values (null on foreign partitions, or without numeric features). */
  sumPass: SqlStatement | null;
}

/** Exact counts of one numeric feature from the value pass. */
export interface NumericAggregates {
  quality: QualityCounts;
  /** Counts of finite values per bin of the counting spec (fine bins when given, else the PSI bins); empty without a spec. */
  counts: number[];
  /** Sum of the finite values, split so that it cannot overflow (stats/safesum.ts). */
  sum: SplitSum;
  min: number | null;
  max: number | null;
  /** Finite values beyond the extreme-value bounds, when the specs gave bounds for this feature. */
  extreme?: { lower: number; upper: number; below: number; above: number };
}

export interface DayAggregates {
  dataset: DatasetCounts;
  numeric: Record<string, NumericAggregates>;
  categorical: Record<string, { rows: number; nulls: number; categories: Map<string, number> }>;
  withinList: Record<string, WithinListCounts>;
}

/** Lists longer than this share the last list-size bin (the stream engine's MAX_LIST_SIZE_BIN). */
const LIST_SIZE_BINS = 100;

/** Value-pass code of a jsonb value that is not a number (null codes are SQL NULL). */
const CODE_TYPE_ERROR = -5;

/** The next float64 above x (x finite). */
export function nextUp(x: number): number {
  if (x === 0) return Number.MIN_VALUE;
  const view = new DataView(new ArrayBuffer(8));
  view.setFloat64(0, x);
  const bits = view.getBigUint64(0);
  view.setBigUint64(0, x > 0 ? bits + 1n : bits - 1n);
  return view.getFloat64(0);
}

/**
 * Thresholds for `width_bucket(v, thresholds)` (the number of thresholds <= v) such that the
 * result is assignBin(spec, v) for every finite v. A bin's values are the doubles from one
 * threshold up to the next: a right-closed (prev, e] starts at nextUp(prev); a point mass
 * [e, e] starts at e and the bin after it at nextUp(e).
 */
export function widthBucketThresholds(spec: BinSpec): number[] {
  const t: number[] = [];
  spec.edges.forEach((e, i) => {
    if (spec.pointMass[i]) t.push(e);
    t.push(nextUp(e));
  });
  return t;
}

/** `beyond` (only with extreme-value bounds): -1 below the lower bound, 1 above the upper, 0 within. */
export type DecodedValue = { kind: 'finite'; bin: number; outOfRange: boolean; beyond?: -1 | 0 | 1 } | { kind: 'negInf' | 'posInf' | 'nan' };

/**
 * One `width_bucket` call per value and feature classifies it completely: the thresholds
 * are -MAX_VALUE, the bins' thresholds merged with the valid range's bounds (min, and the
 * double after max), Infinity, and NaN. The result is 0 for -Infinity, 1 .. k + 1 for the
 * finite values (each bucket inside one bin and wholly in or out of range), k + 2 for
 * +Infinity and k + 3 for NaN (width_bucket puts NaN above every threshold). Every other
 * test of a value (finite? out of range?) would be one more function call per value.
 */
export interface ValueCoding {
  thresholds: number[];
  decode(code: number): DecodedValue;
}

export function valueCoding(spec: BinSpec | undefined, range: { min?: number; max?: number } | undefined, extreme?: ExtremeLimits): ValueCoding {
  const binT = spec === undefined ? [] : widthBucketThresholds(spec);
  const cuts = new Set<number>(binT.filter((x) => Number.isFinite(x)));
  if (range?.min !== undefined && Number.isFinite(range.min)) cuts.add(range.min === 0 ? 0 : range.min);
  if (range?.max !== undefined && Number.isFinite(range.max) && Number.isFinite(nextUp(range.max))) cuts.add(nextUp(range.max));
  // Extreme-value bounds cut like a range: below `lower`, and from the double after `upper`.
  if (extreme !== undefined && Number.isFinite(extreme.lower) && extreme.lower > -Number.MAX_VALUE) cuts.add(extreme.lower === 0 ? 0 : extreme.lower);
  if (extreme !== undefined && Number.isFinite(extreme.upper) && extreme.upper < Number.MAX_VALUE) cuts.add(nextUp(extreme.upper));
  const u = [...cuts].sort((a, b) => a - b);
  const thresholds = [-Number.MAX_VALUE, ...u, Number.POSITIVE_INFINITY, Number.NaN];
  // Finite bucket j holds the doubles in [thresholds[j - 1], thresholds[j]); its first one decides.
  const finiteBuckets = u.length + 1;
  const bins = new Int32Array(finiteBuckets + 1);
  const oor = new Uint8Array(finiteBuckets + 1);
  const beyond = new Int8Array(finiteBuckets + 1);
  for (let j = 1; j <= finiteBuckets; j++) {
    const first = thresholds[j - 1]!;
    bins[j] = countAtMost(binT, first);
    oor[j] = (range?.min !== undefined && first < range.min) || (range?.max !== undefined && first > range.max) ? 1 : 0;
    if (extreme !== undefined) beyond[j] = first < extreme.lower ? -1 : first > extreme.upper ? 1 : 0;
  }
  return {
    thresholds,
    decode(code: number): DecodedValue {
      if (code === 0) return { kind: 'negInf' };
      if (code <= finiteBuckets) {
        const v: DecodedValue = { kind: 'finite', bin: bins[code]!, outOfRange: oor[code] === 1 };
        if (extreme !== undefined) v.beyond = beyond[code] as -1 | 0 | 1;
        return v;
      }
      return code === finiteBuckets + 1 ? { kind: 'posInf' } : { kind: 'nan' };
    },
  };
}

/** How many entries of the ascending array `t` are <= v (binary search). */
function countAtMost(t: readonly number[], v: number): number {
  let lo = 0;
  let hi = t.length;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    if (t[mid]! <= v) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * For each bin of `fine`, the bin of `coarse` that holds it; throws when `fine` does not
 * refine `coarse` (a fine bin straddling a coarse boundary).
 */
export function refinementMap(coarse: BinSpec, fine: BinSpec): number[] {
  const tf = widthBucketThresholds(fine);
  const tc = widthBucketThresholds(coarse);
  const fineSet = new Set(tf);
  for (const x of tc) {
    if (!fineSet.has(x)) throw new DataError(`the fine bins do not refine the PSI bins (no fine boundary at ${x})`);
  }
  // Bin b of `fine` holds the doubles in [tf[b-1], tf[b]); its first double decides.
  return Array.from({ length: tf.length + 1 }, (_, b) => (b === 0 ? 0 : countAtMost(tc, tf[b - 1]!)));
}

class Params {
  readonly values: unknown[] = [];
  add(value: unknown, cast: string): string {
    this.values.push(value);
    return `$${this.values.length}::${cast}`;
  }
}

interface FeatureSql {
  feature: FeatureConfig;
  /** float8 value (null when missing or not a number) or, for categorical features, text. */
  value: string;
  /** Boolean: a jsonb value that is not a number, boolean or null; null for wide columns. */
  typeError: string | null;
}

/**
 * A jsonb number as float8, as JavaScript's Number() reads its text: a magnitude that rounds
 * beyond the largest double is +-Infinity and one that rounds to zero is 0, where a plain
 * ::float8 cast raises SQLSTATE 22003 and fails the day. The bounds are exact halfway points
 * (IEEE 754 round to nearest, ties to even): 2^1024 - 2^970 rounds up to Infinity, 2^-1075 down
 * to 0. jsonb keeps numbers as numeric, so ::numeric is exact; ordinary values take the first
 * branch and only rare ones reach the comparisons with the long constants.
 */
function jsonNumberAsFloat8(j: string, p: Params): string {
  const n = `(${j})::numeric`;
  const overflow = p.add(OVERFLOW_BOUND, 'numeric');
  const underflow = p.add(UNDERFLOW_BOUND, 'numeric');
  return `(CASE WHEN abs(${n}) BETWEEN 1e-300 AND 1e300 OR ${n} = 0 THEN (${j})::float8 WHEN abs(${n}) >= ${overflow} THEN sign(${n})::float8 * 'Infinity'::float8 WHEN abs(${n}) <= ${underflow} THEN 0::float8 ELSE (${j})::float8 END)`;
}

/** 2^1024 - 2^970: the smallest magnitude that rounds to Infinity as a double. */
const OVERFLOW_BOUND = (2n ** 1024n - 2n ** 970n).toString();
/** 2^-1075 written out exactly: the largest magnitude that rounds to 0 as a double. */
const UNDERFLOW_BOUND = `0.${(5n ** 1075n).toString().padStart(1075, '0')}`;

function featureSql(config: Config, plan: SourcePlan, f: FeatureConfig, index: number, p: Params): FeatureSql {
  const where = featureSource(f, config.source.featuresColumn);
  if ('jsonbColumn' in where) {
    const key = p.add(where.key, 'text');
    if (f.kind === 'categorical') return { feature: f, value: cutCategory(`(${quoteIdent(where.jsonbColumn)} ->> ${key})`, config, p), typeError: null };
    const j = `(${quoteIdent(where.jsonbColumn)} -> ${key})`;
    // As the stream reader parses jsonb text: numbers, true/false as 1/0, null; anything else is a type error.
    const value = `(CASE jsonb_typeof(${j}) WHEN 'number' THEN ${jsonNumberAsFloat8(j, p)} WHEN 'boolean' THEN (CASE WHEN ${j} = 'true'::jsonb THEN 1 ELSE 0 END)::float8 END)`;
    return { feature: f, value, typeError: `(jsonb_typeof(${j}) IN ('string', 'object', 'array'))` };
  }
  const fp = plan.features.find((x) => x.index === index);
  if (fp === undefined) throw new DataError(`feature ${f.name} is not in the source plan`);
  return { feature: f, value: f.kind === 'categorical' ? cutCategory(fp.expression, config, p) : fp.expression, typeError: null };
}

/** A category value cut as stats/categorical.ts truncateCategory cuts it (left() counts characters, as it does). */
function cutCategory(v: string, config: Config, p: Params): string {
  const max = p.add(config.source.maxCategoryLength, 'int4');
  return `(CASE WHEN length(${v}) > ${max} THEN left(${v}, ${max}) || '\u2026' ELSE ${v} END)`;
}

/** PostgreSQL sorts NaN above every number, so "finite" must exclude it explicitly. */
function finite(v: string): string {
  return `(${v} > '-Infinity'::float8 AND ${v} < 'Infinity'::float8)`;
}

/** The rule of stats/withinlist.ts ruleViolated, on per-list aggregates, in float8. */
function ruleSql(rule: NonNullable<FeatureConfig['withinList']>['rule'], a: { n: string; mn: string; mx: string; s: string; ss: string; d: string; c: string }, tol: string): string {
  switch (rule) {
    case 'minmax':
      return `(abs(${a.mn}) > ${tol} OR abs(${a.mx} - 1) > ${tol})`;
    case 'zscore': {
      const varPop = `greatest(0::float8, (${a.ss} - (${a.s} * ${a.s}) / ${a.n}) / ${a.n})`;
      return `(abs(${a.s} / ${a.n}) > ${tol} OR (abs(sqrt(${varPop}) - 1) > ${tol} AND abs(sqrt((${varPop} * ${a.n}) / (${a.n} - 1)) - 1) > ${tol}))`;
    }
    case 'rank':
      return `(NOT (${a.mn} = 1 AND ${a.mx} = ${a.n} AND ${a.d} = ${a.c} AND abs(${a.s} - (${a.n} * (${a.n} + 1)) / 2) <= ${tol} * ${a.n}))`;
    case 'sum_to_one':
      return `(abs(${a.s} - 1) > ${tol} OR ${a.mn} < -${tol})`;
  }
}

/** The counting spec of a numeric feature: its fine bins when given, else its PSI bins. */
function countingSpec(specs: PushdownSpecs, name: string): BinSpec | undefined {
  return specs.fineBins?.[name] ?? specs.bins?.[name];
}

/**
 * An extra row condition for both statements (a slice of the day, src/source/slice-sql.ts);
 * `bind` adds a parameter and returns its placeholder.
 */
export type RowFilter = (bind: (value: unknown, cast: string) => string) => string;

/** Builds the two statements for one day (exported so tests can EXPLAIN exactly what runs). */
export function buildPushdownQueries(config: Config, plan: SourcePlan, date: string, specs: PushdownSpecs, filter?: RowFilter): PushdownQueries {
  if (!/^\d{4}-\d{2}-\d{2}$/.test(date)) throw new DataError(`not a date: ${JSON.stringify(date)}`);
  const cols = config.source.columns;
  const listId = quoteIdent(cols.listId);
  const item = `(${quoteIdent(cols.itemId)})::text`;
  const pos = `(${quoteIdent(cols.position)})::int4`;

  // ---- list pass
  const lp = new Params();
  const dateParam = lp.add(date, 'date');
  const inner: string[] = [
    `(${listId} IS NULL) AS nl`,
    `count(*) AS n`,
    `count(*) - count(${item}) AS ni`,
    `(count(${item}) <> count(DISTINCT ${item})) AS dup`,
    // Positions must be n distinct consecutive integers starting at 0 or 1 (nulls are gaps).
    `coalesce(count(${pos}) < count(*) OR count(DISTINCT ${pos}) < count(*) OR min(${pos}) NOT IN (0, 1) OR max(${pos})::int8 - min(${pos})::int8 <> count(*) - 1, true) AS gap`,
  ];
  if (plan.hasLabel) {
    const y = plan.selectList[3]!;
    inner.push(`count(*) FILTER (WHERE ${y} IS NOT NULL AND ${y} <> 'NaN'::float8) AS ly`, `count(*) FILTER (WHERE ${y} > 0 AND ${y} <> 'NaN'::float8) AS lp`);
  } else {
    inner.push('0::int8 AS ly', '0::int8 AS lp');
  }
  const wlNames: string[] = [];
  config.features.forEach((f, i) => {
    if (f.scope !== 'item') return;
    // Parameters only for what the statement uses: an unused one has no type PostgreSQL can infer.
    const fs = featureSql(config, plan, f, i, lp);
    // code = judged + 2 * flat + 4 * rule broken (a flat list is not judged on the rule).
    let code: string;
    if (f.kind === 'categorical') {
      code = `(CASE WHEN count(${fs.value}) >= 2 THEN 1 + CASE WHEN min(${fs.value}) = max(${fs.value}) THEN 2 ELSE 0 END ELSE 0 END)`;
    } else {
      const fin = finite(fs.value);
      // As stats/withinlist.ts: values of magnitude >= LARGE_MAGNITUDE are counted, not summed or squared (no overflow).
      // (A literal, not a parameter: a parameter the statement ends up not using has no type.)
      const small = `${fin} AND abs(${fs.value}) < ${LARGE_MAGNITUDE.toExponential()}::float8`;
      const a = {
        c: `count(*) FILTER (WHERE ${fin})`,
        n: `(count(*) FILTER (WHERE ${fin}))::float8`,
        mn: `min(${fs.value}) FILTER (WHERE ${fin})`,
        mx: `max(${fs.value}) FILTER (WHERE ${fin})`,
        s: `coalesce(sum(${fs.value}) FILTER (WHERE ${small}), 0)`,
        ss: `coalesce(sum(${fs.value} * ${fs.value}) FILTER (WHERE ${small}), 0)`,
        d: `count(DISTINCT ${fs.value}) FILTER (WHERE ${fin})`,
      };
      const large = `count(*) FILTER (WHERE ${fin} AND NOT (${small}))`;
      // A non-flat list holding a large value breaks every rule (see ruleViolated).
      const rule = f.withinList === undefined ? 'false' : `(${large} > 0 OR ${ruleSql(f.withinList.rule, a, lp.add(f.withinList.tolerance, 'float8'))})`;
      code = `(CASE WHEN ${a.c} >= 2 THEN 1 + CASE WHEN ${a.mn} = ${a.mx} THEN 2 WHEN ${rule} THEN 4 ELSE 0 END ELSE 0 END)`;
    }
    inner.push(`${code} AS w${i}`);
    wlNames.push(`w${i}`);
  });
  const sizeCap = lp.add(LIST_SIZE_BINS, 'int8');
  const listFilter = filter === undefined ? '' : ` AND (${filter((v, c) => lp.add(v, c))})`;
  const wl = wlNames.length === 0 ? `'{}'::int8[]` : `ARRAY[${wlNames.map((w) => `sum(${w} & 1), sum((${w} >> 1) & 1), sum(${w} >> 2)`).join(', ')}]::int8[]`;
  const listPass = `SELECT nl, least(n, ${sizeCap}) AS size, count(*) AS lists, sum(n) AS rows, sum(ni) AS ni,
       count(*) FILTER (WHERE dup) AS dup, count(*) FILTER (WHERE gap) AS gap,
       sum(ly) AS ly, sum(lp) AS lp, count(*) FILTER (WHERE lp = 0) AS nopos,
       ${wl} AS wl
  FROM (SELECT ${inner.join(',\n               ')}
          FROM ${plan.relation}
         WHERE ${plan.dateColumn} = ${dateParam}${listFilter}
         GROUP BY ${listId}) AS per_list
 GROUP BY 1, 2`;

  // ---- value pass
  const vp = new Params();
  const vDate = vp.add(date, 'date');
  const vfeatures = config.features.map((f, i) => featureSql(config, plan, f, i, vp));
  // Per row, one array element per feature, unnested in step: cheaper than a VALUES list
  // rescanned for every row (measured: about 25 % less time per value).
  const fIdx: number[] = [];
  const codes: string[] = [];
  const texts: string[] = [];
  const values: string[] = [];
  vfeatures.forEach((fs, i) => {
    const f = fs.feature;
    fIdx.push(i);
    if (f.kind === 'categorical') {
      codes.push('NULL::int4');
      texts.push(fs.value);
      values.push('NULL::float8');
      return;
    }
    const v = fs.value;
    const coding = valueCoding(countingSpec(specs, f.name), f.range, specs.extremeBounds?.[f.name]);
    const bucket = `width_bucket(${v}, ${vp.add(coding.thresholds, 'float8[]')})`;
    // NULL is a null; a jsonb type error is told apart only then (COALESCE evaluates lazily).
    codes.push(fs.typeError === null ? bucket : `coalesce(${bucket}, CASE WHEN ${fs.typeError} THEN ${CODE_TYPE_ERROR} END)`);
    texts.push('NULL::text');
    // Sums, minima and maxima are taken per code, so only the finite codes' ones are used.
    values.push(v);
  });
  const partitions = plan.foreignPartitions ?? [];
  if (partitions.length > 0) {
    // Sums split as stats/safesum.ts splits them: 1e308 + 1e308 must not overflow (SQLSTATE 22003).
    const largeAt = vp.add(LARGE_MAGNITUDE, 'float8');
    const scale = vp.add(2 ** -LARGE_SCALE_EXP, 'float8');
    // Foreign partitions: one grouped statement per feature and partition, which postgres_fdw
    // sends to the partition's server whole (it pushes a GROUP BY down only for a single
    // foreign table, or for a partitioned one when the grouping holds the partition key; a
    // LATERAL unnest or GROUPING SETS it never ships). Async Append runs the shards' parts
    // concurrently; the small per-partition results are merged here.
    const parts: string[] = [];
    const rowFilter = filter === undefined ? '' : ` AND (${filter((v, c) => vp.add(v, c))})`;
    const fin = (x: string): string => `${x} > '-Infinity'::float8 AND ${x} < 'Infinity'::float8`;
    vfeatures.forEach((fs, i) => {
      for (const rel of partitions) {
        const from = `FROM ${rel} WHERE ${plan.dateColumn} = ${vDate}${rowFilter}`;
        if (fs.feature.kind === 'categorical') {
          parts.push(`SELECT ${i}::int4 AS f, NULL::int4 AS b, ${texts[i]} AS c, count(*) AS n, NULL::float8 AS s, NULL::float8 AS sl, NULL::float8 AS lo, NULL::float8 AS hi ${from} GROUP BY 3`);
          continue;
        }
        const x = values[i]!;
        parts.push(
          `SELECT ${i}::int4 AS f, ${codes[i]} AS b, NULL::text AS c, count(*) AS n, sum(${x}) FILTER (WHERE abs(${x}) < ${largeAt}) AS s, sum(${x} * ${scale}) FILTER (WHERE abs(${x}) >= ${largeAt} AND ${fin(x)}) AS sl, min(${x}) AS lo, max(${x}) AS hi ${from} GROUP BY 2`,
        );
      }
    });
    const text = `SELECT f, b, c, sum(n) AS n, sum(s) AS s, sum(sl) AS sl, min(lo) AS lo, max(hi) AS hi
  FROM (${parts.join('\n        UNION ALL ')}) AS per_partition
 GROUP BY 1, 2, 3`;
    return { listPass: { text: listPass, values: lp.values }, valuePass: { text, values: vp.values }, sumPass: null };
  }
  // One scan counts every (feature, code) pair, and only counts: the sums, minima and maxima
  // of the finite values go to a one-row aggregate of their own (sumPass), which is cheaper
  // than five aggregates per (feature, code) pair (measured: 1M rows x 50 features, 16 s and
  // 2 s against about 30 s for the two in one statement, on a busy 2-core machine).
  const hasText = vfeatures.some((fs) => fs.feature.kind === 'categorical');
  const valuePass = `SELECT v.f, v.b, ${hasText ? 'v.c' : 'NULL::text AS c'}, count(*) AS n
  FROM ${plan.relation}
       CROSS JOIN LATERAL unnest(${vp.add(fIdx, 'int4[]')}, ARRAY[${codes.join(', ')}]::int4[]${hasText ? `, ARRAY[${texts.join(', ')}]::text[]` : ''}) AS v(f, b${hasText ? ', c' : ''})
 WHERE ${plan.dateColumn} = ${vDate}${filter === undefined ? '' : ` AND (${filter((v, c) => vp.add(v, c))})`}
 GROUP BY 1, 2, 3`;

  // ---- sums, minima and maxima of the finite values, one row
  const sp = new Params();
  const sDate = sp.add(date, 'date');
  const numericFeatures = config.features.map((f, i) => ({ f, i })).filter(({ f }) => f.kind !== 'categorical');
  let sumPass: SqlStatement | null = null;
  if (numericFeatures.length > 0) {
    const xs = numericFeatures.map(({ f, i }) => featureSql(config, plan, f, i, sp).value);
    // Sums split as stats/safesum.ts splits them: 1e308 + 1e308 must not overflow (SQLSTATE 22003).
    const largeAt = sp.add(LARGE_MAGNITUDE, 'float8');
    const scale = sp.add(2 ** -LARGE_SCALE_EXP, 'float8');
    const arr = (fn: (x: string) => string): string => `ARRAY[${xs.map(fn).join(', ')}]::float8[]`;
    sumPass = {
      text: `SELECT ${arr((x) => `sum(${x}) FILTER (WHERE abs(${x}) < ${largeAt})`)} AS s,
       ${arr((x) => `sum(${x} * ${scale}) FILTER (WHERE abs(${x}) >= ${largeAt} AND ${finite(x)})`)} AS sl,
       ${arr((x) => `min(${x}) FILTER (WHERE ${finite(x)})`)} AS lo,
       ${arr((x) => `max(${x}) FILTER (WHERE ${finite(x)})`)} AS hi
  FROM ${plan.relation}
 WHERE ${plan.dateColumn} = ${sDate}${filter === undefined ? '' : ` AND (${filter((v, c) => sp.add(v, c))})`}`,
      values: sp.values,
    };
  }

  return { listPass: { text: listPass, values: lp.values }, valuePass: { text: valuePass, values: vp.values }, sumPass };
}

/**
 * Session settings for the aggregate statements: JIT compilation makes these wide
 * aggregates slower (measured on this kind of machine), and partition-wise aggregation lets
 * a table partitioned by list id aggregate each partition apart (on the shards, for
 * postgres_fdw partitions). SET LOCAL ends with the caller's transaction.
 */
export async function preparePushdownSession(client: PoolClient): Promise<void> {
  await client.query('SET LOCAL jit = off');
  await client.query('SET LOCAL enable_partitionwise_aggregate = on');
}

/** Seconds each statement took, for the run's debug log (where a pushdown run's time goes). */
export interface PushdownTimings {
  listPassSeconds?: number;
  valuePassSeconds?: number;
}

/**
 * Runs both aggregate statements for one day. `client` must be inside a read-only
 * REPEATABLE READ transaction (both statements then see the same snapshot).
 */
export async function readDayAggregates(client: PoolClient, config: Config, plan: SourcePlan, date: string, specs: PushdownSpecs, filter?: RowFilter, timings?: PushdownTimings): Promise<DayAggregates> {
  const q = buildPushdownQueries(config, plan, date, specs, filter);
  await preparePushdownSession(client);
  const t0 = performance.now();

  const listRes = await client.query<{ nl: boolean; size: string; lists: string; rows: string; ni: string; dup: string; gap: string; ly: string | null; lp: string | null; nopos: string; wl: string[] }>(q.listPass.text, q.listPass.values);
  const sizes = new Array<number>(LIST_SIZE_BINS).fill(0);
  const dataset: DatasetCounts = { rows: 0, lists: 0, nullListIdRows: 0, nullItemIdRows: 0, listSizeCounts: sizes, singletonLists: 0, listsWithDuplicateItems: 0, listsWithPositionGaps: 0, labelRows: 0, labelPositives: 0, listsWithoutPositive: 0 };
  const itemFeatures = config.features.filter((f) => f.scope === 'item');
  const wlSums = new Array<number>(itemFeatures.length * 3).fill(0);
  for (const r of listRes.rows) {
    const rows = Number(r.rows);
    dataset.rows += rows;
    dataset.nullItemIdRows += Number(r.ni);
    // Rows without a list id form one group of their own and belong to no list.
    if (r.nl) {
      dataset.nullListIdRows += rows;
      continue;
    }
    const lists = Number(r.lists);
    dataset.lists += lists;
    sizes[Number(r.size) - 1]! += lists;
    if (Number(r.size) === 1) dataset.singletonLists += lists;
    dataset.listsWithDuplicateItems += Number(r.dup);
    dataset.listsWithPositionGaps += Number(r.gap);
    if (plan.hasLabel) {
      dataset.labelRows += Number(r.ly ?? 0);
      dataset.labelPositives += Number(r.lp ?? 0);
      dataset.listsWithoutPositive += Number(r.nopos);
    }
    r.wl.forEach((x, k) => (wlSums[k]! += Number(x)));
  }
  const withinList: Record<string, WithinListCounts> = {};
  itemFeatures.forEach((f, k) => {
    withinList[f.name] = { listsJudged: wlSums[3 * k]!, flatLists: wlSums[3 * k + 1]!, ruleViolations: wlSums[3 * k + 2]! };
  });

  const t1 = performance.now();
  const valueRes = await client.query<{ f: number; b: number | null; c: string | null; n: string; s?: number | null; sl?: number | null; lo?: number | null; hi?: number | null }>(q.valuePass.text, q.valuePass.values);
  const sumRes = q.sumPass === null ? null : await client.query<{ s: (number | null)[]; sl: (number | null)[]; lo: (number | null)[]; hi: (number | null)[] }>(q.sumPass.text, q.sumPass.values);
  if (timings !== undefined) {
    timings.listPassSeconds = (t1 - t0) / 1000;
    timings.valuePassSeconds = (performance.now() - t1) / 1000;
  }
  const codings = new Map(config.features.filter((f) => f.kind !== 'categorical').map((f) => [f.name, valueCoding(countingSpec(specs, f.name), f.range, specs.extremeBounds?.[f.name])]));
  const numeric: Record<string, NumericAggregates> = {};
  const categorical: DayAggregates['categorical'] = {};
  for (const f of config.features) {
    if (f.kind === 'categorical') categorical[f.name] = { rows: 0, nulls: 0, categories: new Map() };
    else {
      const spec = countingSpec(specs, f.name);
      numeric[f.name] = { quality: emptyQualityCounts(), counts: spec === undefined ? [] : new Array<number>(spec.edges.length + spec.pointMass.filter(Boolean).length + 1).fill(0), sum: { small: 0, largeScaled: 0 }, min: null, max: null };
      const bounds = specs.extremeBounds?.[f.name];
      if (bounds !== undefined) numeric[f.name]!.extreme = { lower: bounds.lower, upper: bounds.upper, below: 0, above: 0 };
    }
  }
  for (const r of valueRes.rows) {
    const f = config.features[r.f]!;
    const n = Number(r.n);
    if (f.kind === 'categorical') {
      const cat = categorical[f.name]!;
      cat.rows += n;
      if (r.c === null) cat.nulls += n;
      else cat.categories.set(r.c, (cat.categories.get(r.c) ?? 0) + n);
      continue;
    }
    const a = numeric[f.name]!;
    const q = a.quality;
    q.rows += n;
    if (r.b === null) {
      q.nulls += n;
      continue;
    }
    if (r.b === CODE_TYPE_ERROR) {
      q.typeErrors += n;
      continue;
    }
    const d = codings.get(f.name)!.decode(r.b);
    if (d.kind === 'finite') {
      q.finite += n;
      if (d.outOfRange) q.outOfRange += n;
      if (a.counts.length > 0) a.counts[d.bin]! += n;
      a.sum.small += r.s ?? 0;
      a.sum.largeScaled += r.sl ?? 0;
      if (a.extreme !== undefined && d.beyond === -1) a.extreme.below += n;
      if (a.extreme !== undefined && d.beyond === 1) a.extreme.above += n;
      if (r.lo != null && (a.min === null || r.lo < a.min)) a.min = r.lo;
      if (r.hi != null && (a.max === null || r.hi > a.max)) a.max = r.hi;
    } else if (d.kind === 'nan') q.nan += n;
    else if (d.kind === 'posInf') q.posInf += n;
    else q.negInf += n;
  }
  const sums = sumRes?.rows[0];
  if (sums !== undefined) {
    config.features.filter((f) => f.kind !== 'categorical').forEach((f, k) => {
      const a = numeric[f.name]!;
      a.sum = { small: sums.s[k] ?? 0, largeScaled: sums.sl[k] ?? 0 };
      a.min = sums.lo[k] ?? null;
      a.max = sums.hi[k] ?? null;
    });
  }
  return { dataset, numeric, categorical, withinList };
}

/**
 * The day's profile from the exact aggregates and a whole-list sample of the day (the
 * stream engine's profile of those rows): counts, bins and within-list counts come from
 * SQL; the value sample (for later baselines and the distinct-value checks) from the sample.
 */
export function assemblePushdownProfile(date: string, agg: DayAggregates, sample: DayProfile, config: Config, specs: PushdownSpecs): DayProfile {
  const features: Record<string, FeatureProfile> = {};
  for (const f of config.features) {
    const fromSample = sample.features[f.name];
    if (f.kind === 'categorical') {
      const c = agg.categorical[f.name]!;
      const quality: QualityCounts = { ...emptyQualityCounts(), rows: c.rows, nulls: c.nulls, finite: c.rows - c.nulls };
      const { kept: categories, other: otherRows } = boundCategories(c.categories, config.source.maxCategories);
      const profile: CategoricalProfile = { kind: 'categorical', quality, categories, otherRows, distinct: c.categories.size, withinList: f.scope === 'item' ? agg.withinList[f.name]! : null };
      features[f.name] = profile;
      continue;
    }
    const a = agg.numeric[f.name]!;
    const s = fromSample as NumericProfile | undefined;
    const sortedSample = s?.sortedSample ?? new Float64Array(0);
    // The sample's distinct count, corrected by the exact extremes: constant means min = max over the whole day.
    let distinct = s?.distinct ?? 0;
    if (a.quality.finite === 0) distinct = 0;
    else if (a.min === a.max) distinct = 1;
    else distinct = Math.max(2, distinct);
    const coarse = specs.bins?.[f.name];
    const fine = specs.fineBins?.[f.name];
    let binCounts: number[] = [];
    if (coarse !== undefined) {
      const counted = countingSpec(specs, f.name)!;
      const map = counted === coarse ? null : refinementMap(coarse, counted);
      const nCoarse = coarse.edges.length + coarse.pointMass.filter(Boolean).length + 1;
      binCounts = new Array<number>(nCoarse).fill(0);
      a.counts.forEach((c, b) => (binCounts[map === null ? b : map[b]!]! += c));
      // As countsOverBins: infinities in the outer bins, then one bin for the missing values.
      binCounts[0]! += a.quality.negInf;
      binCounts[nCoarse - 1]! += a.quality.posInf;
      binCounts.push(a.quality.nulls + a.quality.nan + a.quality.typeErrors);
    }
    const profile: NumericProfile = {
      kind: f.kind === 'binary' ? 'binary' : 'numeric',
      quality: a.quality,
      binCounts,
      sortedSample,
      distinct,
      mean: a.quality.finite > 0 ? meanOfSplitSum(a.sum, a.quality.finite) : null,
      withinList: f.scope === 'item' ? agg.withinList[f.name]! : null,
    };
    if (fine !== undefined) profile.fineBinCounts = a.counts;
    if (a.extreme !== undefined) profile.extremeCounts = { ...a.extreme, min: a.min, max: a.max };
    features[f.name] = profile;
  }
  return {
    date,
    dataset: agg.dataset,
    totalRows: agg.dataset.rows,
    totalLists: agg.dataset.lists,
    // Every count is exact; only the value sample is a sample.
    sampled: false,
    features,
  };
}
