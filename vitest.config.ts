import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    // The kill -9 harness runs on its own (npm run test:faults), after the main suite in .ci/run.
    exclude: ['test/faults/**', 'node_modules/**'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: 'forks',
  },
});
