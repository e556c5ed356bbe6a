// The Dask export of every example on a dask.distributed LocalCluster (two in-process workers, one thread each),
// 17×23 chunks, 8 steps (the scheduler's per-task cost makes long chains slow; the threaded test runs them all): equal bit for bit to the NumPy export and within numerics.md's 1e-5 of the engine (Float32).
// Serial file: it starts a cluster (contracts §7). Reference: Debian's /usr/bin/python3 with python3-distributed.
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { ROOT, differences, engineResult, makeCase, pythonResults, relError, type FieldValues } from './harness';

const EXAMPLES = readdirSync(join(ROOT, 'examples')).filter(f => f.endsWith('.fluxel')).sort();
const dir = mkdtempSync(join(tmpdir(), 'fluxel-export-dist-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('Dask export on a dask.distributed LocalCluster', () => {
  const cases = EXAMPLES.map(f => makeCase(f, 'float32', 8));
  let python: { numpy: FieldValues; dask: FieldValues }[] = [];
  beforeAll(() => {
    python = pythonResults(cases, dir, 'distributed');
  }, 900_000);
  cases.forEach((c, j) => {
    it(`${c.file}: equals NumPy bit for bit and the engine within 1e-5`, () => {
      const engine = engineResult(c);
      python[j].dask.forEach((d, k) => {
        const diff = differences(d, python[j].numpy[k]);
        expect(diff.length, `${c.file} field ${k}: Dask (distributed) differs from NumPy at ${diff.length} pixels, first index ${diff[0]}`).toBe(0);
        const { err, at } = relError(d, engine[k]);
        expect(err, `${c.file} field ${k}: relative difference ${err} at index ${at}, tolerance 1e-5`).toBeLessThanOrEqual(1e-5);
      });
    });
  });
});
