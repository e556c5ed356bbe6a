// The WebAssembly SIMD backend against the JavaScript backend: every bundled example in Float32 and Float64,
// the per-scheme fallback and its reason, odd widths, 1d rows and lets on the extended grid.
// Float32 differences come from Float32 lane arithmetic (JavaScript computes in Float64 and rounds when storing)
// and a polynomial exp; Float64 kernels do the same operations in the same order, so they agree to rounding.
import { makeMask } from '../../../src/images/inputs';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { JsBackend } from '../../../src/engine/jsBackend';
import { createRun } from '../../../src/engine/run';
import type { DType } from '../../../src/engine/types';
import { WasmBackend } from '../../../src/engine/wasm/backend';
import { expectClose, randomImage, schemeOf } from './util';

const EXAMPLES = join(__dirname, '../../../examples');
const js = new JsBackend();
const wasm = new WasmBackend({ threads: 1 });

/** Chaotic or undamped schemes are compared over a short horizon (numerics.md, "Float32 semantics"). */
const SHORT = new Set(['gray-scott', 'wave']);

function both(text: string, opts: { width: number; height: number; steps?: number; dtype: DType; image?: boolean }) {
  const s = schemeOf(text);
  const image = opts.image ? randomImage(opts.width, opts.height, 7) : null;
  // Named inputs (a mask) get the generated mask.
  const fieldImages = Object.fromEntries(s.fields.filter(f => f.init.kind === 'image' && f.init.input !== null).map(f => [f.name, makeMask(opts.width, opts.height)]));
  const common = { image, fieldImages, width: opts.width, height: opts.height, steps: opts.steps, dtype: opts.dtype };
  const a = createRun(s, { ...common, backend: js });
  const b = createRun(s, { ...common, backend: wasm });
  const ra = a.runSync(), rb = b.runSync();
  return { s, a, b, ra, rb };
}

describe('every example: wasm equals js', () => {
  const files = readdirSync(EXAMPLES).filter(f => f.endsWith('.fluxel'));
  for (const dtype of ['float32', 'float64'] as const) {
    for (const f of files) {
      const name = f.replace(/\.fluxel$/, '');
      it(`${name} (${dtype})`, () => {
        const text = readFileSync(join(EXAMPLES, f), 'utf8');
        const s = schemeOf(text);
        const twoD = s.dims === 2;
        const steps = SHORT.has(name) ? 20 : undefined;
        const { a, b, ra, rb } = both(text, { width: twoD ? 67 : 203, height: twoD ? 45 : 3, steps, dtype, image: s.fields.some(x => x.init.kind === 'image') });
        expect(rb.status).toBe(ra.status);
        expect(rb.stepsDone).toBe(ra.stepsDone);
        if (!(dtype === 'float64' && name === 'eight-neighbour')) expect(rb.backend, 'runs on the SIMD kernels').toMatch(/^wasm \((f32x4|f64x2), 1 thread\)$/);
        const tol = dtype === 'float32' ? 1e-6 : 1e-12;
        s.fields.forEach((fi, k) => expectClose(b.fieldData(k), a.fieldData(k), tol, `${name} ${fi.name} after ${ra.stepsDone} steps`));
        expect(rb.warnings.map(w => w.kind)).toEqual(ra.warnings.map(w => w.kind));
      });
    }
  }
});

