/**
 * `COPY ... TO STDOUT` as a stream of the bytes the server sends, for readers that parse
 * the COPY format themselves (source/read-day.ts). Here because this folder is the only
 * one that talks to the driver and its companions.
 */
import type { Readable } from 'node:stream';
import { to as copyTo } from 'pg-copy-streams';
import type { PoolClient } from './pool.ts';

export function copyOut(client: PoolClient, sql: string): Readable {
  return client.query(copyTo(sql));
}
