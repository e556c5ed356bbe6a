// Sensitivity mode (issue 12): forward-mode derivatives through every step, checked
// (1) against central finite differences of the plain engine, in Float64, on every bundled example and on schemes
//     that use every construct of the notation, for every output pixel and for MSE, PSNR and SSIM;
// (2) against the exact identity for linear heat: d(variance of the N-step impulse response)/d(dt) = 2·N per axis.
//
// Finite differences (common practice): f'(v) ≈ (f(v + h) − f(v − h)) / (2h), error O(h²·f''') + O(ε·|f|/h).
// Step h = 1e-6·|v| (1e-6 when v = 0); tolerance: max over pixels |tangent − difference| ≤ 1e-5·max|difference| + 1e-9.
// With h = 1e-6 the truncation error of the steepest case (eight-neighbour, K = 0.08, g = exp(−(s/K)²)) is ~1e-7
// relative and the rounding error ~1e-16/1e-6 = 1e-10 relative. Measured worst relative error over the examples
// (all pixels, all fields, all names): 5.4e-8 (eight-neighbour, dK); the others 1e-10 to 4e-9.
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { metricSensitivities } from '../../../src/analysis/metricGradients';
import { mse, psnr, ssim } from '../../../src/analysis/metrics';
import { createRun, gaussianTaps, middleRow, type RunImage } from '../../../src/engine';
import { gaussianTapsDerivative } from '../../../src/engine/sensitivity';
import { makeScene } from '../../../src/images/scenes';
import { makeMask } from '../../../src/images/inputs';
import type { CheckedScheme } from '../../../src/notation/scheme';
import { schemeOf } from '../../unit/engine/util';

const EXAMPLES = join(__dirname, '..', '..', '..', 'examples');
const SIZE = 40;
const REL_STEP = 1e-6;
const REL_TOL = 1e-5;
const ABS_TOL = 1e-9;

interface Setting { params: Record<string, number>; dt: number; steps?: number }

/** Named inputs (`image "mask"`) get the generated mask, as in the example tests. */
function namedPictures(scheme: CheckedScheme, size: number): Record<string, RunImage> {
  return Object.fromEntries(scheme.fields.filter(f => f.init.kind === 'image' && f.init.input !== null).map(f => [f.name, makeMask(size, size)]));
}

function runOf(scheme: CheckedScheme, image: RunImage | null, s: Setting, sens?: string[], size = SIZE) {
  const r = createRun(scheme, {
    image, fieldImages: namedPictures(scheme, size), width: size, height: size, params: s.params, dt: s.dt, steps: s.steps, dtype: 'float64',
    ...(sens ? { sensitivity: sens } : {}), monitors: { extremumCheck: false },
  });
  r.runSync();
  expect(r.status, 'the run finished').toBe('done');
  return r;
}

/** Moves one name (a param or dt) by `by`, everything else fixed. */
function moved(s: Setting, name: string, by: number): Setting {
  return name === 'dt' ? { ...s, dt: s.dt + by } : { ...s, params: { ...s.params, [name]: s.params[name] + by } };
}

function valueOf(s: Setting, name: string): number {
  return name === 'dt' ? s.dt : s.params[name];
}

/**
 * Checks every field's tangent for every chosen name against central differences; with a reference, also the
 * derivatives of MSE, PSNR and SSIM of the picture field. Returns the worst relative error seen.
 */