describe('constructs', () => {
  const HEAD = `grid 2d\nboundary reflect\nparam K = 0.3 in [0, 1]\nstep dt = 0.1\nsteps 5\nfield u = image\n`;
  const cases: [string, string][] = [
    ['comparisons and if', `u' = if u > K and not (u == 0.5) or u[1,0] <= u then u * 0.9 else u + dt * (u[0,1] - u)\n`],
    ['min, max, clamp, abs, sign, sqrt', `u' = clamp(u + dt * (max(u[1,0], u[-1,0]) - min(u[0,1], u[0,-1])) * sign(u - K) + 0.01 * sqrt(abs(u[1,1] - u)), 0.1, 0.9)\n`],
    ['reductions', `u' = 0.2 * (sum n in N8: u[n]) / 8 + 0.4 * (max n in N4: u[n]) + 0.4 * (min n in N4: u[n])\n`],
    ['powers', `u' = u + dt * (u[1,0] - u)^4 - dt * (u^5 - (1 + u)^-2 * 0.001) + dt * K^0.5 * u^0\n`],
    ['coordinates and time', `u' = u + 0.001 * x - 0.002 * y + t * 0.01 + dt\n`],
    ['exp', `u' = u * exp(-(u[1,0] - u)^2 / K) + 0.1 * exp(u - 3)\n`],
    ['lets on the extended grid', `let d = u[1,0] - u[-1,0]\nlet e = d[0,1] * d[0,-1]\nu' = u + dt * (e[1,0] - e[-1,0] + d)\n`],
  ];
  for (const [what, body] of cases) {
    for (const [w, h] of [[37, 11], [4, 5], [5, 1]] as const) {
      it(`${what} on ${w}×${h}`, () => {
        const { s, a, b, rb } = both(HEAD + body, { width: w, height: h, dtype: 'float32', image: true });
        expect(rb.backend).toMatch(/^wasm \(f32x4, 1 thread\)$/);
        s.fields.forEach((_, k) => expectClose(b.fieldData(k), a.fieldData(k), 1e-6, `${what} ${w}×${h}`));
      });
    }
  }

  it('a narrow image (3 pixels wide) runs the JavaScript kernels on the same buffers', () => {
    const { a, b } = both(HEAD + `u' = u + dt * sum n in N4: u[n] - u\n`, { width: 3, height: 6, dtype: 'float32', image: true });
    expectClose(b.fieldData(0), a.fieldData(0), 0, '3 wide');
  });

  it('1d rows, periodic and fixed boundaries', () => {
    for (const bnd of ['periodic', 'fixed 0.25']) {
      const text = `grid 1d\nboundary ${bnd}\nstep dt = 0.3\nsteps 9\nfield u = image\nu' = u + dt * sum n in N2: u[n] - u\n`;
      const { a, b } = both(text, { width: 41, height: 3, dtype: 'float32', image: true });
      expectClose(b.fieldData(0), a.fieldData(0), 1e-6, `1d ${bnd}`);
    }
  });

  it('falls back per scheme and says which construct, where', () => {
    const { a, b, rb } = both(HEAD + `u' = u + dt * sin(u[1,0] - u)\n`, { width: 16, height: 8, dtype: 'float32', image: true });
    expect(rb.backend).toBe('js (wasm fallback: sin() at line 7)');
    expectClose(b.fieldData(0), a.fieldData(0), 0, 'fallback runs the JavaScript kernels');
  });

  it('a let it cannot vectorise runs in JavaScript while the update runs in SIMD', () => {
    const { a, b, rb } = both(HEAD + `let m = log(1 + u)\nu' = u + dt * (m[1,0] - m)\n`, { width: 16, height: 8, dtype: 'float32', image: true });
    expect(rb.backend).toBe('wasm (f32x4, 1 thread; let 1 in js: log() at line 7)');
    expectClose(b.fieldData(0), a.fieldData(0), 1e-6, 'mixed');
  });

  it('blow-ups are reported at the same step', () => {
    const { ra, rb } = both(HEAD + `u' = u * 1e20 + 1\n`, { width: 16, height: 8, dtype: 'float32', image: true });
    expect(rb.status).toBe('blow-up');
    expect(rb.warnings[0]).toEqual(ra.warnings[0]);
  });
});

describe('fluxes through shared faces are computed once', () => {
  const noReuse = new WasmBackend({ threads: 1, reuseFluxes: false });
  const PM = `grid 2d\nboundary reflect\nparam K = 0.05 in [0, 1]\nstep dt = 0.2\nsteps 12\nfield u = image\n` +
    `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;
  // [what, scheme, reuse nodes expected: one per axis where the term at -o is minus the term at o one pixel back]
  const cases: [string, string, number][] = [
    ['edge-preserving (reused: g is even)', PM, 2],
    ['the bundled edge-preserving example (blurred diffusivity argument)', readFileSync(join(EXAMPLES, 'edge-preserving.fluxel'), 'utf8'), 2],
    ['tv-flow (reused: the face average of g(m) is symmetric)', readFileSync(join(EXAMPLES, 'tv-flow.fluxel'), 'utf8'), 2],
    // A cheap term: along x a shuffle replaces a subtraction; along y the flux goes from row to row of a pair only.
    ['5-point heat (a cheap term, reused along x and within row pairs)', readFileSync(join(EXAMPLES, 'heat-2d.fluxel'), 'utf8'), 2],
    ['5-point heat plus a term in y (row pairs: the second row\'s y)', `grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 9\nfield u = image\nu' = u + dt * (sum n in N4: u[n] - u) + 0.001 * y\n`, 2],
    ['an odd diffusivity (not reused)', PM.replace('1 / (1 + s^2 / K^2)', '1 / (2 + s)'), 0],
    ['a term reading x (not reused)', PM.replace('g(u[n] - u) * (u[n] - u)', 'g(u[n] - u) * (u[n] - u) / (1 + 0.001 * x)'), 0],
  ];
  for (const [what, text, reused] of cases) {
    it(what, async () => {
      const { updateGraph } = await import('../../../src/engine/wasm/ir');
      const s = schemeOf(text);
      const g = updateGraph(s);
      const reuse = g.graph.nodes.filter(n => n.op === 'reusex' || n.op === 'reusey').length;
      expect(reuse, 'reuse nodes').toBe(reused);
      const image = randomImage(45, 38, 9);
      const a = createRun(s, { image, backend: wasm }), b = createRun(s, { image, backend: noReuse }), c = createRun(s, { image, backend: js });
      a.runSync(); b.runSync(); c.runSync();
      expectClose(a.fieldData(0), b.fieldData(0), 0, `${what}: with and without reuse`);
      expectClose(a.fieldData(0), c.fieldData(0), 1e-6, `${what}: against JavaScript`);
    });
  }
});

