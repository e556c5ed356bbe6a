// Test runner configuration. Two groups: ordinary test files (at most two at once: the machines have 2 cores),
// then files named *.serial.test.ts, which start workers or load the whole machine, one at a time (contracts.md §7).
// The hardening campaigns (test/hardening) form their own pair of projects, because they resolve 'vscode' to the
// stand-in test/hardening/fakeVscode.ts (to drive the live run panel's own handlers); nothing else sees that alias.
import { fileURLToPath } from 'node:url';
import { defineConfig } from 'vitest/config';

const EXCLUDE = ['test/editor/**', 'node_modules/**', 'dist/**'];
const HARDENING = 'test/hardening/**';
const fakeVscode = fileURLToPath(new URL('./test/hardening/fakeVscode.ts', import.meta.url));
/** The long campaign runs (FLUXEL_CAMPAIGN_SCALE=10) get proportionally longer hang guards. */
const scale = Math.max(1, Number(process.env.FLUXEL_CAMPAIGN_SCALE) || 1);
const campaignTimeout = 300_000 * scale;

export default defineConfig({
  test: {
    testTimeout: 120_000,
    hookTimeout: 120_000,
    pool: 'forks',
    projects: [
      {
        extends: true,
        test: { name: 'parallel', include: ['test/**/*.test.ts'], exclude: [...EXCLUDE, HARDENING, 'test/**/*.serial.test.ts'], maxWorkers: 2, sequence: { groupOrder: 0 } },
      },
      {
        extends: true,
        test: { name: 'serial', include: ['test/**/*.serial.test.ts'], exclude: [...EXCLUDE, HARDENING], maxWorkers: 1, fileParallelism: false, sequence: { groupOrder: 1 } },
      },
      {
        extends: true,
        resolve: { alias: { vscode: fakeVscode } },
        test: { name: 'hardening', testTimeout: campaignTimeout, include: ['test/hardening/**/*.test.ts'], exclude: [...EXCLUDE, 'test/**/*.serial.test.ts'], maxWorkers: 2, sequence: { groupOrder: 0 } },
      },
      {
        extends: true,
        resolve: { alias: { vscode: fakeVscode } },
        test: { name: 'hardening-serial', testTimeout: campaignTimeout, include: ['test/hardening/**/*.serial.test.ts'], exclude: EXCLUDE, maxWorkers: 1, fileParallelism: false, sequence: { groupOrder: 1 } },
      },
    ],
  },
});
