/**
 * Turns database errors into StoreError with a message that says what failed. The
 * original error stays as `cause` (its SQLSTATE `code` included) for callers that branch
 * on it; the message never carries a connection string.
 */
import { redactUrls } from '../config/index.ts';
import { isConnectionError, sqlState } from '../db/index.ts';
import { StoreError } from '../errors.ts';

/** SQLSTATEs that mean the store schema or its tables are missing. */
const NOT_MIGRATED = new Set(['3F000', '42P01']);

export function storeError(what: string, err: unknown): StoreError {
  if (err instanceof StoreError) return err;
  const state = sqlState(err);
  let message = `${what}: ${describe(err)}`;
  if (state !== undefined && NOT_MIGRATED.has(state)) message += ' (the store schema is not migrated; run the migrations first)';
  else if (isConnectionError(err)) message += ' (the store database is unreachable)';
  return new StoreError(message, { cause: err });
}

/** Runs `fn`, wrapping whatever it throws. */
export async function wrapped<T>(what: string, fn: () => Promise<T>): Promise<T> {
  try {
    return await fn();
  } catch (err) {
    throw storeError(what, err);
  }
}

function describe(err: unknown): string {
  if (!(err instanceof Error)) return redact(String(err));
  const state = sqlState(err);
  // Node's connect errors can be an AggregateError with an empty message (one per address tried).
  let text = err.message;
  if (text === '' && err instanceof AggregateError && err.errors[0] instanceof Error) text = err.errors[0].message;
  if (text === '') text = (err as { code?: string }).code ?? err.name;
  return redact(state !== undefined ? `${text} (SQLSTATE ${state})` : text);
}

/** A connection string inside a driver message may hold a password: mask it (config's one redaction helper). */
const redact = redactUrls;
