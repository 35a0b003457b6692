/**
 * The pushdown engine's ranking pass: the outcome of the served order from labels and
 * (source.pushdownAssociation: sql) the within-list association of each item-level numeric
 * feature with the served order and the model score, computed in PostgreSQL with window
 * functions; only per-day sums come back (src/profile/association.ts computes the same in
 * the stream engine).
 *
 * Outcome: one statement over the rows; served rank = rank() over the position, NDCG's rank
 * = the average rank of tied positions ((rank() + count(*) in RANGE mode) / 2), the ideal
 * order = row_number() over the gain descending.
 *
 * Association: the feature values are unpivoted (one row per row and feature with a finite
 * value), and ranks are taken per (feature, list): the average rank of v is
 * (rank() + count(*)) / 2 over ORDER BY v (RANGE mode counts the peers), and among a subset
 * (pairs with a finite score) le - (eq - 1) / 2 from two filtered counts over the same sort.
 * Per list, rho is the Pearson correlation of the two rank vectors, with the centred sums
 * taken as sum(a b) - n m^2 (m = (n + 1) / 2).
 *
 * Exact: every count, rank and per-list sum (ranks are half-integers, their products and sums
 * are exact in float8), hence each list's rho to the last bit of the division and square
 * root. The per-day sums of rho, reciprocal rank and NDCG are float8 sums in another order
 * than the stream engine's (relative difference of order 1e-15), and NDCG's log2 is taken as
 * ln(x) / ln(2) (within an ulp of Math.log2). List ids are compared with COLLATE "C" (byte
 * order: grouping needs equality only, and locale comparison costs more).
 *
 * Cost (tests/bench/ranking.bench.ts): the outcome statement about a quarter of the two
 * other passes; the association statement sorts rows x features three times, far more
 * than the rest of the engine, hence source.pushdownAssociation defaults to the whole-list
 * sample.
 */
import { featureSource, type Config, type FeatureConfig } from '../config/index.ts';
import { quoteIdent, type PoolClient } from '../db/index.ts';
import { DataError } from '../errors.ts';
import type { AssociationCounts, OutcomeCounts, RankCorrelationSums } from '../profile/index.ts';
import { POSITION_BUCKET_UPPER } from '../stats/index.ts';
import type { SourcePlan } from './plan.ts';
import { preparePushdownSession } from './pushdown.ts';

export interface RankingAggregates {
  association: Record<string, AssociationCounts>;
  outcome: OutcomeCounts | null;
}

export interface RankingPassOptions {
  /** Compute the association sums (false: outcome only). */
  association: boolean;
  /** Compute the outcome (needs a label column). */
  outcome: boolean;
}

function valueExpression(config: Config, plan: SourcePlan, f: FeatureConfig, index: number, add: (v: unknown, cast: string) => string): string {
  const where = featureSource(f, config.source.featuresColumn);
  if ('jsonbColumn' in where) {
    const j = `(${quoteIdent(where.jsonbColumn)} -> ${add(where.key, 'text')})`;
    return `(CASE jsonb_typeof(${j}) WHEN 'number' THEN (${j})::float8 WHEN 'boolean' THEN (CASE WHEN ${j} = 'true'::jsonb THEN 1 ELSE 0 END)::float8 END)`;
  }
  const fp = plan.features.find((x) => x.index === index);
  if (fp === undefined) throw new DataError(`feature ${f.name} is not in the source plan`);
  return fp.expression;
}

/** The features the association covers, with the index of the score feature (-1 without one). */
export function associationFeatures(config: Config): { features: { f: FeatureConfig; index: number }[]; score: number } {
  const score = config.source.columns.score;
  const scoreIndex = score === undefined ? -1 : config.features.findIndex((f) => f.kind !== 'categorical' && f.key === undefined && (f.column ?? f.name) === score);
  const features = config.features.map((f, index) => ({ f, index })).filter(({ f }) => f.scope === 'item' && f.kind !== 'categorical');
  return { features, score: scoreIndex };
}

