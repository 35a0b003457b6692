export * from './schema.ts';
export { loadConfigFile, parseConfig, formatIssues, formatPath, connectionsFromEnv, maskUrl, envSetting, type Connections } from './load.ts';
