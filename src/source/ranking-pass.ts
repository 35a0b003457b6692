/**
 * The pushdown engine's ranking pass: the within-list association of each item-level
 * numeric feature with the served order and the model score, and the outcome of the served
 * order from labels, computed in PostgreSQL with window functions; only per-day sums come
 * back (src/profile/association.ts computes the same in the stream engine).
 *
 * Average ranks with ties, among the complete pairs of a list, from two filtered counts over
 * one sort: with le = count(*) FILTER (WHERE complete) OVER (PARTITION BY list ORDER BY v)
 * (RANGE mode: rows <= v, peers included) and eq = the same count OVER (PARTITION BY list, v),
 * the average rank is le - (eq - 1) / 2. Both windows sort by (list, v), so PostgreSQL sorts
 * once per feature, plus once by position and once by score. Per list, rho is the Pearson
 * correlation of the two rank vectors, as in stats/spearman.ts rhoFromRanks.
 *
 * Exact: every count, rank and per-list sum (ranks are half-integers, their products and sums
 * are exact in float8), hence each list's rho to the last bit of the division and square
 * root. The per-day sums of rho, reciprocal rank and NDCG are float8 sums in another order
 * than the stream engine's (relative difference of order 1e-15), and NDCG's log2 is taken as
 * ln(x) / ln(2) (within an ulp of Math.log2). Cost: one sort of the day per feature, which is
 * far more than the other two passes; `outcome`-only days (labels re-read when they lag) skip
 * the feature sorts.
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

const finite = (v: string): string => `(${v} > '-Infinity'::float8 AND ${v} < 'Infinity'::float8)`;

/** The features the association covers, with the index of the score feature (-1 without one). */
export function associationFeatures(config: Config): { features: { f: FeatureConfig; index: number }[]; score: number } {
  const score = config.source.columns.score;
  const scoreIndex = score === undefined ? -1 : config.features.findIndex((f) => f.kind !== 'categorical' && f.key === undefined && (f.column ?? f.name) === score);
  const features = config.features.map((f, index) => ({ f, index })).filter(({ f }) => f.scope === 'item' && f.kind !== 'categorical');
  return { features, score: scoreIndex };
}

