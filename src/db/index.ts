export { createPool, withReadOnlyTransaction, withTransaction, cancelBackend, isConnectionError, sqlState, type Pool, type PoolClient, type PoolOptions, type TransactionOptions } from './pool.ts';
export { quoteIdent, quoteQualified, splitQualified, describeRelation, type RelationInfo } from './identifiers.ts';
export { advisoryKey, advisoryXactLock } from './locks.ts';
export { listenToChannel, type ChannelListener, type ChannelListenerOptions } from './listen.ts';
export { copyOut } from './copy.ts';
