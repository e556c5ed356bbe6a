// Test runner configuration. Two groups: ordinary test files (at most two at once: the machines have 2 cores),
// then files named *.serial.test.ts, which start workers or load the whole machine, one at a time (contracts.md §7).
import { defineConfig } from 'vitest/config';

const EXCLUDE = ['test/editor/**', 'node_modules/**', 'dist/**'];

export default defineConfig({
  test: {
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: 'forks',
    projects: [
      {
        extends: true,
        test: { name: 'parallel', include: ['test/**/*.test.ts'], exclude: [...EXCLUDE, 'test/**/*.serial.test.ts'], maxWorkers: 2, sequence: { groupOrder: 0 } },
      },
      {
        extends: true,
        test: { name: 'serial', include: ['test/**/*.serial.test.ts'], exclude: EXCLUDE, maxWorkers: 1, fileParallelism: false, sequence: { groupOrder: 1 } },
      },
    ],
  },
});
