export { evaluateDay, snapshotMissingFinding } from './evaluate.ts';
export { applyAlertState, findingKey } from './alert-state.ts';
export { statusAbove, statusBand, fmt, pct } from './status.ts';
export { evaluateSlices, type SliceInput } from './slices.ts';
export { gateKs, type FindingDraft } from './evaluate.ts';