/** Builds the ranking statement for one or more dates (grouped by date). Exported for EXPLAIN in tests. */
export function buildRankingQuery(config: Config, plan: SourcePlan, dates: readonly string[], options: RankingPassOptions): { text: string; values: unknown[] } {
  for (const d of dates) if (!/^\d{4}-\d{2}-\d{2}$/.test(d)) throw new DataError(`not a date: ${JSON.stringify(d)}`);
  const values: unknown[] = [];
  const add = (v: unknown, cast: string): string => {
    values.push(v);
    return `$${values.length}::${cast}`;
  };
  const cols = config.source.columns;
  const wantOutcome = options.outcome && plan.hasLabel;
  const { features, score } = options.association ? associationFeatures(config) : { features: [], score: -1 };
  const scoreExpr = score >= 0 ? valueExpression(config, plan, config.features[score]!, score, add) : null;

  // Level 1: the rows of the day with a list id and a position.
  const l1: string[] = [`${plan.dateColumn}::text AS d`, `(${quoteIdent(cols.listId)})::text AS l`, `(${quoteIdent(cols.position)})::float8 AS p`];
  if (wantOutcome) {
    const y = plan.selectList[3]!;
    l1.push(`(${y} > 0 AND ${y} <> 'NaN'::float8) AS yp`, `CASE WHEN ${y} > 0 AND ${y} <> 'NaN'::float8 THEN ${y} ELSE 0 END AS g`);
  }
  if (scoreExpr !== null) l1.push(`${scoreExpr} AS s`);
  features.forEach(({ f, index }, i) => {
    const v = valueExpression(config, plan, f, index, add);
    l1.push(`${v} AS x${i}`, `${finite(v)} IS TRUE AS c${i}`);
    if (scoreExpr !== null && index !== score) l1.push(`(${finite(v)} AND ${finite(scoreExpr)}) IS TRUE AS cs${i}`);
  });

  // Level 2: ranks by window functions.
  const rank = (cond: string, orderBy: string): string =>
    `((count(*) FILTER (WHERE ${cond}) OVER (PARTITION BY d, l ORDER BY ${orderBy}))::float8 - ((count(*) FILTER (WHERE ${cond}) OVER (PARTITION BY d, l, ${orderBy}))::float8 - 1) / 2)`;
  const l2: string[] = ['d', 'l'];
  if (wantOutcome) {
    l2.push(
      'yp',
      'g',
      'rank() OVER (PARTITION BY d, l ORDER BY p) AS sr',
      '((rank() OVER (PARTITION BY d, l ORDER BY p) + count(*) OVER (PARTITION BY d, l ORDER BY p))::float8 / 2) AS pr',
      'row_number() OVER (PARTITION BY d, l ORDER BY g DESC) AS ir',
    );
  }
  features.forEach(({ index }, i) => {
    l2.push(`c${i}`, `${rank(`c${i}`, `x${i}`)} AS rx${i}`, `${rank(`c${i}`, 'p')} AS rp${i}`, `((count(*) FILTER (WHERE c${i}) OVER (PARTITION BY d, l))::float8 + 1) / 2 AS m${i}`);
    if (scoreExpr !== null && index !== score) {
      l2.push(`cs${i}`, `${rank(`cs${i}`, `x${i}`)} AS sx${i}`, `${rank(`cs${i}`, 's')} AS ss${i}`, `((count(*) FILTER (WHERE cs${i}) OVER (PARTITION BY d, l))::float8 + 1) / 2 AS ms${i}`);
    }
  });

  // Level 3: per list.
  const k = wantOutcome ? add(config.outcome.ndcgAt, 'float8') : '';
  const l3: string[] = ['d', 'l'];
  if (wantOutcome) {
    l3.push(
      'count(*) FILTER (WHERE yp) AS npos',
      'min(sr) FILTER (WHERE yp) AS first',
      `coalesce(sum(g / (ln(1 + pr) / ln(2::float8))) FILTER (WHERE yp AND pr <= ${k}), 0) AS dcg`,
      `sum(g / (ln(1 + ir) / ln(2::float8))) FILTER (WHERE g > 0 AND ir <= ${k}) AS idcg`,
    );
    let lo = 0;
    POSITION_BUCKET_UPPER.forEach((hi, b) => {
      l3.push(`count(*) FILTER (WHERE yp AND sr > ${lo}${Number.isFinite(hi) ? ` AND sr <= ${hi}` : ''}) AS b${b}`);
      lo = hi;
    });
  }
  const rho = (c: string, a: string, b: string, m: string): string => {
    const sxy = `sum((${a} - ${m}) * (${b} - ${m})) FILTER (WHERE ${c})`;
    const sxx = `sum((${a} - ${m}) * (${a} - ${m})) FILTER (WHERE ${c})`;
    const syy = `sum((${b} - ${m}) * (${b} - ${m})) FILTER (WHERE ${c})`;
    return `CASE WHEN count(*) FILTER (WHERE ${c}) >= 3 AND ${sxx} > 0 AND ${syy} > 0 THEN greatest(-1::float8, least(1::float8, (${sxy}) / sqrt((${sxx}) * (${syy})))) END`;
  };
  features.forEach(({ index }, i) => {
    l3.push(`${rho(`c${i}`, `rx${i}`, `rp${i}`, `m${i}`)} AS ap${i}`);
    if (scoreExpr !== null && index !== score) l3.push(`${rho(`cs${i}`, `sx${i}`, `ss${i}`, `ms${i}`)} AS as${i}`);
  });

  // Level 4: per date.
  const sums = (c: string): string[] => [`count(${c})`, `coalesce(sum(${c}), 0)`, `coalesce(sum(${c} * ${c}), 0)`, `count(*) FILTER (WHERE ${c} > 0)`, `count(*) FILTER (WHERE ${c} < 0)`];
  const l4: string[] = [];
  if (wantOutcome) {
    const rr = '(CASE WHEN npos > 0 THEN 1.0::float8 / first END)';
    const nd = '(CASE WHEN npos > 0 THEN dcg / idcg END)';
    l4.push(`count(*) FILTER (WHERE npos > 0)`, `coalesce(sum(${rr}), 0)`, `coalesce(sum(${rr} * ${rr}), 0)`, `coalesce(sum(${nd}), 0)`, `coalesce(sum(${nd} * ${nd}), 0)`);
    POSITION_BUCKET_UPPER.forEach((_, b) => l4.push(`coalesce(sum(b${b}), 0)`));
  }
  features.forEach(({ index }, i) => {
    l4.push(...sums(`ap${i}`));
    if (scoreExpr !== null && index !== score) l4.push(...sums(`as${i}`));
  });
  const listed = l4.length === 0 ? `'{}'::float8[]` : `ARRAY[${l4.map((e) => `(${e})::float8`).join(', ')}]`;
  const text = `SELECT d, ${listed} AS v
  FROM (SELECT ${l3.join(',\n               ')}
          FROM (SELECT ${l2.join(',\n                       ')}
                  FROM (SELECT ${l1.join(',\n                               ')}
                          FROM ${plan.relation}
                         WHERE ${plan.dateColumn} = ANY(${add(dates, 'date[]')}) AND ${quoteIdent(cols.listId)} IS NOT NULL AND ${quoteIdent(cols.position)} IS NOT NULL) AS r1) AS r2
         GROUP BY d, l) AS r3
 GROUP BY d`;
  return { text, values };
}

