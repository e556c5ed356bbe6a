// The SIMD backend's speed: edge-preserving diffusion 2048²×20 and 5-point heat 512²×100, Float32, reflect.
// In one process run, interleaved: the C baseline (wasm_ref.c, gcc -O3 -march=native, one thread, compiled here),
// the engine on the WebAssembly backend (two threads, and one), the JavaScript backend, and a NumPy script.
// Prints medians and the ratios against the issue's targets; asserts nothing. Run: node test/bench/run.mjs wasm
// (CASE=heat|edge for one case, ROUNDS=N rounds)
import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { JsBackend } from '../../src/engine/jsBackend';
import { createRun } from '../../src/engine/run';
import type { KernelBackend } from '../../src/engine/types';
import { WasmBackend } from '../../src/engine/wasm/backend';
import { parseAndCheck } from '../../src/notation/index';

const ROUNDS = Number(process.env.ROUNDS ?? 7);
const EDGE = `grid 2d\nboundary reflect\nparam K = 0.05 in [0.001, 1]\nstep dt = 0.2\nsteps 1\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;
const HEAT = `grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 1\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`;

/** The same LCG picture as wasm_ref.c, so the result means can be compared. */
function image(n: number): { width: number; height: number; data: Float32Array } {
  const data = new Float32Array(n * n);
  let a = 12345;
  for (let i = 0; i < data.length; i++) {
    a = (Math.imul(a, 1103515245) + 12345) >>> 0;
    data[i] = (a >>> 8) / 16777216;
  }
  return { width: n, height: n, data };
}

const NUMPY = `
import sys, time, numpy as np
kind, n, steps = sys.argv[1], int(sys.argv[2]), int(sys.argv[3])
a = 12345; vals = np.empty(n * n, dtype=np.float32)
# The LCG in vectorised form would change nothing measured; the loop runs once, before timing.
for i in range(n * n):
    a = (a * 1103515245 + 12345) & 0xffffffff
    vals[i] = (a >> 8) / 16777216.0
u = vals.reshape(n, n)
dt, iK2 = np.float32(0.2), np.float32(1 / 0.05**2)
def step(u):
    p = np.pad(u, 1, mode='symmetric')
    c = p[1:-1, 1:-1]
    ds = [p[:-2, 1:-1] - c, p[2:, 1:-1] - c, p[1:-1, :-2] - c, p[1:-1, 2:] - c]
    if kind == 'edge':
        s = sum(d / (1 + d * d * iK2) for d in ds)
    else:
        s = sum(ds)
    return (c + dt * s).astype(np.float32)
