export type { BaselineProfile, CategoricalColumn, CategoricalProfile, DatasetCounts, DayColumns, DayProfile, FeatureProfile, NumericProfile, WithinListCounts } from './types.ts';
export { NULL_POSITION } from './types.ts';
export { buildDayProfile, groupByList, countsOverBins, profileOnThisThread, MAX_LIST_SIZE_BIN, type ListGrouping, type NumericProfiler } from './day.ts';
export { threadedProfiler, PARALLEL_MIN_ROWS } from './threads.ts';
export { mergeBaseline, capDayProfile, thinSorted, EMPTY_DATASET, FINE_BINS, refineBins, fineBinsFromSorted, withFineBins, type BaselineOptions } from './baseline.ts';
export type { AssociationCounts, OutcomeCounts, RankCorrelationSums, RankingDay } from './types.ts';
export { emptyCorrelationSums, featureAssociation, mergeCorrelationSums, mergeOutcomeCounts, outcomeCounts, servedOrder, type ServedOrder } from './association.ts';
export { scoreFeatureIndex } from './day.ts';
export { rankingDay } from './baseline.ts';
