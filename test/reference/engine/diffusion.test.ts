// Reference checks of the engine on linear and nonlinear diffusion: impulse moments, conservation, extremum
// principle, periodic shift equivariance, and agreement with plain hand-written loops.
import { describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { expectClose, randomImage, schemeOf } from '../../unit/engine/util';

const HEAT = (dt: number, steps: number, boundary = 'reflect') =>
  `grid 2d\nspacing 1\nboundary ${boundary}\nstep dt = ${dt}\nsteps ${steps}\nfield u = image\nu' = u + dt / h^2 * sum n in N4: u[n] - u\n`;

const PM = (dt: number, steps: number, boundary = 'reflect') =>
  `grid 2d\nspacing 1\nboundary ${boundary}\nparam K = 0.05 in [0.001, 1]\nstep dt = ${dt}\nsteps ${steps}\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;

describe('linear heat equation, explicit Euler, 5-point Laplacian', () => {
  // Source: common practice in scale-space theory (e.g. J. Weickert, Anisotropic Diffusion in Image Processing,
  // Teubner 1998, ch. 1 and 3): one explicit step with r = dt/h² convolves with weights (1 - 4r, r, r, r, r), whose
  // mass is 1 and whose variance per axis is 2r; variances of repeated convolutions add, so N steps give 2·r·N.
  it('N-step response to a unit impulse has mass 1 and variance 2·r·N per axis (Float64)', () => {
    const n = 61, c = 30, steps = 25, dt = 0.2;
    const img = { width: n, height: n, data: new Float64Array(n * n) };
    img.data[c * n + c] = 1;
    const run = createRun(schemeOf(HEAT(dt, steps)), { image: img, dtype: 'float64' });
    run.runSync();
    const u = run.fieldData(0);
    let mass = 0, vx = 0, vy = 0, mx = 0, my = 0;
    for (let y = 0; y < n; y++) for (let x = 0; x < n; x++) {
      const w = u[y * n + x];
      mass += w; mx += w * (x - c); my += w * (y - c);
      vx += w * (x - c) ** 2; vy += w * (y - c) ** 2;
    }
    // The support (radius 25) stays inside the 61×61 image, so the boundary plays no part.
    expect(Math.abs(mass - 1) < 1e-12, `mass ${mass}, tolerance 1e-12`).toBe(true);
    expect(Math.abs(mx) < 1e-12 && Math.abs(my) < 1e-12, `first moments ${mx}, ${my}`).toBe(true);
    const want = 2 * (dt / 1) * steps;
    expect(Math.abs(vx - want) < 1e-10, `variance in x ${vx}, expected ${want} ± 1e-10`).toBe(true);
    expect(Math.abs(vy - want) < 1e-10, `variance in y ${vy}, expected ${want} ± 1e-10`).toBe(true);
  });
});

describe('reflecting boundaries, divergence form', () => {
  // Source: J. Weickert, Anisotropic Diffusion in Image Processing, Teubner 1998, ch. 3 (discrete nonlinear
  // diffusion): with zero-flux boundaries a divergence-form scheme preserves the average grey value, and for
  // non-negative weights (here 0 < g ≤ 1 and dt ≤ 1/4) it obeys the extremum principle.
  it('Perona–Malik keeps the mean to 1e-12 (Float64) and stays within the initial [min, max]', () => {
    const img = randomImage(37, 29, 11);
    let lo = Infinity, hi = -Infinity, mean0 = 0;
    for (const v of img.data) { lo = Math.min(lo, v); hi = Math.max(hi, v); mean0 += v / img.data.length; }
    const run = createRun(schemeOf(PM(0.2, 80)), { image: img, dtype: 'float64', params: { K: 0.1 }, monitors: { extremumCheck: true } });
    const r = run.runSync();
    const s = run.fieldStats(0);
    expect(Math.abs(s.mean - mean0) < 1e-12, `mean drift ${s.mean - mean0}, tolerance 1e-12`).toBe(true);
    expect(s.min >= lo && s.max <= hi, `range [${s.min}, ${s.max}] vs initial [${lo}, ${hi}]`).toBe(true);
    expect(r.warnings, 'no monitor fires for a stable step').toEqual([]);
    expect(s.max - s.min < hi - lo, 'the scheme actually smoothed something').toBe(true);
  });
});

describe('periodic boundaries', () => {
  // Source: common practice: with periodic boundaries a translation-invariant scheme commutes with cyclic shifts.
  it('a cyclically shifted input gives the equally shifted output, exactly', () => {
    const w = 23, h = 17, sx = 5, sy = 3;
    const img = randomImage(w, h, 4);
    const shifted = { width: w, height: h, data: new Float64Array(w * h) };
    for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) shifted.data[((y + sy) % h) * w + ((x + sx) % w)] = img.data[y * w + x];
    const text = `grid 2d\nboundary periodic\nparam K = 0.1 in [0.01, 1]\nparam sigma = 1.5 in [0, 3]\nstep dt = 0.2\nsteps 15\nfield u = image\n` +
      `diffusivity g(s) = 1 / (1 + (s / K)^2)\nlet w = blur(u, sigma)\nu' = u + dt * sum n in N8: g(w[n] - w) * (u[n] - u) / len(n)^2\n`;
    for (const dtype of ['float32', 'float64'] as const) {
      const a = createRun(schemeOf(text), { image: img, dtype }); a.runSync();
      const b = createRun(schemeOf(text), { image: shifted, dtype }); b.runSync();
      const ua = a.fieldData(0), ub = b.fieldData(0);
      const back = new Float64Array(w * h);
      for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) back[y * w + x] = ub[((y + sy) % h) * w + ((x + sx) % w)];
      expectClose(back, ua, 0, `${dtype}: shifted run shifted back vs plain run`);
    }
  });
});