u = step(u)
t0 = time.perf_counter()
for _ in range(steps): u = step(u)
print(time.perf_counter() - t0, float(u.mean()))
`;

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

function engine(text: string, n: number, steps: number, backend: KernelBackend): { seconds: number; cpu: number; mean: number; backend: string } {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error('bench scheme has errors');
  // Collect the garbage of earlier runs (their buffers are tens of MB) now, not in the timed steps: run.mjs starts
  // Node with --expose-gc.
  (globalThis as { gc?: () => void }).gc?.();
  // One warm-up step outside the timing, as the C and NumPy baselines take: steps + 1 in all.
  const run = createRun(r.scheme, { image: image(n), steps: steps + 1, backend });
  run.step();
  const warm = run.stepSeconds;
  // CPU time of the whole process over the steps (both threads; frames excluded as in stepSeconds), in seconds.
  let cpu = 0, c0 = process.cpuUsage();
  const res = run.runSync({
    // A backend call of several steps reports progress for each in a row: count each stretch once.
    onProgress: () => {
      const d = process.cpuUsage(c0);
      cpu += (d.user + d.system) / 1e6;
      c0 = process.cpuUsage();
    },
    shouldCancel: () => {
      c0 = process.cpuUsage();
      return false;
    },
  });
  const d = run.fieldData(0);
  let sum = 0;
  for (let i = 0; i < d.length; i++) sum += d[i];
  return { seconds: res.stepSeconds - warm, cpu, mean: sum / d.length, backend: res.backend };
}

function external(cmd: string, args: string[]): { seconds: number; mean: number; cpu: number } | null {
  const p = spawnSync(cmd, args, { encoding: 'utf8' });
  if (p.status !== 0) return null;
  const [s, m, c] = p.stdout.trim().split(/\s+/).map(Number);
  return { seconds: s, mean: m, cpu: c };
}

const dir = mkdtempSync(join(tmpdir(), 'fluxel-wasm-bench-'));
const cBin = join(dir, 'wasm_ref');
const gcc = spawnSync('gcc', ['-O3', '-march=native', '-o', cBin, join(__dirname, '..', '..', 'test', 'bench', 'wasm_ref.c')], { encoding: 'utf8' });
if (gcc.status !== 0) {
  console.log(`gcc failed, no C baseline: ${gcc.stderr || gcc.error}`);
  process.exit(1);
}
// For context only: the same C with 128-bit vectors, the width WebAssembly SIMD has.
const c128 = join(dir, 'wasm_ref128');
const has128 = spawnSync('gcc', ['-O3', '-march=native', '-mprefer-vector-width=128', '-o', c128, join(__dirname, '..', '..', 'test', 'bench', 'wasm_ref.c')]).status === 0;
const pyFile = join(dir, 'ref.py');
writeFileSync(pyFile, NUMPY);
const hasNumpy = spawnSync('/usr/bin/python3', ['-c', 'import numpy'], { encoding: 'utf8' }).status === 0;

const wasm2 = new WasmBackend({ threads: 2 });
const wasm1 = new WasmBackend({ threads: 1 });
const js = new JsBackend();

const cases = [
  { label: 'edge-preserving 2048²×20', kind: 'edge', text: EDGE, n: 2048, steps: 20, target: 1.0, numpy: true },
  { label: 'heat 512²×100', kind: 'heat', text: HEAT, n: 512, steps: 100, target: 1.5, numpy: false },
];

console.log(`${ROUNDS} interleaved rounds per case (C, wasm 2 threads, wasm 1 thread, C 128-bit${hasNumpy ? ', NumPy on the edge case (3 rounds)' : ''}); JS backend 3 rounds.`);
console.log('Engine times are stepSeconds (ghost cells, kernels, monitors); C times cover ghost cells and kernels. All three (C, engine, NumPy) take one untimed warm-up step first.');
console.log('The machine is shared: figures are noisy, compare the ratios within one run.');
// CASE=heat or CASE=edge runs one case only.
for (const c of cases.filter(x => !process.env.CASE || x.kind === process.env.CASE)) {
  // Warm-up: compiles the kernels, starts the helper thread, touches the pages.
  engine(c.text, c.n, 2, wasm2);
  engine(c.text, c.n, 2, wasm1);
  const t: Record<string, number[]> = { c: [], c128: [], w2: [], w1: [], js: [], np: [], r2: [], r1: [], cc: [], cw2: [], cw1: [] };
  let means = { c: NaN, w2: NaN, js: NaN, np: NaN };
  let label2 = '';
  for (let r = 0; r < ROUNDS; r++) {
    const cr = external(cBin, [c.kind, String(c.n), String(c.steps)]);
    if (!cr) throw new Error('the C baseline failed');
    t.c.push(cr.seconds);
    means.c = cr.mean;
    const w2 = engine(c.text, c.n, c.steps, wasm2);
    t.w2.push(w2.seconds);
    means.w2 = w2.mean;
    label2 = w2.backend;
    const w1 = engine(c.text, c.n, c.steps, wasm1);
    t.w1.push(w1.seconds);
    // Ratios of runs next to each other in time: steadier than ratios of medians when the load drifts.
    t.r2.push(w2.seconds / cr.seconds);
    t.r1.push(w1.seconds / cr.seconds);
    t.cc.push(cr.cpu);
    t.cw2.push(w2.cpu);
    t.cw1.push(w1.cpu);
    const c2 = has128 ? external(c128, [c.kind, String(c.n), String(c.steps)]) : null;
    if (c2) t.c128.push(c2.seconds);
    if (r < 3) {
      const j = engine(c.text, c.n, c.steps, js);
      t.js.push(j.seconds);
      means.js = j.mean;
      if (c.numpy && hasNumpy) {
        const p = external('/usr/bin/python3', [pyFile, c.kind, String(c.n), String(c.steps)]);
        if (p) (t.np.push(p.seconds), (means.np = p.mean));
      }
    }
  }
  const C = median(t.c), W2 = median(t.w2), W1 = median(t.w1), J = median(t.js);
  console.log(`\n${c.label} (engine: ${label2})`);
  console.log(`  C gcc -O3 -march=native, 1 thread: ${(C * 1e3).toFixed(1)} ms`);
  const R2 = median(t.r2), R1 = median(t.r1);
  console.log(`  wasm, 2 threads: ${(W2 * 1e3).toFixed(1)} ms = ${(W2 / C).toFixed(2)}× C; median of paired ratios ${R2.toFixed(2)}×  (target ≤ ${c.target.toFixed(1)}×: ${R2 <= c.target ? 'met' : 'NOT met'})`);
  console.log(`  wasm, 1 thread:  ${(W1 * 1e3).toFixed(1)} ms = ${(W1 / C).toFixed(2)}× C; median of paired ratios ${R1.toFixed(2)}×`);
  // How much the second thread gave: near 2× when the host runs both virtual cores at once, near 1× when it does not.
  const S = median(t.w1.map((w, k) => w / t.w2[k]));
  console.log(`  two threads vs one: ${S.toFixed(2)}× faster (median of paired ratios; near 2× when both cores are free, lower when the host gave this machine less than two cores)`);
  const CC = median(t.cc), CW2 = median(t.cw2), CW1 = median(t.cw1);
  console.log(`  CPU time (less sensitive to other load): C ${(CC * 1e3).toFixed(1)} ms, wasm 1 thread ${(CW1 * 1e3).toFixed(1)} ms = ${(CW1 / CC).toFixed(2)}×, ` +
    `wasm 2 threads ${(CW2 * 1e3).toFixed(1)} ms over both = ${(CW2 / 2 / CC).toFixed(2)}× C per core (the wall ratio two free cores would give)`);
  if (t.c128.length) console.log(`  (context: C with 128-bit vectors ${(median(t.c128) * 1e3).toFixed(1)} ms = ${(median(t.c128) / C).toFixed(2)}× C)`);
  console.log(`  JS backend:      ${(J * 1e3).toFixed(1)} ms = ${(J / C).toFixed(2)}× C, ${(J / W2).toFixed(1)}× slower than wasm 2 threads`);
  if (t.np.length) {
    const N = median(t.np);
    console.log(`  NumPy:           ${(N * 1e3).toFixed(1)} ms = ${(N / W2).toFixed(1)}× slower than wasm 2 threads (target ≥ 10×: ${N / W2 >= 10 ? 'met' : 'NOT met'})`);
  }
  console.log(`  result means: C ${means.c.toFixed(7)}, wasm ${means.w2.toFixed(7)}, JS ${means.js.toFixed(7)}${t.np.length ? `, NumPy ${means.np.toFixed(7)}` : ''}`);
  console.log(`  all runs (ms): C ${t.c.map(x => (x * 1e3).toFixed(1)).join(' ')} | wasm2 ${t.w2.map(x => (x * 1e3).toFixed(1)).join(' ')} | wasm1 ${t.w1.map(x => (x * 1e3).toFixed(1)).join(' ')}`);
}
