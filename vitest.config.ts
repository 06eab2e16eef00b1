import { defineConfig } from 'vitest/config';

// Integration tests start real processes; two cores are shared, so keep parallelism modest
// and give each test an explicit bound of its own where it needs more than the default.
export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    globalSetup: ['test/support/cache-dir-setup.ts'],
    testTimeout: 60_000,
    hookTimeout: 60_000,
    pool: 'forks',
    maxWorkers: 2,
  },
});