describe('rows in pairs (a cheap vertical flux handed from row to row in a register) change nothing', () => {
  // Bitwise against the same kernels taking one row at a time, on heights that leave an odd last row in bands and
  // chunks, with single steps and with passes, in Float32 and Float64.
  const heat = readFileSync(join(EXAMPLES, 'heat-2d.fluxel'), 'utf8');
  const withY = `grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 9\nfield u = image\nu' = u + dt * (sum n in N4: u[n] - u) + 0.001 * y\n`;
  const wide = `grid 2d\nboundary reflect\nstep dt = 0.05\nsteps 7\nfield u = image\nneighbours W = {[2,0], [-2,0], [0,2], [0,-2], [1,0], [-1,0], [0,1], [0,-1]}\nu' = u + dt * sum n in W: u[n] - u\n`;
  for (const twoStep of [true, false]) {
    const paired = new WasmBackend({ threads: 1, twoStep }), alone = new WasmBackend({ threads: 1, twoStep, rowPairs: false });
    for (const [what, text] of [['heat-2d', heat], ['a term in y', withY], ['offsets of 1 and 2', wide]] as const) {
      for (const dtype of ['float32', 'float64'] as DType[]) {
        it(`${what}, ${dtype}, ${twoStep ? 'passes' : 'single steps'}`, () => {
          const s = schemeOf(text);
          for (const [w, h] of [[37, 1], [9, 3], [16, 7], [45, 38], [64, 61]]) {
            const image = randomImage(w, h, w * h);
            const a = createRun(s, { image, backend: paired, dtype, steps: 8 }), b = createRun(s, { image, backend: alone, dtype, steps: 8 });
            a.runSync(); b.runSync();
            expectClose(a.fieldData(0), b.fieldData(0), 0, `${what} ${w}×${h}`);
          }
        });
      }
    }
  }
});

describe('Float32 monitors agree with the JavaScript kernels', () => {
  // The SIMD kernels take pmin/pmax of Float32 lanes with a separate NaN mask (kernel.ts); the JavaScript kernels
  // take Math.min/max of the Float64 values before rounding. Rounded to Float32 they must agree, and so must the
  // runner's blow-up decision (NaN, or infinite in Float32), wherever in a row the odd value sits (common practice).
  const HEAD = `grid 2d\nboundary reflect\nstep dt = 0.1\nsteps 1\nfield u = image\n`;
  const cases: [string, string][] = [
    ['positive values', `u' = u + 0.5\n`],
    ['negative values only', `u' = -1 - u\n`],
    ['mixed signs and zeros', `u' = if x == 2 then -0 else if x == 3 then 0 else u - 0.5\n`],
    ['-Infinity at one pixel', `u' = if x == 5 and y == 4 then -1e39 else u\n`],
    ['+Infinity at one pixel', `u' = if x == 6 and y == 1 then 1e39 else -u\n`],
    ['NaN at one pixel', `u' = if x == 9 and y == 6 then sqrt(-1 - u) else u\n`],
    ['NaN in the last vector of a row', `u' = if x == 12 then sqrt(-1 - u) else u\n`],
    ['NaN of the other sign among negative values', `u' = if x == 1 and y == 7 then -sqrt(-1 - u) else -1 - u\n`],
    ['NaN of either sign', `u' = if x == 1 then -sqrt(-1 - u) else if x == 2 then sqrt(-1 - u) else u\n`],
    ['only zeros of both signs', `u' = if x == 4 then -0 else 0 * u\n`],
    ['-Infinity among negative values', `u' = if x == 0 and y == 0 then -1e39 else -1 - u\n`],
  ];
  for (const [what, body] of cases) {
    it(what, () => {
      const s = schemeOf(HEAD + body);
      const image = randomImage(13, 9, 4);
      const monitorAfterStep = (backend: JsBackend | WasmBackend) => {
        const r = createRun(s, { image, backend, monitors: { extremumCheck: false } });
        r.step();
        const M = (r as unknown as { ctx: { monitor: { min: Float64Array; max: Float64Array; bad: Float64Array } } }).ctx.monitor;
        const min = Math.fround(M.min[0]), max = Math.fround(M.max[0]);
        // The runner's blow-up test (run.ts, checkMonitors): NaN, or a value that is infinite once in Float32.
        return { min, max, blowUp: Number.isNaN(M.bad[0]) || !Number.isFinite(min) || !Number.isFinite(max) };
      };
      expect(monitorAfterStep(wasm)).toEqual(monitorAfterStep(js));
    });
  }
});
