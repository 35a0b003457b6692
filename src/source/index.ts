export { planSource, checkJsonbKeys, sourceProblems, type SourcePlan, type FeaturePlan } from './plan.ts';
export { CopyBinaryParser, type TupleSink } from './copy-binary.ts';
export { readDay, countDays, firstSnapshotDate, listSampleCondition, NULL_POSITION, type DayColumns, type CategoricalColumn, type ReadDayOptions } from './read-day.ts';
export {
  assemblePushdownProfile,
  buildPushdownQueries,
  preparePushdownSession,
  readDayAggregates,
  refinementMap,
  valueCoding,
  widthBucketThresholds,
  type DayAggregates,
  type PushdownQueries,
  type PushdownSpecs,
  type PushdownTimings,
  type ValueCoding,
} from './pushdown.ts';
export { sliceFilter, tallySegmentsSql, planBaselineRelation, countDaysBetween } from './slice-sql.ts';
export type { RowFilter } from './pushdown.ts';
export { associationFeatures, buildRankingQuery, readRankingAggregates, withRankingAggregates, type RankingAggregates, type RankingPassOptions } from './ranking-pass.ts';
export { serversWithJit } from './partitions.ts';
