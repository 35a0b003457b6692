/** The demo scenario (an invented marketplace), its fault generator and its loader. */
export {
  CATEGORIES,
  DEMO_FAULTS,
  DEMO_SCENARIO,
  DEMO_TABLE,
  DEMO_TABLE_JSONB,
  FEATURES,
  LABEL_COLUMN,
  NEW_CATEGORY,
  NOMINAL_SD,
  NULLABLE_FEATURES,
  NUMERIC_FEATURE_NAMES,
  SCORE_COLUMN,
  addDays,
  epochDay,
  faultsOn,
  generateDay,
  scenarioDates,
  withStartDate,
  type FaultKind,
  type FaultPlan,
  type FeatureSpec,
  type Row,
  type ScenarioOptions,
} from './scenario.ts';
export { FEATURES_COLUMN, copyField, createTableSql, loadScenario, parseTableName, type InsertMethod, type Layout, type LoadOptions, type LoadResult, type Queryable } from './load.ts';
export { Random, hashInts, hashString } from './random.ts';
