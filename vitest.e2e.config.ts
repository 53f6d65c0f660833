import { defineConfig } from 'vitest/config';

// Browser tests: real Chromium (Debian package) against the built standalone server.
export default defineConfig({
  test: {
    include: ['tests/e2e/**/*.test.ts'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    fileParallelism: false,
    pool: 'forks',
  },
});
