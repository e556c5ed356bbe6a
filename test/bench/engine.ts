// Engine speed against a plain hand-written typed-array loop (padded buffers, no branches in the inner loop),
// for 2D Perona–Malik and 5-point heat, Float32, reflect. Prints times and ratios; asserts nothing.
// Run with: node test/bench/run-engine.mjs
import { createRun } from '../../src/engine/run';
import { parseAndCheck } from '../../src/notation/index';

const PM = `grid 2d\nboundary reflect\nparam K = 0.05 in [0.001, 1]\nstep dt = 0.2\nsteps 1\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;
const HEAT = `grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 1\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`;

function image(n: number): { width: number; height: number; data: Float32Array } {
  const data = new Float32Array(n * n);
  let a = 12345;
  for (let i = 0; i < data.length; i++) {
    a = (Math.imul(a, 1103515245) + 12345) >>> 0;
    data[i] = (a >>> 8) / 16777216;
  }
  return { width: n, height: n, data };
}

/** Reflect halo of one cell: copy the edge rows and columns outward. */
function ghosts(u: Float32Array, W: number, H: number): void {
  const pw = W + 2;
  for (let y = 1; y <= H; y++) {
    u[y * pw] = u[y * pw + 1];
    u[y * pw + W + 1] = u[y * pw + W];
  }
  u.copyWithin(0, pw, 2 * pw);
  u.copyWithin((H + 1) * pw, H * pw, (H + 1) * pw);
}

function handLoop(kind: 'pm' | 'heat', img: { width: number; height: number; data: Float32Array }, steps: number): number {
  const W = img.width, H = img.height, pw = W + 2;
  let u = new Float32Array(pw * (H + 2)), v = new Float32Array(pw * (H + 2));
  for (let y = 0; y < H; y++) u.set(img.data.subarray(y * W, (y + 1) * W), (y + 1) * pw + 1);
  const dt = 0.2, K = 0.05, iK2 = 1 / (K * K);
  const t0 = performance.now();
  for (let s = 0; s < steps; s++) {
    ghosts(u, W, H);
    for (let y = 1; y <= H; y++) {
      let i = y * pw + 1;
      for (let x = 0; x < W; x++, i++) {
        const c = u[i];
        const e = u[i + 1] - c, w = u[i - 1] - c, so = u[i + pw] - c, no = u[i - pw] - c;
        v[i] = kind === 'heat'
          ? c + dt * (e + w + so + no)
          : c + dt * (e / (1 + e * e * iK2) + w / (1 + w * w * iK2) + so / (1 + so * so * iK2) + no / (1 + no * no * iK2));
      }
    }
    const t = u; u = v; v = t;
  }
  return (performance.now() - t0) / 1000;
}

function engine(text: string, img: { width: number; height: number; data: Float32Array }, steps: number): number {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error('bench scheme has errors');
  const run = createRun(r.scheme, { image: img, steps, dtype: 'float32' });
  return run.runSync().stepSeconds;
}

let peak = 0;
const sample = () => {
  const m = process.memoryUsage();
  peak = Math.max(peak, m.rss);
};

const cases: [string, 'pm' | 'heat', number, number][] = [
  ['Perona–Malik', 'pm', 512, 100], ['Perona–Malik', 'pm', 2048, 20],
  ['heat 5-point', 'heat', 512, 100], ['heat 5-point', 'heat', 2048, 20],
];
console.log('case                         size       steps  hand s   engine s  engine/hand  Mpx·steps/s (engine)');
for (const [label, kind, n, steps] of cases) {
  const img = image(n);
  // Warm-up so both sides are optimised before timing; then best of three.
  handLoop(kind, image(64), 50);
  engine(kind === 'pm' ? PM : HEAT, image(64), 50);
  let hand = Infinity, eng = Infinity;
  for (let k = 0; k < 3; k++) {
    hand = Math.min(hand, handLoop(kind, img, steps)); sample();
    eng = Math.min(eng, engine(kind === 'pm' ? PM : HEAT, img, steps)); sample();
  }
  console.log(`${label.padEnd(28)} ${`${n}²`.padEnd(10)} ${String(steps).padEnd(6)} ${hand.toFixed(3).padEnd(8)} ${eng.toFixed(3).padEnd(9)} ${(eng / hand).toFixed(2).padEnd(12)} ${((n * n * steps) / eng / 1e6).toFixed(1)}`);
}
console.log(`peak RSS ${(peak / 2 ** 20).toFixed(0)} MiB (process.memoryUsage().rss, sampled after each timed run)`);
