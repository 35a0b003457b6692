export { serve, deadlineHasPassed, type ServeOptions, type ServiceRuntime } from './service.ts';
export { dailyJob, datesDue, checkReadiness, targetDate, type DayOutcome, type JobDeps, type JobStore, type Readiness } from './job.ts';
export { LeaderLock, leaderLockKeys } from './leader.ts';
