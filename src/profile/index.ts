export type { BaselineProfile, CategoricalProfile, DatasetCounts, DayProfile, FeatureProfile, NumericProfile, WithinListCounts } from './types.ts';
export { buildDayProfile, groupByList, countsOverBins, MAX_LIST_SIZE_BIN } from './day.ts';
export { mergeBaseline, capDayProfile, thinSorted, emptyQuality, EMPTY_DATASET, type BaselineOptions } from './baseline.ts';
