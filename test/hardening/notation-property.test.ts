// Campaign "notation-property": generated and mutated schemes (fast-check, seeded) through the parser, the checker,
// the stability analysis and the compiler. Never a throw; every diagnostic (checker's and analysis') has a valid
// range inside the document; the compiler either gives kernels or refuses with an EngineError message. The time of
// every case is measured and the slowest 200-line case is printed against the 100 ms target (no test asserts a
// duration: only a hang guard of HANG_MS fails; test/bench/hardening.bench.ts prints the figure against the limit).
// Property-based testing after Claessen & Hughes, "QuickCheck: a lightweight tool for random testing of Haskell
// programs", ICFP 2000, run with the fast-check library from npm.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { analyseStability, stabilityDiagnostics } from '../../src/analysis/stability';
import { generateSource } from '../../src/engine/codegen';
import { JsBackend } from '../../src/engine/jsBackend';
import { EngineError } from '../../src/engine/plan';
import { parseAndCheck } from '../../src/notation';
import { CODES } from '../../src/notation/diagnostics';
import { campaignSeed, rangeProblem, report, scaled } from './campaign';
import { longScheme, smallScheme } from './schemeGen';
import { ALL_NODE_KINDS, nodeKinds } from '../unit/notation/nodeKinds';

const HANG_MS = 5000;
const LIMIT_MS = 100;
const known = new Set(Object.keys(CODES));

interface Tally { kinds: Set<string>; codes: Set<string>; cases: number; failures: string[]; checked: number; compiled: number; refused: number; slowest: number; over: number; slowestText: string }

const ALL_KINDS = ALL_NODE_KINDS;

/** One case: everything a keystroke in the editor triggers, timed. Returns the failures found. */
function exercise(text: string, t: Tally): void {
  const fail = (what: string) => t.failures.push(`${what} in ${JSON.stringify(text.slice(0, 400))}`);
  const t0 = performance.now();
  try {
    const r = parseAndCheck(text);
    nodeKinds(r.program.decls, t.kinds);
    for (const d of r.diagnostics) {
      t.codes.add(d.code);
      const p = rangeProblem(text, d);
      if (p) fail(`diagnostic ${d.code}: ${p}`);
      if (!known.has(d.code)) fail(`unknown code ${d.code}`);
    }
    if (r.scheme) {
      t.checked++;
      const rep = analyseStability(r.scheme);
      for (const d of stabilityDiagnostics(r.scheme, rep)) {
        const p = rangeProblem(text, d);
        if (p) fail(`analysis diagnostic ${d.code}: ${p}`);
      }
      try {
        generateSource(r.scheme, 'float64');
        new JsBackend().compile(r.scheme, { dtype: 'float32' });
        t.compiled++;
      } catch (e) {
        if (e instanceof EngineError && e.message.length > 0) t.refused++;
        else fail(`compiler threw ${String(e)}`);
      }
    }
  } catch (e) {
    fail(`threw ${(e as Error)?.stack ?? String(e)}`);
  }
  const ms = performance.now() - t0;
  if (ms > HANG_MS) fail(`took ${ms.toFixed(0)} ms (hang guard ${HANG_MS} ms)`);
  if (ms > t.slowest) { t.slowest = ms; t.slowestText = text; }
  if (ms > LIMIT_MS) t.over++;
  t.cases++;
}

const tally = (): Tally => ({ kinds: new Set(), codes: new Set(), cases: 0, failures: [], checked: 0, compiled: 0, refused: 0, slowest: 0, over: 0, slowestText: '' });

describe('campaign notation-property', () => {
  it('parser, checker, analysis and compiler never throw and give ranged diagnostics on generated and mutated schemes', () => {
    const small = tally();
    const long = tally();
    const seed = campaignSeed(20261203);
    // 19,000 small schemes and 1,000 of 200 lines in CI (20,000 cases); FLUXEL_CAMPAIGN_SCALE multiplies both.
    fc.assert(fc.property(smallScheme, (text) => { exercise(text, small); }), { numRuns: scaled(19000), seed, endOnFailure: true });
    fc.assert(fc.property(longScheme, (text) => {
      expect(text.split('\n').length).toBeGreaterThanOrEqual(195);
      exercise(text, long);
    }), { numRuns: scaled(1000), seed: seed + 1, endOnFailure: true });
    const failures = [...small.failures, ...long.failures];
    console.log(`slowest small case (${small.slowest.toFixed(1)} ms): ${JSON.stringify(small.slowestText.slice(0, 300))}`);
    console.log(`slowest 200-line case (${long.slowest.toFixed(1)} ms): ${JSON.stringify(long.slowestText.slice(0, 300))}`);
    const reached = new Set([...small.codes, ...long.codes].filter((c) => known.has(c)));
    const kinds = new Set([...small.kinds, ...long.kinds]);
    report('notation-property', small.cases + long.cases, failures.length,
      `${reached.size}/${known.size} checker codes and ${ALL_KINDS.filter((k) => kinds.has(k)).length}/${ALL_KINDS.length} node kinds reached, ${small.checked + long.checked} checked clean, ${small.compiled + long.compiled} compiled, ${small.refused + long.refused} refused by the compiler, ` +
      `200-line inputs: ${long.cases}, slowest ${long.slowest.toFixed(1)} ms, ${long.over} over ${LIMIT_MS} ms; slowest small ${small.slowest.toFixed(1)} ms`);
    expect(failures.slice(0, 5)).toEqual([]);
    // Coverage (contracts.md §7): every diagnostic code and every AST node kind reached at least once.
    expect([...known].filter((c) => !reached.has(c)), 'codes never reached').toEqual([]);
    expect(ALL_KINDS.filter((k) => !kinds.has(k)), 'node kinds never reached').toEqual([]);
    // The generators must reach analysis and compile on a real share of cases, not only the error paths.
    expect(small.checked).toBeGreaterThan(small.cases / 20);
    expect(long.checked).toBeGreaterThan(long.cases / 20);
  });
});
