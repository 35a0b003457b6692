/**
 * The small family of errors Plumbline raises on purpose. The CLI maps each to an
 * exit code and one clear message; anything else is a bug and exits 1.
 */

/** The configuration file or command line is wrong. Exit code 2. */
export class ConfigError extends Error {
  override readonly name = 'ConfigError';
  constructor(
    message: string,
    /** One line per problem, each starting with its config path. */
    readonly problems: readonly string[] = [],
    options?: { cause?: unknown },
  ) {
    super(message, options);
  }
}

/** The source database cannot be used (unreachable, missing table or column). Exit code 3. */
export class SourceError extends Error {
  override readonly name = 'SourceError';
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
  }
}

/** Plumbline's own store cannot be used. Exit code 3. */
export class StoreError extends Error {
  override readonly name = 'StoreError';
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
  }
}

/** Input data violates an assumption the caller cannot recover from (statistics, parsing). */
export class DataError extends Error {
  override readonly name = 'DataError';
  constructor(message: string, options?: { cause?: unknown }) {
    super(message, options);
  }
}

export const EXIT = {
  ok: 0,
  failOn: 1,
  bug: 1,
  usage: 2,
  unavailable: 3,
} as const;

export function exitCodeFor(err: unknown): number {
  if (err instanceof ConfigError) return EXIT.usage;
  if (err instanceof SourceError || err instanceof StoreError) return EXIT.unavailable;
  return EXIT.bug;
}