function checkScheme(scheme: CheckedScheme, image: RunImage | null, reference: RunImage | null, s: Setting, names: string[], size = SIZE): number {
  const r = runOf(scheme, image, s, names, size);
  expect(r.result().backend).toBe('js-tangents');
  const pic = Math.max(0, scheme.fields.findIndex(f => f.init.kind === 'image'));
  let worst = 0;
  const g = r.geometry;
  // In 1d the engine runs on the picture's middle row, so the metrics compare that row (no SSIM: under 11×11).
  const clean = reference && scheme.dims === 1 ? middleRow(reference) : reference;
  const ref = clean ? { width: g.width, height: g.height, data: Float64Array.from(clean.data) } : null;
  const out = { width: g.width, height: g.height, data: r.fieldData(pic) as Float64Array };
  const exact = ref ? metricSensitivities(ref, out, names.map(n => r.sensitivityData(pic, n))) : null;
  names.forEach((name, j) => {
    const v = valueOf(s, name);
    const h = REL_STEP * (v === 0 ? 1 : Math.abs(v));
    const up = runOf(scheme, image, moved(s, name, h), undefined, size);
    const dn = runOf(scheme, image, moved(s, name, -h), undefined, size);
    scheme.fields.forEach((f, k) => {
      const a = up.fieldData(k), b = dn.fieldData(k), t = r.sensitivityData(k, name);
      let err = 0, scale = 0, at = -1;
      for (let i = 0; i < t.length; i++) {
        const fd = (a[i] - b[i]) / (2 * h);
        scale = Math.max(scale, Math.abs(fd));
        const e = Math.abs(fd - t[i]);
        if (e > err) {
          err = e;
          at = i;
        }
      }
      worst = Math.max(worst, scale > 0 ? err / scale : err);
      expect(err, `d${f.name}/d${name}: max error ${err} at pixel ${at} (max |difference| ${scale})`).toBeLessThanOrEqual(REL_TOL * scale + ABS_TOL);
    });
    if (ref && exact) {
      const img = (run: ReturnType<typeof runOf>) => ({ width: g.width, height: g.height, data: run.fieldData(pic) as Float64Array });
      const fd = {
        mse: (mse(ref, img(up)) - mse(ref, img(dn))) / (2 * h),
        psnr: (psnr(ref, img(up)) - psnr(ref, img(dn))) / (2 * h),
        ssim: g.height >= 11 ? (ssim(ref, img(up)) - ssim(ref, img(dn))) / (2 * h) : Number.NaN,
      };
      expect(exact[j].ssim === undefined, 'SSIM derivative exactly when SSIM exists').toBe(g.height < 11);
      for (const m of g.height >= 11 ? ['mse', 'psnr', 'ssim'] as const : ['mse', 'psnr'] as const) {
        const e = exact[j][m] as number;
        expect(Math.abs(e - fd[m]), `d${m}/d${name}: exact ${e}, difference ${fd[m]}`).toBeLessThanOrEqual(REL_TOL * Math.abs(fd[m]) + ABS_TOL);
      }
    }
  });
  return worst;
}

describe('sensitivities of every bundled example against central differences', () => {
  for (const file of readdirSync(EXAMPLES).filter(f => f.endsWith('.fluxel')).sort()) {
    it(`${file}: every declared param and dt`, () => {
      const scheme = schemeOf(readFileSync(join(EXAMPLES, file), 'utf8'));
      const scene = makeScene('survey', { width: SIZE, height: SIZE, noise: 0.1, seed: 3 });
      const hasImage = scheme.fields.some(f => f.init.kind === 'image');
      const names = [...scheme.params.map(p => p.name), 'dt'];
      const s: Setting = { params: Object.fromEntries(scheme.params.map(p => [p.name, p.value])), dt: scheme.dt };
      checkScheme(scheme, hasImage ? scene.noisy : null, hasImage ? scene.clean : null, s, names);
    });
  }
});

