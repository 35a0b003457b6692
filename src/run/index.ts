export { runDay, recordMissingSnapshot, configFingerprint, profileFingerprint, daySampleCap, type RunDeps, type RunResult, type RunStore } from './run-day.ts';
export { addDays, baselineDates, dateInZone, dateRange, isIsoDate } from './dates.ts';
export { checkNotTooNew, checkRunnableDates, newestRunnableDate, todayIn } from './bounds.ts';
export { RunAbortError, wasInterrupted } from './abort.ts';
export { memoryEstimate, MEMORY_BASE_BYTES, type MemoryEstimate } from './memory.ts';
export { checkSource } from './check-source.ts';
