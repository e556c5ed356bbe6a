// Test runner configuration: unit tests under test/unit, published-reference checks under test/reference.
import { defineConfig } from 'vitest/config';

export default defineConfig({
  test: {
    include: ['test/**/*.test.ts'],
    exclude: ['test/editor/**', 'node_modules/**', 'dist/**'],
    testTimeout: 120_000,
    hookTimeout: 120_000,
    // Two cores: test files that start workers or load the whole machine are few; run files in at most two forks.
    pool: 'forks',
    maxWorkers: 2,
  },
});
