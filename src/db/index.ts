export { createPool, withReadOnlyTransaction, withTransaction, isConnectionError, sqlState, type Pool, type PoolClient, type PoolOptions } from './pool.ts';
export { quoteIdent, quoteQualified, splitQualified, describeRelation, type RelationInfo } from './identifiers.ts';
export { advisoryKey, advisoryXactLock } from './locks.ts';
export { copyOut } from './copy.ts';
