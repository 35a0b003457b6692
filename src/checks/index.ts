export { evaluateDay, snapshotMissingFinding } from './evaluate.ts';
export { applyAlertState, findingKey } from './alert-state.ts';
export { statusAbove, statusBand, fmt, pct } from './status.ts';
export { associationFindings, outcomeFindings, ownOutcome, type OutcomeInput } from './ranking.ts';
