// The C export's speed next to the engine's on the same case: edge-preserving example, 512×512, 100 steps,
// Float32 storage, on the generated survey scene. The C is compiled with gcc -O3 -march=native; its time is
// measured inside the program around the step call (clock_gettime), the engine's is RunResult.stepSeconds
// (monitors included), the JS export's is performance.now() around run(). Prints times and ratios; asserts nothing.
// Run with: node test/bench/run.mjs export
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { pathToFileURL } from 'node:url';
import { createRun } from '../../src/engine/run';
import { exportScheme, schemePrefix } from '../../src/export';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation/index';

const N = 512, STEPS = 100;
const FILE = 'edge-preserving.fluxel';

async function main(): Promise<void> {
  const scheme = parseAndCheck(readFileSync(join(process.cwd(), 'examples', FILE), 'utf8')).scheme;
  if (!scheme) throw new Error('example has errors');
  const img = Float32Array.from(makeScene('survey', { width: N, height: N, noise: 0.05, seed: 3 }).noisy.data);
  const dir = mkdtempSync(join(tmpdir(), 'fluxel-bench-export-'));
  const opts = { fileName: FILE, sourceHash: '', stability: null, dtype: 'float32' as const };
  try {
    const P = schemePrefix(FILE);
    writeFileSync(join(dir, 'scheme.c'), exportScheme(scheme, 'c', opts));
    writeFileSync(join(dir, 'bench.c'), `#define _POSIX_C_SOURCE 199309L
#include <time.h>
#include <stdio.h>
#include <stdlib.h>
#include "scheme.c"
int main(int argc, char **argv) {
  int n = atoi(argv[1]), steps = atoi(argv[2]);
  float *u = malloc(sizeof(float) * n * n);
  FILE *f = fopen(argv[3], "rb"); if (!f || fread(u, sizeof(float), (size_t)n * n, f) != (size_t)n * n) return 1; fclose(f);
  ${P}_params p = ${P}_defaults;
  size_t bytes = ${P}_scratch_bytes(n, n, &p, ${P.toUpperCase()}_DT);
  void *s = malloc(bytes);
  struct timespec a, b;
  clock_gettime(CLOCK_MONOTONIC, &a);
  int rc = ${P}_step(u, n, n, &p, ${P.toUpperCase()}_DT, 0, steps, s, bytes);
  clock_gettime(CLOCK_MONOTONIC, &b);
  printf("%.6f %g\\n", (b.tv_sec - a.tv_sec) + 1e-9 * (b.tv_nsec - a.tv_nsec), (double)u[n * n / 2 + n / 2]);
  return rc;
}
`);
    writeFileSync(join(dir, 'in.raw'), Buffer.from(img.buffer));
    execFileSync('gcc', ['-O3', '-march=native', '-std=c99', '-o', join(dir, 'bench'), join(dir, 'bench.c'), '-lm']);
    const cRuns = [0, 1, 2].map(() => Number(execFileSync(join(dir, 'bench'), [String(N), String(STEPS), join(dir, 'in.raw')], { encoding: 'utf8' }).split(' ')[0]));
    const cSeconds = Math.min(...cRuns);

    const engineRuns = [0, 1, 2].map(() => createRun(scheme, { image: { width: N, height: N, data: img }, steps: STEPS, dtype: 'float32' }).runSync().stepSeconds);
    const engineSeconds = Math.min(...engineRuns);

    writeFileSync(join(dir, 'scheme.mjs'), exportScheme(scheme, 'js', opts));
    const mod = await import(pathToFileURL(join(dir, 'scheme.mjs')).href);
    const jsRuns = [0, 1, 2].map(() => {
      const fields = mod.init(N, N);
      fields[mod.fieldNames[0]].set(img);
      const t0 = performance.now();
      mod.run(fields, N, N, { steps: STEPS });
      return (performance.now() - t0) / 1000;
    });
    const jsSeconds = Math.min(...jsRuns);

    console.log(`${FILE}, ${N}×${N}, ${STEPS} steps, float32 storage (best of 3 each)`);
    console.log(`  engine (createRun, default backend) ${engineSeconds.toFixed(3)} s`);
    console.log(`  C export, gcc -O3 -march=native    ${cSeconds.toFixed(3)} s   engine / C = ${(engineSeconds / cSeconds).toFixed(2)}`);
    console.log(`  JS export (Node)                   ${jsSeconds.toFixed(3)} s   engine / JS = ${(engineSeconds / jsSeconds).toFixed(2)}`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

main().catch((e) => {
  console.error(e);
  process.exitCode = 1;
});
