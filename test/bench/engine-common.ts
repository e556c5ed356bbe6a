// Shared pieces of the engine benchmarks: the two schemes of issue 3 (edge-preserving and 5-point heat), the
// input image, the hand-written typed-array loops (the baseline), the engine run, and median/format helpers.
// Not a benchmark itself (run.mjs only runs *.bench.ts).
import { jsBackend } from '../../src/engine/jsBackend';
import { createRun } from '../../src/engine/run';
import { parseAndCheck } from '../../src/notation/index';
import type { CheckedScheme } from '../../src/notation/scheme';

export type Kind = 'edge' | 'heat';
export const DT = 0.2;
export const K = 0.05;

/** Edge-preserving diffusion: 4 neighbours, g(s) = 1/(1 + s²/K²), K = 0.05, dt = 0.2, reflect (issue 3). */
export const EDGE = `grid 2d\nboundary reflect\nparam K = ${K} in [0.001, 1]\nstep dt = ${DT}\nsteps 1\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;
/** The 5-point heat equation, dt = 0.2, reflect. */
export const HEAT = `grid 2d\nboundary reflect\nstep dt = ${DT}\nsteps 1\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`;

export const CASES: { label: string; kind: Kind; n: number; steps: number }[] = [
  { label: 'edge-preserving', kind: 'edge', n: 512, steps: 100 },
  { label: 'edge-preserving', kind: 'edge', n: 2048, steps: 20 },
  { label: 'heat 5-point', kind: 'heat', n: 512, steps: 100 },
  { label: 'heat 5-point', kind: 'heat', n: 2048, steps: 20 },
];

export interface Image { width: number; height: number; data: Float32Array }

/**
 * A picture with edges and noise, so the edge-preserving diffusivity takes every value range: a smooth ramp,
 * a bright disc and a stripe band, plus uniform noise of ±0.05 from a fixed LCG (the same bytes on every machine).
 */
export function benchImage(n: number): Image {
  const data = new Float32Array(n * n);
  let a = 12345;
  for (let y = 0; y < n; y++) {
    for (let x = 0; x < n; x++) {
      a = (Math.imul(a, 1103515245) + 12345) >>> 0;
      const noise = ((a >>> 8) / 16777216 - 0.5) * 0.1;
      const dx = x - n * 0.6, dy = y - n * 0.4;
      let v = 0.3 + 0.3 * (x / n);
      if (dx * dx + dy * dy < (n * 0.2) ** 2) v = 0.85;
      if (y > n * 0.75 && ((x >> 3) & 1) === 1) v = 0.1;
      data[y * n + x] = v + noise;
    }
  }
  return { width: n, height: n, data };
}

export function checked(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error('bench scheme has errors');
  return r.scheme;
}

/** Reflect halo of one cell: copy the edge rows and columns outward (corners included via the row copies). */
function ghosts(u: Float32Array, W: number, H: number): void {
  const pw = W + 2;
  for (let y = 1; y <= H; y++) {
    u[y * pw] = u[y * pw + 1];
    u[y * pw + W + 1] = u[y * pw + W];
  }
  u.copyWithin(0, pw, 2 * pw);
  u.copyWithin((H + 1) * pw, H * pw, (H + 1) * pw);
}

// Two separate loops rather than one with a `kind` test inside: what a careful programmer writes for each scheme.
function stepEdge(u: Float32Array, v: Float32Array, W: number, H: number): void {
  const pw = W + 2, dt = DT, iK2 = 1 / (K * K);
  for (let y = 1; y <= H; y++) {
    let i = y * pw + 1;
    for (let x = 0; x < W; x++, i++) {
      const c = u[i];
      const e = u[i + 1] - c, w = u[i - 1] - c, s = u[i + pw] - c, n = u[i - pw] - c;
      v[i] = c + dt * (e / (1 + e * e * iK2) + w / (1 + w * w * iK2) + s / (1 + s * s * iK2) + n / (1 + n * n * iK2));
    }
  }
}

function stepHeat(u: Float32Array, v: Float32Array, W: number, H: number): void {
  const pw = W + 2, dt = DT;
  for (let y = 1; y <= H; y++) {
    let i = y * pw + 1;
    for (let x = 0; x < W; x++, i++) {
      const c = u[i];
      v[i] = c + dt * (u[i + 1] + u[i - 1] + u[i + pw] + u[i - pw] - 4 * c);
    }
  }
}

/** Wall and CPU seconds of one timed section (CPU time is steadier than wall time on a shared machine). */
export interface Timing { wall: number; cpu: number; out: Float32Array }

function timed(body: () => void): { wall: number; cpu: number } {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  body();
  const wall = (performance.now() - t0) / 1000;
  const c = process.cpuUsage(c0);
  return { wall, cpu: (c.user + c.system) / 1e6 };
}

/** The baseline: padded Float32 buffers, ghost refill per step, no branches in the inner loop, buffer swap. */
export function handLoop(kind: Kind, img: Image, steps: number): Timing {
  const W = img.width, H = img.height, pw = W + 2;
  let u = new Float32Array(pw * (H + 2)), v = new Float32Array(pw * (H + 2));
  for (let y = 0; y < H; y++) u.set(img.data.subarray(y * W, (y + 1) * W), (y + 1) * pw + 1);
  const step = kind === 'edge' ? stepEdge : stepHeat;
  const t = timed(() => {
    for (let s = 0; s < steps; s++) {
      ghosts(u, W, H);
      step(u, v, W, H);
      const tmp = u; u = v; v = tmp;
    }
  });
  const out = new Float32Array(W * H);
  for (let y = 0; y < H; y++) out.set(u.subarray((y + 1) * pw + 1, (y + 1) * pw + 1 + W), y * W);
  return { ...t, out };
}

/**
 * The engine: compiled once (cached), then stepped with Run.step(), the same loop runSync uses, so the timed
 * section holds the kernels, halo refills and the fused monitors, not set-up or frame statistics.
 * `wall` is the engine's own stepSeconds (contracts §4).
 */
export function engineRun(scheme: CheckedScheme, img: Image, steps: number): Timing {
  // Pinned to the JavaScript backend: this bench measures the generated JavaScript kernels (issue 3); the
  // WebAssembly backend has its own bench.
  const run = createRun(scheme, { image: img, steps, dtype: 'float32', backend: jsBackend });
  const t = timed(() => {
    while (run.stepIndex < steps && run.step()) { /* step() does the work */ }
  });
  if (run.status !== 'running' || run.warnings.length) throw new Error(`bench run stopped: ${run.status} ${run.warnings[0]?.message ?? ''}`);
  return { wall: run.stepSeconds, cpu: t.cpu, out: run.fieldData(0) as Float32Array };
}

export function median(xs: readonly number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

export function maxAbsDiff(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let d = 0;
  for (let i = 0; i < a.length; i++) d = Math.max(d, Math.abs(a[i] - b[i]));
  return d;
}

export function row(cells: (string | number)[], widths: number[]): string {
  return cells.map((c, k) => String(c).padEnd(widths[k])).join(' ');
}