describe('sensitivities of every construct against central differences', () => {
  const scene = makeScene('cells', { width: SIZE, height: SIZE, noise: 0.08, seed: 11 });

  // The signed let d is read one pixel left, so at x = 0 its value and tangent come from the extended grid.
  it('fn, diffusivity, if/then/else, max/min reductions, max/min/clamp/abs calls, a let chain, blur of a let, a param sigma, a signed let read beyond the edge', () => {
    const scheme = schemeOf(`
grid 2d
boundary reflect
param K = 0.1 in [0.01, 1]
param a = 0.7 in [0, 2]
param s = 0.8 in [0, 2]
param q = 1.5 in [1, 3]
step dt = 0.1
steps 12
field u = image
diffusivity g(z) = 1 / (1 + (z / K)^2)
fn soft(z, w) = tanh(z / w) * w
let m = sqrt(1e-4 + (u[1,0] - u[-1,0])^2 + (u[0,1] - u[0,-1])^2)
let w = blur(m, s)
let e = max n in N4: abs(u[n] - u)
let f = min n in N8: u[n] - a * u
let d = a * (u[1,0] - u)
u' = u + dt * (sum n in N4: g(w[n] - w) * (u[n] - u)) + dt * 0.1 * (if e > 0.05 then soft(f, a) else clamp(f, -a, a)) + dt * 0.01 * abs(u - 0.5)^q + dt * 0.01 * max(w, 0.02 * a) + dt * 0.2 * (d - d[-1,0])
`);
    const s: Setting = { params: { K: 0.1, a: 0.7, s: 0.8, q: 1.5 }, dt: 0.1 };
    checkScheme(scheme, scene.noisy, scene.clean, s, ['K', 'a', 's', 'q', 'dt']);
  });

  it('several fields, primes, t, x/y and a param in an initialiser, exp/log/sin/cos, per-field periodic and fixed boundaries', () => {
    const scheme = schemeOf(`
grid 2d
boundary fixed 0.25
boundary v periodic
param c = 0.8 in [0.1, 1.5]
param r = 3 in [1, 6]
step dt = 0.3
steps 15
field u = image
field v = c * exp(-((x - 20)^2 + (y - 18)^2) / r^2)
v' = v + dt * c^2 * (sum n in N4: u[n] - u) - dt * 0.05 * v * sin(t)
u' = u + dt * v' + dt * 0.02 * log(1 + u^2) * cos(c * t)
`);
    const s: Setting = { params: { c: 0.8, r: 3 }, dt: 0.3 };
    checkScheme(scheme, scene.noisy, scene.clean, s, ['c', 'r', 'dt']);
  });

  it('1d: blur with a sigma computed from a param and dt, reflect boundary', () => {
    const scheme = schemeOf(`
grid 1d
param K = 0.2 in [0.01, 1]
param k = 0.5 in [0, 2]
step dt = 0.25
steps 20
field u = image
let w = blur(u, k + dt)
u' = u + dt * sum n in N2: exp(-((w[n] - w) / K)^2) * (u[n] - u)
`);
    const s: Setting = { params: { K: 0.2, k: 0.5 }, dt: 0.25 };
    // In 1d the engine runs on the picture's middle row; the check covers that row.
    checkScheme(scheme, scene.noisy, null, s, ['K', 'k', 'dt']);
  });

  it('until t = T: d/d dt holds the step count N = round(T/dt) fixed; finite differences that keep N agree', () => {
    const scheme = schemeOf(`
grid 2d
param K = 0.1 in [0.01, 1]
step dt = 0.2
until t = 3
field u = image
u' = u + dt * sum n in N4: (u[n] - u) / (1 + ((u[n] - u) / K)^2)
`);
    expect(scheme.steps).toBe(15);
    // With the dt option alone the engine recomputes N = round(3 / (0.2 ± 2e-7)) = 15: the differences keep N.
    expect(createRun(scheme, { image: scene.noisy, dt: 0.2 + 2e-7 }).steps).toBe(15);
    const s: Setting = { params: { K: 0.1 }, dt: 0.2 };
    checkScheme(scheme, scene.noisy, scene.clean, s, ['K', 'dt']);
  });
});

describe('blur taps: derivative with respect to sigma', () => {
  // Normalised Gaussian taps w_k(σ) for a fixed count 2⌊4σ + 0.5⌋ + 1 (numerics.md "blur"); the count jumps at
  // σ = (n − 0.5)/4, so the differences stay inside one piece: σ ± 1e-6 with σ well away from a jump.
  for (const sigma of [0.3, 0.7, 1, 1.6, 2.9]) {
    it(`sigma ${sigma}`, () => {
      const h = 1e-6;
      const up = gaussianTaps(sigma + h), dn = gaussianTaps(sigma - h), d = gaussianTapsDerivative(sigma);
      expect(up.length).toBe(d.length);
      expect(dn.length).toBe(d.length);
      for (let k = 0; k < d.length; k++) expect(Math.abs(d[k] - (up[k] - dn[k]) / (2 * h))).toBeLessThan(1e-8);
      // The taps always sum to 1, so their derivatives sum to 0.
      expect(Math.abs(d.reduce((p, q) => p + q, 0))).toBeLessThan(1e-14);
    });
  }
  it('sigma 0 is the identity and stays so nearby (one tap): derivative 0', () => {
    expect([...gaussianTapsDerivative(0)]).toEqual([0]);
    expect([...gaussianTapsDerivative(0.1)]).toEqual([0]);
  });
});