export interface RankingStatements {
  /** Per date: the outcome sums (null without a label column or when not asked for). */
  outcome: { text: string; values: unknown[] } | null;
  /** Per date and feature: the association sums (null when not asked for or no feature applies). */
  association: { text: string; values: unknown[] } | null;
}

/** Builds the ranking statements for one or more dates (grouped by date). Exported for EXPLAIN in tests and benchmarks. */
export function buildRankingQuery(config: Config, plan: SourcePlan, dates: readonly string[], options: RankingPassOptions): RankingStatements {
  for (const d of dates) if (!/^\d{4}-\d{2}-\d{2}$/.test(d)) throw new DataError(`not a date: ${JSON.stringify(d)}`);
  const cols = config.source.columns;
  const listId = quoteIdent(cols.listId);
  const position = quoteIdent(cols.position);
  const where = (add: (v: unknown, cast: string) => string): string =>
    `${plan.dateColumn} = ANY(${add(dates, 'date[]')}) AND ${listId} IS NOT NULL AND ${position} IS NOT NULL`;
  const params = (): { values: unknown[]; add: (v: unknown, cast: string) => string } => {
    const values: unknown[] = [];
    return { values, add: (v, cast) => (values.push(v), `$${values.length}::${cast}`) };
  };

  let outcome: RankingStatements['outcome'] = null;
  if (options.outcome && plan.hasLabel) {
    const { values, add } = params();
    const y = plan.selectList[3]!;
    const k = add(config.outcome.ndcgAt, 'float8');
    let lo = 0;
    const buckets = POSITION_BUCKET_UPPER.map((hi, b) => {
      const e = `count(*) FILTER (WHERE yp AND sr > ${lo}${Number.isFinite(hi) ? ` AND sr <= ${hi}` : ''}) AS b${b}`;
      lo = hi;
      return e;
    });
    const rr = '(CASE WHEN npos > 0 THEN 1.0::float8 / first END)';
    const nd = '(CASE WHEN npos > 0 THEN dcg / idcg END)';
    const text = `SELECT d::text AS d, ARRAY[count(*) FILTER (WHERE npos > 0), coalesce(sum(${rr}), 0), coalesce(sum(${rr} * ${rr}), 0), coalesce(sum(${nd}), 0), coalesce(sum(${nd} * ${nd}), 0),
       ${POSITION_BUCKET_UPPER.map((_, b) => `coalesce(sum(b${b}), 0)`).join(', ')}]::float8[] AS v
  FROM (SELECT d, l, count(*) FILTER (WHERE yp) AS npos, min(sr) FILTER (WHERE yp) AS first,
               coalesce(sum(g / (ln(1 + pr) / ln(2::float8))) FILTER (WHERE yp AND pr <= ${k}), 0) AS dcg,
               sum(g / (ln(1 + ir) / ln(2::float8))) FILTER (WHERE g > 0 AND ir <= ${k}) AS idcg,
               ${buckets.join(', ')}
          FROM (SELECT d, l, yp, g,
                       rank() OVER (PARTITION BY d, l ORDER BY p) AS sr,
                       (rank() OVER (PARTITION BY d, l ORDER BY p) + count(*) OVER (PARTITION BY d, l ORDER BY p))::float8 / 2 AS pr,
                       row_number() OVER (PARTITION BY d, l ORDER BY g DESC) AS ir
                  FROM (SELECT ${plan.dateColumn} AS d, (${listId})::text COLLATE "C" AS l, (${position})::float8 AS p,
                               (${y} > 0 AND ${y} <> 'NaN'::float8) IS TRUE AS yp,
                               CASE WHEN ${y} > 0 AND ${y} <> 'NaN'::float8 THEN ${y} ELSE 0 END AS g
                          FROM ${plan.relation}
                         WHERE ${where(add)}) AS r1) AS r2
         GROUP BY d, l) AS r3
 GROUP BY d`;
    outcome = { text, values };
  }

  let association: RankingStatements['association'] = null;
  const { features, score } = options.association ? associationFeatures(config) : { features: [], score: -1 };
  if (features.length > 0) {
    const { values, add } = params();
    const xs = features.map(({ f, index }) => valueExpression(config, plan, f, index, add));
    const scoreExpr = score >= 0 ? valueExpression(config, plan, config.features[score]!, score, add) : 'NULL::float8';
    // Feature k of the unnest is features[k]; the score's own entry is never paired with the score.
    const scorePos = features.findIndex(({ index }) => index === score);
    // Average rank among the rows where `cond` holds: le - (eq - 1) / 2 from one sort by (f, d, l, v).
    const rank = (cond: string, v: string): string =>
      `((count(*) FILTER (WHERE ${cond}) OVER (PARTITION BY f, d, l ORDER BY ${v}))::float8 - ((count(*) FILTER (WHERE ${cond}) OVER (PARTITION BY f, d, l, ${v}))::float8 - 1) / 2)`;
    // With m = (n + 1) / 2: sum (a - m)(b - m) = sum ab - n m^2, exact in float8 for half-integer ranks.
    const centred = (c: string, a: string, b: string, n: string): string => `(sum(${a} * ${b}) FILTER (WHERE ${c}) - ${n} * ((${n} + 1) / 2.0::float8) * ((${n} + 1) / 2.0::float8))`;
    const rho = (c: string, a: string, b: string): string => {
      const n = `(count(*) FILTER (WHERE ${c}))::float8`;
      const sxx = centred(c, a, a, n);
      const syy = centred(c, b, b, n);
      return `CASE WHEN count(*) FILTER (WHERE ${c}) >= 3 AND ${sxx} > 0 AND ${syy} > 0 THEN greatest(-1::float8, least(1::float8, ${centred(c, a, b, n)} / sqrt(${sxx} * ${syy}))) END`;
    };
    const sums = (c: string): string => `count(${c}), coalesce(sum(${c}), 0), coalesce(sum(${c} * ${c}), 0), count(*) FILTER (WHERE ${c} > 0), count(*) FILTER (WHERE ${c} < 0)`;
    const text = `SELECT d::text AS d, f, ARRAY[${sums('ap')}, ${sums('aps')}]::float8[] AS v
  FROM (SELECT d, l, f, ${rho('true', 'rx', 'rp')} AS ap, ${rho('cs', 'sx', 'ss')} AS aps
          FROM (SELECT d, l, f, cs,
                       (rank() OVER (PARTITION BY f, d, l ORDER BY x) + count(*) OVER (PARTITION BY f, d, l ORDER BY x))::float8 / 2 AS rx,
                       (rank() OVER (PARTITION BY f, d, l ORDER BY p) + count(*) OVER (PARTITION BY f, d, l ORDER BY p))::float8 / 2 AS rp,
                       ${rank('cs', 'x')} AS sx,
                       ${rank('cs', 's')} AS ss
                  FROM (SELECT r.d, r.l, r.p, r.s, u.f, u.x, (u.f <> ${scorePos} AND r.s > '-Infinity'::float8 AND r.s < 'Infinity'::float8) IS TRUE AS cs
                          FROM (SELECT ${plan.dateColumn} AS d, (${listId})::text COLLATE "C" AS l, (${position})::float8 AS p, ${scoreExpr} AS s,
                                       ARRAY[${xs.join(', ')}]::float8[] AS xs
                                  FROM ${plan.relation}
                                 WHERE ${where(add)}) AS r
                               CROSS JOIN LATERAL unnest(${add(features.map((_, k) => k), 'int4[]')}, r.xs) AS u(f, x)
                         WHERE u.x > '-Infinity'::float8 AND u.x < 'Infinity'::float8) AS r1) AS r2
         GROUP BY d, l, f) AS r3
 GROUP BY d, f`;
    association = { text, values };
  }
  return { outcome, association };
}

