/**
 * Plumbline's statistics unit: pure functions over columns (Float64Array) and counts.
 * No I/O, no configuration; every function throws StatsInputError on invalid input.
 */
export { StatsInputError } from './errors.ts';
export { assignBin, binCount, binCounts, binCountsSorted, binEdgesFromSorted, binLabels } from './binning.ts';
export type { BinSpec } from './binning.ts';
export { PSI_EMPTY_BIN_COUNT, psi, psiNoiseFloor } from './psi.ts';
export type { PsiResult } from './psi.ts';
export { chiSquareCdf, chiSquareQuantile, chiSquareSurvival, regularizedGammaP, regularizedGammaQ } from './chisquare.ts';
export { KS_EXACT_AUTO_MAX_N, ks2, ks2Sorted, ksPValue } from './ks.ts';
export type { KsMethod, KsResult } from './ks.ts';
export { kolmogorovCdf, kolmogorovSurvival, kolmogorovSurvivalInverse } from './kolmogorov.ts';
export { ks2ExactSurvival } from './ksexact.ts';
export { benjaminiHochberg } from './bh.ts';
export { halfSortScratchLength, radixSortInPlace, radixSortedCopy, thinSorted } from './sort.ts';
export {
  MISSING_NULL,
  MISSING_PRESENT,
  MISSING_TYPE_ERROR,
  distinctCountSorted,
  emptyQualityCounts,
  mergeQualityCounts,
  qualityCounts,
} from './quality.ts';
export type { QualityCounts } from './quality.ts';
export { WITHIN_LIST_RULES, isFlatList, listAggregate, listSizeCounts, ruleViolated } from './withinlist.ts';
export type { ListAggregate, WithinListRule } from './withinlist.ts';
export { NULL_CATEGORY, OTHER_CATEGORY, boundCategories, categoryPsi, truncateCategory } from './categorical.ts';
export type { CategoryCounts } from './categorical.ts';
export { LARGE_MAGNITUDE, LARGE_SCALE_EXP, addToSplitSum, meanOfSplitSum } from './safesum.ts';
export type { SplitSum } from './safesum.ts';
export { RankScratch, averageRanksInto, rhoFromRanks, spearmanInto, spearmanRho } from './spearman.ts';
export { POSITION_BUCKET_LABELS, POSITION_BUCKET_UPPER, ndcgAtK, positionBucket, reciprocalRank } from './ranking-outcome.ts';
export { addToMeanSums, dailyMeanShift, emptyMeanSums, meanOfSums, mergeMeanSums, varianceOfSums } from './daily-mean-shift.ts';
export type { MeanShift, MeanSums } from './daily-mean-shift.ts';
export { countBeyondSorted, extremeBoundsSorted } from './extremes.ts';
export type { ExtremeBounds, ExtremeBoundsOptions } from './extremes.ts';
