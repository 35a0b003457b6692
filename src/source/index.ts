export { planSource, checkJsonbKeys, type SourcePlan, type FeaturePlan } from './plan.ts';
export { readDay, countDays, NULL_POSITION, type DayColumns, type CategoricalColumn, type ReadDayOptions } from './read-day.ts';