/**
 * Runs the ranking statements for `dates` (grouped by date) and returns each date's sums;
 * a date without rows is absent. `client` should be inside a read-only transaction.
 */
export async function readRankingAggregates(client: PoolClient, config: Config, plan: SourcePlan, dates: readonly string[], options: RankingPassOptions): Promise<Map<string, RankingAggregates>> {
  const q = buildRankingQuery(config, plan, dates, options);
  await preparePushdownSession(client);
  const out = new Map<string, RankingAggregates>();
  const entry = (d: string): RankingAggregates => {
    let e = out.get(d);
    if (e === undefined) out.set(d, (e = { association: {}, outcome: null }));
    return e;
  };
  if (q.outcome !== null) {
    const res = await client.query<{ d: string; v: number[] }>(q.outcome.text, q.outcome.values);
    for (const { d, v } of res.rows) {
      const lists = v[0]!;
      entry(d).outcome = {
        k: config.outcome.ndcgAt,
        lists,
        reciprocalRank: { count: lists, sum: v[1]!, sumSq: v[2]! },
        ndcg: { count: lists, sum: v[3]!, sumSq: v[4]! },
        positivesByBucket: POSITION_BUCKET_UPPER.map((_, b) => v[5 + b]!),
      };
    }
  }
  if (q.association !== null) {
    const { features, score } = associationFeatures(config);
    const res = await client.query<{ d: string; f: number; v: number[] }>(q.association.text, q.association.values);
    const sums = (v: number[], at: number): RankCorrelationSums => ({ count: v[at]!, sum: v[at + 1]!, sumSq: v[at + 2]!, positive: v[at + 3]!, negative: v[at + 4]! });
    for (const { d, f, v } of res.rows) {
      const { f: feature, index } = features[f]!;
      entry(d).association[feature.name] = { position: sums(v, 0), score: score >= 0 && index !== score ? sums(v, 5) : null };
    }
  }
  return out;
}

