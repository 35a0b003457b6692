export { evaluateDay, snapshotMissingFinding } from './evaluate.ts';
export { applyAlertState, farBeyondCritical, findingKey } from './alert-state.ts';
export { statusAbove, statusBand, fmt, pct } from './status.ts';
export { evaluateSlices, type SliceInput } from './slices.ts';
export { gateKs, type FindingDraft } from './evaluate.ts';
export { associationFindings, outcomeFindings, ownOutcome, type OutcomeInput } from './ranking.ts';
export { baselineExtremeBounds } from './extremes.ts';
export { learnThreshold, type LearnedThreshold } from './adaptive.ts';
