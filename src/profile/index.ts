export type { SliceProfile, BaselineProfile, CategoricalProfile, DatasetCounts, DayProfile, FeatureProfile, NumericProfile, WithinListCounts } from './types.ts';
export { buildDayProfile, groupByList, countsOverBins, profileOnThisThread, MAX_LIST_SIZE_BIN, type ListGrouping, type NumericProfiler } from './day.ts';
export { threadedProfiler, profilerPool, PARALLEL_MIN_ROWS, type ProfilerPool } from './threads.ts';
export { mergeBaseline, capDayProfile, thinSorted, EMPTY_DATASET, FINE_BINS, refineBins, fineBinsFromSorted, withFineBins, type BaselineOptions } from './baseline.ts';
export { WHOLE_DAY, SEGMENT_LABEL_MAX, buildSliceProfiles, compareTally, hasSlices, planSlices, planSlicesOfColumns, segmentLabel, sliceRows, subsetColumns, tallySegment, type SegmentTally, type SliceDef } from './slices.ts';