/**
 * The pushdown profile with the ranking aggregates filled in: the association from the SQL
 * pass when it ran (source.pushdownAssociation: sql), else from the whole-list sample the
 * engine profiled (its lists are whole, so each list's rho is exact; the day's mean is over
 * the sampled lists); the outcome from the SQL pass (null without a label column). A day
 * without lists gets zero sums, as the stream engine gives it.
 */
export function withRankingAggregates<P extends { features: Record<string, { kind: string; association?: AssociationCounts | null }>; outcome?: OutcomeCounts | null }>(
  profile: P,
  agg: RankingAggregates | undefined,
  sample: { features: Record<string, { kind: string; association?: AssociationCounts | null }> },
  config: Config,
  hasLabel: boolean,
): P {
  const { features, score } = associationFeatures(config);
  const empty = (): RankCorrelationSums => ({ count: 0, sum: 0, sumSq: 0, positive: 0, negative: 0 });
  const fromSql = config.source.pushdownAssociation === 'sql';
  const out = { ...profile, features: { ...profile.features } };
  for (const { f, index } of features) {
    const p = out.features[f.name];
    if (p === undefined || p.kind === 'categorical') continue;
    const fallback = { position: empty(), score: score >= 0 && index !== score ? empty() : null };
    const association = fromSql ? agg?.association[f.name] : sample.features[f.name]?.association;
    out.features[f.name] = { ...p, association: association ?? fallback };
  }
  const noOutcome: OutcomeCounts = { k: config.outcome.ndcgAt, lists: 0, reciprocalRank: { count: 0, sum: 0, sumSq: 0 }, ndcg: { count: 0, sum: 0, sumSq: 0 }, positivesByBucket: POSITION_BUCKET_UPPER.map(() => 0) };
  out.outcome = hasLabel ? (agg?.outcome ?? noOutcome) : null;
  return out;
}