describe('linear heat: d(variance)/d(dt) of the N-step impulse response is exactly 2·N per axis', () => {
  // Derivation (common practice; worked example): one explicit step u ← u + (dt/h²)·Σ_{n∈N4}(u[n] − u) is a
  // convolution with the kernel δ + r·(δ₊ₓ + δ₋ₓ + δ₊ᵧ + δ₋ᵧ − 4δ), r = dt/h². It sums to 1, has mean 0, and its
  // second moment along x is r·(1² + (−1)²) = 2r. For kernels summing to 1, means and variances add under
  // convolution (cumulants add; this holds for signed kernels too), so after N steps the impulse response has
  // variance 2·r·N = 2·dt·N per axis (h = 1), while it has not reached the boundary (support radius N). Hence
  // d(variance)/d(dt) = 2·N exactly at fixed N; in 1d the same holds with N2.
  const variance = (u: ArrayLike<number>, du: ArrayLike<number>, width: number, height: number, axis: 'x' | 'y') => {
    // var = S2/S0 − (S1/S0)², S_k = Σ c^k·u; dvar by the quotient and product rules with the tangent du.
    let s0 = 0, s1 = 0, s2 = 0, d0 = 0, d1 = 0, d2 = 0;
    for (let y = 0; y < height; y++) {
      for (let x = 0; x < width; x++) {
        const i = y * width + x, c = axis === 'x' ? x : y;
        s0 += u[i]; s1 += c * u[i]; s2 += c * c * u[i];
        d0 += du[i]; d1 += c * du[i]; d2 += c * c * du[i];
      }
    }
    const m = s1 / s0;
    const dm = (d1 * s0 - s1 * d0) / (s0 * s0);
    return { value: s2 / s0 - m * m, derivative: (d2 * s0 - s2 * d0) / (s0 * s0) - 2 * m * dm };
  };
  const impulse = (w: number, h: number) => {
    const data = new Float64Array(w * h);
    data[Math.floor(h / 2) * w + Math.floor(w / 2)] = 1;
    return { width: w, height: h, data };
  };

  it('2d, the bundled example at dt = 0.2 and 0.27, N = 25 on a 61×61 grid', () => {
    const scheme = schemeOf(readFileSync(join(EXAMPLES, 'heat-2d.fluxel'), 'utf8'));
    for (const dt of [0.2, 0.27]) {
      const N = 25;
      const r = createRun(scheme, { image: impulse(61, 61), dt, steps: N, dtype: 'float64', sensitivity: ['dt'] });
      r.runSync();
      for (const axis of ['x', 'y'] as const) {
        const v = variance(r.fieldData(0), r.sensitivityData(0, 'dt'), 61, 61, axis);
        expect(Math.abs(v.value - 2 * dt * N), `variance along ${axis}`).toBeLessThan(1e-11);
        expect(Math.abs(v.derivative - 2 * N), `d variance/d dt along ${axis}`).toBeLessThan(1e-10);
      }
    }
  });

  it('1d, the bundled example, N = 50 on 151 cells', () => {
    const scheme = schemeOf(readFileSync(join(EXAMPLES, 'heat-1d.fluxel'), 'utf8'));
    const r = createRun(scheme, { image: impulse(151, 1), dtype: 'float64', sensitivity: ['dt'] });
    expect(r.steps).toBe(50);
    r.runSync();
    const v = variance(r.fieldData(0), r.sensitivityData(0, 'dt'), 151, 1, 'x');
    expect(Math.abs(v.value - 2 * 0.4 * 50)).toBeLessThan(1e-11);
    expect(Math.abs(v.derivative - 100)).toBeLessThan(1e-10);
  });

  it('until t = 5 with dt = 0.25 (N = 20): the derivative is 2·N = 40, not the 0 of the continuous-time variance 2·T', () => {
    const scheme = schemeOf('grid 2d\nstep dt = 0.25\nuntil t = 5\nfield u = image\nu\' = u + dt * sum n in N4: u[n] - u\n');
    const r = createRun(scheme, { image: impulse(51, 51), dtype: 'float64', sensitivity: ['dt'] });
    expect(r.steps).toBe(20);
    r.runSync();
    const v = variance(r.fieldData(0), r.sensitivityData(0, 'dt'), 51, 51, 'x');
    expect(Math.abs(v.value - 10)).toBeLessThan(1e-11);
    expect(Math.abs(v.derivative - 40)).toBeLessThan(1e-10);
  });
});
