export type { SliceProfile, BaselineProfile, CategoricalColumn, CategoricalProfile, DatasetCounts, DayColumns, DayProfile, FeatureProfile, FeatureVariation, NumericProfile, WithinListCounts } from './types.ts';
export { NULL_POSITION } from './types.ts';
export { buildDayProfile, groupByList, countsOverBins, profileOnThisThread, MAX_LIST_SIZE_BIN, type ListGrouping, type NumericProfiler } from './day.ts';
export { threadedProfiler, profilerPool, PARALLEL_MIN_ROWS, type ProfilerPool } from './threads.ts';
export { mergeBaseline, capDayProfile, thinSorted, EMPTY_DATASET, FINE_BINS, refineBins, fineBinsFromSorted, withFineBins, type BaselineOptions } from './baseline.ts';
export { DISTINCT_LADDER, distinctLadder } from './variation.ts';
export { WHOLE_DAY, SEGMENT_LABEL_MAX, buildSliceProfiles, compareTally, hasSlices, planSlices, planSlicesOfColumns, segmentLabel, sliceRows, subsetColumns, tallySegment, type SegmentTally, type SliceDef } from './slices.ts';