/**
 * Runs the ranking pass for `dates` (one statement, grouped by date) and returns each
 * date's sums; a date without rows is absent. `client` should be inside a read-only
 * transaction (preparePushdownSession's settings apply).
 */
export async function readRankingAggregates(client: PoolClient, config: Config, plan: SourcePlan, dates: readonly string[], options: RankingPassOptions): Promise<Map<string, RankingAggregates>> {
  const q = buildRankingQuery(config, plan, dates, options);
  await preparePushdownSession(client);
  const res = await client.query<{ d: string; v: number[] }>(q.text, q.values);
  const wantOutcome = options.outcome && plan.hasLabel;
  const { features, score } = options.association ? associationFeatures(config) : { features: [], score: -1 };
  const out = new Map<string, RankingAggregates>();
  for (const row of res.rows) {
    const v = row.v;
    let at = 0;
    let outcome: OutcomeCounts | null = null;
    if (wantOutcome) {
      const lists = v[at++]!;
      outcome = {
        k: config.outcome.ndcgAt,
        lists,
        reciprocalRank: { count: lists, sum: v[at++]!, sumSq: v[at++]! },
        ndcg: { count: lists, sum: v[at++]!, sumSq: v[at++]! },
        positivesByBucket: POSITION_BUCKET_UPPER.map(() => v[at++]!),
      };
    }
    const take = (): RankCorrelationSums => ({ count: v[at++]!, sum: v[at++]!, sumSq: v[at++]!, positive: v[at++]!, negative: v[at++]! });
    const association: Record<string, AssociationCounts> = {};
    for (const { f, index } of features) {
      const position = take();
      const withScore = score >= 0 && index !== score;
      association[f.name] = { position, score: withScore ? take() : null };
    }
    out.set(row.d, { association, outcome });
  }
  return out;
}

/**
 * The pushdown profile with the ranking pass's exact sums in place of those of its whole-list
 * sample: every item-level numeric feature's association, and the outcome (null without a
 * label column). A day without lists gets zero sums, as the stream engine gives it.
 */
export function withRankingAggregates<P extends { features: Record<string, { kind: string; association?: AssociationCounts | null }>; outcome?: OutcomeCounts | null }>(
  profile: P,
  agg: RankingAggregates | undefined,
  config: Config,
  hasLabel: boolean,
): P {
  const { features, score } = associationFeatures(config);
  const empty = (): RankCorrelationSums => ({ count: 0, sum: 0, sumSq: 0, positive: 0, negative: 0 });
  const out = { ...profile, features: { ...profile.features } };
  for (const { f, index } of features) {
    const p = out.features[f.name];
    if (p === undefined || p.kind === 'categorical') continue;
    out.features[f.name] = { ...p, association: agg?.association[f.name] ?? { position: empty(), score: score >= 0 && index !== score ? empty() : null } };
  }
  const noOutcome: OutcomeCounts = { k: config.outcome.ndcgAt, lists: 0, reciprocalRank: { count: 0, sum: 0, sumSq: 0 }, ndcg: { count: 0, sum: 0, sumSq: 0 }, positivesByBucket: POSITION_BUCKET_UPPER.map(() => 0) };
  out.outcome = hasLabel ? (agg?.outcome ?? noOutcome) : null;
  return out;
}
