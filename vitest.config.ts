import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['tests/**/*.test.ts'],
    exclude: ['tests/bench/**', 'node_modules/**'],
    testTimeout: 60_000,
    hookTimeout: 120_000,
    pool: 'forks',
    // Two test files at a time: most of a file's time is spent waiting on PostgreSQL, child
    // processes and timers, and vitest's default (cores - 1) runs one file at a time on 2 cores.
    maxWorkers: 2,
  },
});
