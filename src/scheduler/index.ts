/**
 * The scheduler unit: the daily job as a plain function (job.ts), the leader lock
 * (leader.ts), and `plumbline serve` (service.ts) wired from small parts: the run
 * coordinator with retries (coordinator.ts, retry.ts), one run under its deadline
 * (guarded-run.ts), the schedule and probe
 * loop (schedule.ts), the results refresher that follows the store (refresher.ts), the
 * Alertmanager push (alert-push.ts) and the bounded shutdown (shutdown.ts).
 */
export { serve, type ServeOptions } from './service.ts';
export { deadlineHasPassed, isTransient, retryDelayMs, RetryTimer } from './retry.ts';
export { runGuarded, ABANDON_AFTER_MS, type GuardedResult, type GuardOptions } from './guarded-run.ts';
export { RunCoordinator, type CoordinatorDeps, type FinishedRun, type TriggerResult } from './coordinator.ts';
export { ScheduleLoop, type ScheduleLoopDeps } from './schedule.ts';
export { ResultsRefresher, type RefresherDeps } from './refresher.ts';
export { AlertPusher } from './alert-push.ts';
export { signalPromise, within } from './shutdown.ts';
export { dailyJob, pruneStore, datesDue, checkReadiness, targetDate, type DayOutcome, type JobDeps, type JobStore, type Readiness } from './job.ts';
export { LeaderLock, leaderLockKeys, type LeaderRole } from './leader.ts';
export { retentionPolicy } from './retention.ts';
