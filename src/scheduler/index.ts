export { serve, deadlineHasPassed, isTransient, retryDelayMs, type ServeOptions } from './service.ts';
export { dailyJob, datesDue, checkReadiness, targetDate, type DayOutcome, type JobDeps, type JobStore, type Readiness } from './job.ts';
export { LeaderLock, leaderLockKeys } from './leader.ts';