/** Reflect by clamping: for offsets of 1, mirroring about the cell edge repeats the edge pixel. */
function handLoop(img: { width: number; height: number; data: Float64Array }, steps: number, dt: number, g: ((d: number) => number) | null, f32: boolean): Float64Array {
  const { width: W, height: H } = img;
  let u: Float32Array | Float64Array = f32 ? Float32Array.from(img.data) : Float64Array.from(img.data);
  let v: Float32Array | Float64Array = f32 ? new Float32Array(W * H) : new Float64Array(W * H);
  for (let s = 0; s < steps; s++) {
    for (let y = 0; y < H; y++) for (let x = 0; x < W; x++) {
      const c = u[y * W + x];
      const e = u[y * W + Math.min(x + 1, W - 1)] - c, wv = u[y * W + Math.max(x - 1, 0)] - c;
      const so = u[Math.min(y + 1, H - 1) * W + x] - c, no = u[Math.max(y - 1, 0) * W + x] - c;
      // Same order as the notation: east, west, south, north (N4 = [1,0], [-1,0], [0,1], [0,-1]).
      v[y * W + x] = g ? c + dt * (g(e) * e + g(wv) * wv + g(so) * so + g(no) * no) : c + dt * (e + wv + so + no);
    }
    [u, v] = [v, u];
  }
  return Float64Array.from(u);
}

describe('engine vs a plain hand-written loop', () => {
  // Source: common practice (an independent implementation of the same update, differing only in how the
  // boundary is read): equal to 1e-12 in Float64 and 1e-6 in Float32 (numerics.md, "Float32 semantics").
  const img = randomImage(41, 33, 21);
  const K = 0.05;
  const pm = (d: number) => 1 / (1 + (d * d) / (K * K));
  for (const [label, text, g] of [['heat', HEAT(0.2, 40), null], ['Perona–Malik', PM(0.2, 40), pm]] as const) {
    for (const dtype of ['float64', 'float32'] as const) {
      it(`${label}, ${dtype}`, () => {
        const run = createRun(schemeOf(text), { image: img, dtype });
        run.runSync();
        const want = handLoop(img, 40, 0.2, g, dtype === 'float32');
        expectClose(run.fieldData(0), want, dtype === 'float64' ? 1e-12 : 1e-6, `${label} ${dtype} engine vs hand loop`);
      });
    }
  }
});
