// Every bundled example, exported to C, JavaScript, NumPy and Dask, against the engine (src/engine createRun) on a
// generated 64×48 survey scene. References outside the project: gcc (-O2 -std=c99 -lm) compiles and runs the C,
// Debian's /usr/bin/python3 with Debian's numpy and dask runs the Python (Dask: 17×23 chunks on the local threaded
// scheduler, so 3×3 blocks and many seams), Node imports the JS module. Tolerances are numerics.md's: 1e-5
// relative (Float32 storage) and 1e-12 (Float64); the Dask result must equal the NumPy result bit for bit.
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, cResult, differences, engineResult, jsResult, makeCase, pythonResults, relError, type Case, type DType, type FieldValues } from './harness';

const EXAMPLES = readdirSync(join(ROOT, 'examples')).filter(f => f.endsWith('.fluxel')).sort();
const dir = mkdtempSync(join(tmpdir(), 'fluxel-export-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const TOL: Record<DType, number> = { float32: 1e-5, float64: 1e-12 };

function expectClose(got: FieldValues, want: FieldValues, tol: number, what: string): void {
  expect(got.length, `${what}: number of fields`).toBe(want.length);
  got.forEach((g, k) => {
    const { err, at } = relError(g, want[k]);
    expect(err, `${what}, field ${k}: largest relative difference ${err} at index ${at} (got ${g[at]}, engine ${want[k][at]}), tolerance ${tol}`).toBeLessThanOrEqual(tol);
  });
}

for (const dtype of ['float32', 'float64'] as const) {
  describe(`exports vs engine, ${dtype}`, () => {
    const cases: Case[] = EXAMPLES.map(f => makeCase(f, dtype));
    const engine = new Map<string, FieldValues>();
    let python: { numpy: FieldValues; dask: FieldValues }[] = [];
    beforeAll(() => {
      for (const c of cases) engine.set(c.file, engineResult(c));
      python = pythonResults(cases, join(dir, `py-${dtype}`), 'threads');
    }, 900_000);

    it('covers every example', () => {
      expect(cases.length).toBeGreaterThanOrEqual(8);
    });

    cases.forEach((c, j) => {
      it(`${c.file}: C export (gcc -O2) equals the engine over ${c.steps} steps`, () => {
        expectClose(cResult(c, join(dir, `c-${dtype}-${j}`)), engine.get(c.file) as FieldValues, TOL[dtype], `${c.file} C`);
      });
      it(`${c.file}: JS export equals the engine`, async () => {
        expectClose(await jsResult(c, join(dir, `js-${dtype}-${j}`)), engine.get(c.file) as FieldValues, TOL[dtype], `${c.file} JS`);
      });
      it(`${c.file}: NumPy export equals the engine`, () => {
        expectClose(python[j].numpy, engine.get(c.file) as FieldValues, TOL[dtype], `${c.file} NumPy`);
      });
      it(`${c.file}: Dask export (17×23 chunks, threads) equals NumPy bit for bit, seams and edges included`, () => {
        python[j].dask.forEach((d, k) => {
          const diff = differences(d, python[j].numpy[k]);
          const where = diff.slice(0, 5).map(i => `(${i % c.width}, ${Math.floor(i / c.width)})`).join(' ');
          expect(diff.length, `${c.file} field ${k}: Dask differs from NumPy at ${diff.length} pixels, first ${where}`).toBe(0);
        });
        // The comparison is only meaningful if the values are real numbers.
        expect(python[j].dask.every(f => f.every(Number.isFinite))).toBe(true);
      });
    });
  });
}
