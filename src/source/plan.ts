/**
 * The source plan: the config's table, columns and jsonb keys checked against the
 * catalogue, and the SELECT list that reads them. Errors name the missing thing and the
 * config path that asked for it. Identifiers are quoted; values are parameters.
 */
import { featureSource, type Config, type FeatureConfig } from '../config/index.ts';
import { describeRelation, quoteIdent, quoteQualified, type PoolClient, type RelationInfo } from '../db/index.ts';
import { ConfigError, SourceError } from '../errors.ts';
import { foreignPartitionsOf } from './partitions.ts';

/** How a selected column arrives in binary COPY and how to decode it. */
export type Decoder = 'text' | 'int4' | 'float8' | 'jsontext';

export interface FeaturePlan {
  feature: FeatureConfig;
  /** Index in config.features. */
  index: number;
  expression: string;
  decoder: Decoder;
}

export interface SourcePlan {
  relation: string;
  dateColumn: string;
  listIdExpression: string;
  /** SELECT list in COPY order: list id, item id, position, label?, features... */
  selectList: string[];
  decoders: Decoder[];
  hasLabel: boolean;
  features: FeaturePlan[];
  /** Segment columns of config.slices.segments, read as text after the features (in that order). */
  segments: { column: string; expression: string }[];
  /**
   * The leaf partitions, quoted, when `relation` is a partitioned table whose leaves are all
   * postgres_fdw foreign tables (shards); null otherwise. Statements that group by something
   * other than the partition key are written once per partition (see partitions.ts).
   */
  foreignPartitions: readonly string[] | null;
}

/** The relations a per-partition statement reads: each foreign partition, or the source itself. */
export function relationsOf(plan: Pick<SourcePlan, 'relation' | 'foreignPartitions'>): readonly string[] {
  return plan.foreignPartitions ?? [plan.relation];
}

const NUMERIC_TYPES = new Set(['double precision', 'real', 'numeric', 'integer', 'bigint', 'smallint', 'boolean']);

function baseType(type: string): string {
  return type.replace(/\(.*\)$/, '');
}

/** Expression reading a numeric column as float8 (booleans as 0/1). */
function asFloat8(column: string, type: string): string {
  return baseType(type) === 'boolean' ? `(${quoteIdent(column)})::int4::float8` : `(${quoteIdent(column)})::float8`;
}

function requireColumn(rel: RelationInfo, column: string, configPath: string, relation: string): string {
  const type = rel.columns.get(column);
  if (type === undefined) throw new ConfigError(`${configPath}: column "${column}" does not exist in ${relation}`, [`${configPath}: column "${column}" does not exist in ${relation}`]);
  return type;
}

/**
 * Checks the configured source against the catalogue and builds the SELECT list.
 * `client` should be inside a read-only transaction.
 */
export async function planSource(client: PoolClient, config: Config): Promise<SourcePlan> {
  const src = config.source;
  let rel: RelationInfo | null;
  try {
    rel = await describeRelation(client, src.table);
  } catch (cause) {
    throw new SourceError(`cannot read the catalogue of the source database: ${(cause as Error).message}`, { cause });
  }
  if (rel === null) {
    const msg = `source.table: table or view "${src.table}" does not exist (or this role cannot see it)`;
    throw new ConfigError(msg, [msg]);
  }
  const relation = quoteQualified(`${rel.schema}.${rel.name}`);
  const cols = src.columns;
  const problems: string[] = [];
  const check = (column: string, path: string): string | undefined => {
    try {
      return requireColumn(rel, column, path, `${rel.schema}.${rel.name}`);
    } catch (e) {
      problems.push((e as ConfigError).message);
      return undefined;
    }
  };

  const dateType = check(cols.snapshotDate, 'source.columns.snapshotDate');
  if (dateType !== undefined && dateType !== 'date') problems.push(`source.columns.snapshotDate: column "${cols.snapshotDate}" is ${dateType}, expected date`);
  check(cols.listId, 'source.columns.listId');
  check(cols.itemId, 'source.columns.itemId');
  const positionType = check(cols.position, 'source.columns.position');
  if (positionType !== undefined && !['integer', 'smallint', 'bigint'].includes(positionType)) problems.push(`source.columns.position: column "${cols.position}" is ${positionType}, expected an integer type`);
  let labelType: string | undefined;
  if (cols.label !== undefined) {
    labelType = check(cols.label, 'source.columns.label');
    if (labelType !== undefined && !NUMERIC_TYPES.has(baseType(labelType))) problems.push(`source.columns.label: column "${cols.label}" is ${labelType}, expected a number or boolean`);
  }
  if (src.featuresColumn !== undefined) {
    const t = check(src.featuresColumn, 'source.featuresColumn');
    if (t !== undefined && t !== 'jsonb') problems.push(`source.featuresColumn: column "${src.featuresColumn}" is ${t}, expected jsonb`);
  }

  const features: FeaturePlan[] = [];
  config.features.forEach((f, index) => {
    const where = featureSource(f, src.featuresColumn);
    if ('jsonbColumn' in where) {
      const expression = `(${quoteIdent(where.jsonbColumn)} -> ${literalKey(where.key)})::text`;
      features.push({ feature: f, index, expression: f.kind === 'categorical' ? `(${quoteIdent(where.jsonbColumn)} ->> ${literalKey(where.key)})` : expression, decoder: f.kind === 'categorical' ? 'text' : 'jsontext' });
      return;
    }
    const path = `features[${index}].column`;
    const type = check(where.column, path);
    if (type === undefined) return;
    if (f.kind === 'categorical') {
      features.push({ feature: f, index, expression: `(${quoteIdent(where.column)})::text`, decoder: 'text' });
    } else if (NUMERIC_TYPES.has(baseType(type))) {
      features.push({ feature: f, index, expression: asFloat8(where.column, type), decoder: 'float8' });
    } else {
      problems.push(`${path}: column "${where.column}" is ${type}; a ${f.kind} feature needs a number or boolean column`);
    }
  });
  const segments: SourcePlan['segments'] = [];
  config.slices.segments.forEach((seg, i) => {
    if (check(seg.column, `slices.segments[${i}].column`) !== undefined) segments.push({ column: seg.column, expression: `(${quoteIdent(seg.column)})::text` });
  });
  if (problems.length > 0) throw new ConfigError(`the source does not match the config (${problems.length} problem${problems.length === 1 ? '' : 's'})`, problems);

  const selectList = [`(${quoteIdent(cols.listId)})::text`, `(${quoteIdent(cols.itemId)})::text`, `(${quoteIdent(cols.position)})::int4`];
  const decoders: Decoder[] = ['text', 'text', 'int4'];
  if (cols.label !== undefined && labelType !== undefined) {
    selectList.push(asFloat8(cols.label, labelType));
    decoders.push('float8');
  }
  for (const fp of features) {
    selectList.push(fp.expression);
    decoders.push(fp.decoder);
  }
  for (const seg of segments) {
    selectList.push(seg.expression);
    decoders.push('text');
  }
  return {
    relation,
    dateColumn: quoteIdent(cols.snapshotDate),
    listIdExpression: quoteIdent(cols.listId),
    selectList,
    decoders,
    hasLabel: cols.label !== undefined,
    features,
    segments,
    foreignPartitions: await foreignPartitionsOf(client, relation),
  };
}

