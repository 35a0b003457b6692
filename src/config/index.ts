export * from './schema.ts';
export { loadConfigFile, parseConfig, formatIssues, formatPath, connectionsFromEnv, maskUrl, envSetting, connectionSummary, type Connections } from './load.ts';
