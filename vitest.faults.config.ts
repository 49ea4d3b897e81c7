import { defineConfig } from 'vitest/config';

/** `npm run test:faults`: the fault-injection suite alone, one file at a time (it measures wall time). */
export default defineConfig({
  test: {
    include: ['test/faults/**/*.test.ts'],
    testTimeout: 300_000,
    hookTimeout: 300_000,
    pool: 'forks',
    fileParallelism: false,
  },
});
