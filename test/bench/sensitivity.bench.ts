// Cost of the engine's sensitivity mode: a run carrying P tangents against plain runs of the same scheme in the same
// process, on the JavaScript kernels (the same code generator, so the ratio is the dual arithmetic's price) and on
// the default backend (what a sweep uses). `fluxel fit --method gradient` counts an evaluation with P tangents as
// 1 + P runs (FitResult.runs); this prints the measured ratio beside that count. Prints; asserts nothing.

import { readFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { createRun, jsBackend } from '../../src/engine';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation';

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

const scheme = parseAndCheck(readFileSync(join(process.cwd(), 'examples', 'edge-preserving.fluxel'), 'utf8')).scheme;
if (!scheme) throw new Error('edge-preserving.fluxel does not check');
console.log(`machine: ${cpus().length} cores, load average ${loadavg().map((v) => v.toFixed(1)).join(' ')}`);
for (const size of [64, 256]) {
  const scene = makeScene('survey', { width: size, height: size, noise: 0.1, seed: 1 });
  const variants: [string, () => void][] = [
    ['plain, default backend', () => createRun(scheme, { image: scene.noisy }).runSync()],
    ['plain, js backend', () => createRun(scheme, { image: scene.noisy, backend: jsBackend }).runSync()],
    ['tangents: K', () => createRun(scheme, { image: scene.noisy, sensitivity: ['K'] }).runSync()],
    ['tangents: K, sigma', () => createRun(scheme, { image: scene.noisy, sensitivity: ['K', 'sigma'] }).runSync()],
    ['tangents: K, sigma, dt', () => createRun(scheme, { image: scene.noisy, sensitivity: ['K', 'sigma', 'dt'] }).runSync()],
  ];
  for (const [, f] of variants) f();
  const times = variants.map(() => [] as number[]);
  const runs = size === 64 ? 15 : 5;
  // Interleaved, so load from other processes hits every variant alike.
  for (let k = 0; k < runs; k++) {
    variants.forEach(([, f], i) => {
      const t0 = performance.now();
      f();
      times[i].push(performance.now() - t0);
    });
  }
  const base = median(times[1]);
  const dflt = median(times[0]);
  console.log(`\nedge-preserving, ${size}×${size}, ${scheme.steps} steps, Float32 (median of ${runs})`);
  console.log(`${'variant'.padEnd(26)} ${'ms'.padStart(9)} ${'÷ plain js'.padStart(11)} ${'÷ default'.padStart(10)}  counted as`);
  variants.forEach(([name], i) => {
    const m = median(times[i]);
    const p = i < 2 ? 0 : i - 1;
    console.log(`${name.padEnd(26)} ${m.toFixed(1).padStart(9)} ${(m / base).toFixed(2).padStart(10)}x ${(m / dflt).toFixed(2).padStart(9)}x  ${i < 2 ? '1 run' : `${1 + p} runs`}`);
  });
}