/**
 * A jsonb key as an SQL string literal. Keys are config text, so they are escaped as
 * literals (COPY cannot take bind parameters); the config schema limits their length.
 */
function literalKey(key: string): string {
  return `'${key.replace(/'/g, "''")}'`;
}

/**
 * Fails when a configured jsonb key appears in no row of the newest snapshot: almost
 * always a spelling mistake in the config. (A key that disappears on a later day is a
 * finding, not a config error.)
 */
export async function checkJsonbKeys(client: PoolClient, config: Config, plan: Pick<SourcePlan, 'relation' | 'dateColumn'>): Promise<void> {
  const jsonbColumn = config.source.featuresColumn;
  const keyed = config.features.map((f, i) => ({ f, i })).filter(({ f }) => f.key !== undefined);
  if (jsonbColumn === undefined || keyed.length === 0) return;
  const counts = keyed.map(({ f }, j) => `count(*) FILTER (WHERE ${quoteIdent(jsonbColumn)} ? $${j + 1}) AS k${j}`).join(', ');
  const sql = `SELECT ${counts} FROM ${plan.relation} WHERE ${plan.dateColumn} = (SELECT max(${plan.dateColumn}) FROM ${plan.relation})`;
  const res = await client.query(sql, keyed.map(({ f }) => f.key));
  const row = res.rows[0] as Record<string, string> | undefined;
  if (row === undefined) return;
  const problems = keyed.filter((_, j) => Number(row[`k${j}`]) === 0).map(({ f, i }) => `features[${i}].key: key "${f.key}" appears in no row of the newest snapshot in ${jsonbColumn}`);
  if (problems.length > 0) throw new ConfigError(`jsonb keys not found (${problems.length})`, problems);
}

/**
 * Every problem the catalogue checks of a run (planSource, then checkJsonbKeys) find, each
 * with its config path, instead of stopping at the first check that fails: what
 * `check-config --connect` lists. `client` should be inside a read-only transaction.
 */
export async function sourceProblems(client: PoolClient, config: Config): Promise<string[]> {
  const problems: string[] = [];
  let plan: Pick<SourcePlan, 'relation' | 'dateColumn'> | null = null;
  try {
    plan = await planSource(client, config);
  } catch (err) {
    if (!(err instanceof ConfigError)) throw err;
    problems.push(...err.problems);
    // The keys can still be looked up when the table, its date column and the jsonb column are right.
    const blocking = /^source\.(table|columns\.snapshotDate|featuresColumn):/;
    const rel = problems.some((p) => blocking.test(p)) ? null : await describeRelation(client, config.source.table);
    if (rel !== null) plan = { relation: quoteQualified(`${rel.schema}.${rel.name}`), dateColumn: quoteIdent(config.source.columns.snapshotDate) };
  }
  if (plan !== null) {
    try {
      await checkJsonbKeys(client, config, plan);
    } catch (err) {
      if (!(err instanceof ConfigError)) throw err;
      problems.push(...err.problems);
    }
  }
  return problems;
}
