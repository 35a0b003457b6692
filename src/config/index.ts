export * from './schema.ts';
export { loadConfigFile, parseConfig, formatIssues, formatPath, connectionsFromEnv, maskUrl, redactUrls, serviceSecretsFromEnv, envSetting, connectionSummary, type Connections, type ServiceSecrets } from './load.ts';
