// A tiny test harness for the real extension host: named async tests run in order, results go to the log as
// FLUXEL-PASS/FAIL lines and one FLUXEL-RESULT line that the driver reads. Conditions are polled, never slept for;
// the only limits are generous hang guards. Browser-only facts come from the driver through probe files.

import { existsSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';

type TestFn = () => Promise<void>;
const tests: { name: string; fn: TestFn }[] = [];

export function test(name: string, fn: TestFn): void {
  tests.push({ name, fn });
}

export function info(line: string): void {
  console.log(`FLUXEL-INFO ${line}`);
}

/** Polls `fn` until it returns something truthy; fails with `what` after a generous hang guard. */
export async function poll<T>(what: string, fn: () => T | undefined | null | false | Promise<T | undefined | null | false>, guardMs = 30000): Promise<T> {
  const t0 = Date.now();
  for (;;) {
    const v = await fn();
    if (v) return v;
    if (Date.now() - t0 > guardMs) throw new Error(`gave up waiting for ${what}`);
    await new Promise((r) => setTimeout(r, 50));
  }
}

let probeCount = 0;

/** Asks the browser-side driver for a fact (tokens, status, shot) and waits for its answer file. */
export async function probe<T>(kind: string, extra = ''): Promise<T> {
  // Under @vscode/test-electron nothing watches the log: say so at once instead of waiting for an answer.
  if (process.env.FLUXEL_EDITOR_NO_PROBES) throw new Error(`probe ${kind} needs the code-server driver (test/tools/editor-test.mjs)`);
  const out = process.env.FLUXEL_EDITOR_PROBES ?? process.env.FLUXEL_EDITOR_OUT ?? join(__dirname, '..');
  const file = join(out, `probe-${++probeCount}-${kind}.json`);
  rmSync(file, { force: true });
  console.log(`FLUXEL-PROBE ${kind} ${file} ${extra}`);
  const text = await poll(`the driver's answer to probe ${kind}`, () => (existsSync(file) ? readFileSync(file, 'utf8') : null), 90000);
  const v = JSON.parse(text) as T & { error?: string };
  if (v.error) throw new Error(`probe ${kind}: ${v.error}`);
  return v;
}

export async function runAll(): Promise<{ passed: number; failed: number }> {
  let passed = 0;
  let failed = 0;
  for (const t of tests) {
    try {
      await t.fn();
      passed++;
      console.log(`FLUXEL-PASS ${t.name}`);
    } catch (err) {
      failed++;
      console.log(`FLUXEL-FAIL ${t.name}: ${err instanceof Error ? err.stack ?? err.message : String(err)}`);
    }
  }
  console.log(`FLUXEL-RESULT ${passed} passed, ${failed} failed`);
  return { passed, failed };
}
