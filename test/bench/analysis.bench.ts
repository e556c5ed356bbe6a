// Static stability analysis per bundled example (target: < 30 ms each) and kernelAt for one pixel of a
// 512×512 state (target: < 5 ms). Baselines in the same run: parse + check of the same file, and one step
// of the engine over the whole 512×512 state, so the ratios show what the analysis adds. Prints; asserts nothing.

import { readdirSync, readFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { kernelAt } from '../../src/analysis/kernel';
import { analyseStability } from '../../src/analysis/stability';
import { createRun } from '../../src/engine';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation';

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s[Math.floor(s.length / 2)];
}

function time(f: () => void, runs: number): number[] {
  const out: number[] = [];
  for (let k = 0; k < runs; k++) {
    const t0 = performance.now();
    f();
    out.push(performance.now() - t0);
  }
  return out;
}

const dir = join(process.cwd(), 'examples');
const files = readdirSync(dir).filter((f) => f.endsWith('.fluxel')).sort();
const runs = 31;
// Other processes inflate every figure on a shared machine: the load average says how much to trust them, and the
// fastest run (min) is the figure least affected by it.
console.log(`machine: ${cpus().length} cores, load average ${loadavg().map((v) => v.toFixed(1)).join(' ')}`);
console.log('static analysis per example (median and fastest of 31 runs after 5 warm-up runs; baseline parse + check of the same file)');
console.log(`${'example'.padEnd(20)} ${'parse+check'.padStart(12)} ${'analysis'.padStart(10)} ${'(min)'.padStart(10)} ${'ratio'.padStart(7)}  method        target < 30 ms`);
let worst = 0;
for (const f of files) {
  const text = readFileSync(join(dir, f), 'utf8');
  const scheme = parseAndCheck(text).scheme;
  if (!scheme) throw new Error(`${f} does not check`);
  for (let k = 0; k < 5; k++) { parseAndCheck(text); analyseStability(scheme); }
  // Interleaved, so a burst of load from other processes hits both columns alike.
  const base: number[] = [];
  const ana: number[] = [];
  let method = '';
  for (let k = 0; k < runs; k++) {
    base.push(...time(() => parseAndCheck(text), 1));
    ana.push(...time(() => { method = analyseStability(scheme).method; }, 1));
  }
  const b = median(base);
  const a = median(ana);
  worst = Math.max(worst, a);
  const fastest = Math.min(...ana);
  console.log(`${f.replace(/\.fluxel$/, '').padEnd(20)} ${b.toFixed(2).padStart(9)} ms ${a.toFixed(2).padStart(7)} ms ${fastest.toFixed(2).padStart(7)} ms ${(a / b).toFixed(1).padStart(6)}x  ${method.padEnd(12)}  ${a < 30 ? 'met' : 'NOT met'}`);
}
console.log(`slowest example: ${worst.toFixed(2)} ms (target < 30 ms: ${worst < 30 ? 'met' : 'NOT met'})`);

// kernelAt at one pixel of a 512×512 state after a few engine steps, for the examples with an image field.
console.log('\nkernelAt, one pixel of a 512×512 state (median of 101 calls; baseline: one engine step over the whole state)');
const scene = makeScene('card', { width: 512, height: 512 });
for (const name of ['heat-2d', 'edge-preserving', 'tv-flow', 'eight-neighbour']) {
  const scheme = parseAndCheck(readFileSync(join(dir, `${name}.fluxel`), 'utf8')).scheme;
  if (!scheme) throw new Error(`${name} does not check`);
  const run = createRun(scheme, { image: scene.noisy, steps: 3, dtype: 'float64' });
  const stepMs = median(time(() => run.step(), 5));
  const state = { width: 512, height: 512, t: run.t, fields: scheme.fields.map((_, k) => run.fieldData(k)) };
  for (let k = 0; k < 20; k++) kernelAt(scheme, state, 256 + k, 200);
  let p = 0;
  const frozen = median(time(() => { kernelAt(scheme, state, 100 + (p++ % 300), 311); }, 101));
  const lin = median(time(() => { kernelAt(scheme, state, 100 + (p++ % 300), 311, { linearised: true }); }, 101));
  console.log(`${name.padEnd(20)} engine step ${stepMs.toFixed(2).padStart(7)} ms   kernelAt ${frozen.toFixed(3)} ms (${(frozen / stepMs).toFixed(4)}x), linearised ${lin.toFixed(3)} ms   target < 5 ms: ${Math.max(frozen, lin) < 5 ? 'met' : 'NOT met'}`);
}
