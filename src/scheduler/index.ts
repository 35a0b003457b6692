export { serve, deadlineHasPassed, isTransient, retryDelayMs, type ServeOptions } from './service.ts';
export { dailyJob, pruneStore, datesDue, checkReadiness, targetDate, type DayOutcome, type JobDeps, type JobStore, type Readiness } from './job.ts';
export { LeaderLock, leaderLockKeys } from './leader.ts';
export { retentionPolicy } from './retention.ts';
