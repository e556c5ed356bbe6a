// Two steps per pass (temporal blocking), several passes per call, against single steps on the same SIMD kernels:
// step s + 1 of each chunk of rows is computed into a band buffer (with the rows its neighbours need computed twice)
// and its halo refilled there, each chunk refills the halo of its output rows for the next pass, and a pass whose
// steps are not quiet ends the call; the results must be bitwise those of single steps, with the same frames,
// warnings and monitors' findings.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it, vi } from 'vitest';
import { JsBackend } from '../../../src/engine/jsBackend';
import { createRun } from '../../../src/engine/run';
import type { DType } from '../../../src/engine/types';
import { WasmBackend } from '../../../src/engine/wasm/backend';
import { expectClose, randomImage, schemeOf } from './util';

const paired = new WasmBackend({ threads: 1 });
const single = new WasmBackend({ threads: 1, twoStep: false });
const js = new JsBackend();
const example = (name: string) => readFileSync(join(__dirname, '../../../examples', `${name}.fluxel`), 'utf8');

const PM = `grid 2d\nboundary reflect\nparam K = 0.05 in [0, 1]\nstep dt = 0.2\nsteps 13\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;

function compare(text: string, w: number, h: number, opts: { steps?: number; every?: number; dtype?: DType; image?: { width: number; height: number; data: Float64Array } } = {}) {
  const s = schemeOf(text);
  const image = opts.image ?? (s.fields.some(f => f.init.kind === 'image') ? randomImage(w, h, 5) : null);
  const common = { image, width: w, height: h, steps: opts.steps, every: opts.every, dtype: opts.dtype };
  // The compiled scheme is cached per backend: the run below uses this very object.
  const compiled = paired.compile(s, { dtype: opts.dtype ?? 'float32' });
  const spy = vi.spyOn(compiled, 'updatePasses' as never) as unknown as { mock: { calls: unknown[][]; results: { value: unknown }[] }; mockRestore(): void };
  // Which block driver each call used ('tbz', 'tbq': the quiet check from 0 or from lo > 0; 'tb': the min/max
  // monitors), what it returned and how many passes it was asked for.
  const blocks = vi.spyOn(compiled, 'runBlock' as never) as unknown as { mock: { calls: unknown[][]; results: { value: unknown }[] }; mockRestore(): void };
  const a = createRun(s, { ...common, backend: paired }), b = createRun(s, { ...common, backend: single });
  const progress: number[] = [];
  const ra = a.runSync({ onProgress: k => progress.push(k) }), rb = b.runSync();
  s.fields.forEach((f, k) => {
    const x = a.fieldData(k), y = b.fieldData(k);
    let same = x.length === y.length;
    for (let i = 0; i < x.length && same; i++) same = Object.is(x[i], y[i]);
    expect(same, `${f.name}: paired vs single steps, bitwise`).toBe(true);
  });
  expect(ra.frames).toEqual(rb.frames);
  expect(ra.warnings).toEqual(rb.warnings);
  expect(ra.status).toBe(rb.status);
  expect(ra.stepsDone).toBe(rb.stepsDone);
  // Every step is reported, in order, paired or not.
  expect(progress).toEqual(Array.from({ length: ra.stepsDone }, (_, k) => k + 1));
  const done = spy.mock.results.map(r => r.value as number);
  const passes = done.filter(v => v > 0).reduce((x, y) => x + y, 0);
  // Calls asked for more than one pass once the first call's time was known.
  const longest = Math.max(0, ...spy.mock.calls.map(c => c[2] as number));
  spy.mockRestore();
  const drivers = blocks.mock.calls.map((c, k) => `${c[4] as string}:${blocks.mock.results[k].value as number}/${c[5] as number}`);
  blocks.mockRestore();
  return { s, a, ra, common, passes, longest, calls: done.length, drivers };
}

describe('two steps per pass equal single steps, bitwise', () => {
  it('edge-preserving, odd step count (the last step single), sizes that leave a short last chunk', () => {
    // 13 steps, the last frame measures the change: passes for steps 1-12, then a single step.
    expect(compare(PM, 61, 203).passes).toBe(6);
  });
  it('heat 2d, 5-point, narrow image', () => {
    expect(compare(example('heat-2d'), 9, 70, { steps: 20 }).passes).toBe(9);
  });
  it('eight-neighbour (corners of the halo), with frames every 3 steps', () => {
    expect(compare(example('eight-neighbour'), 37, 41, { steps: 17, every: 3 }).passes).toBeGreaterThan(0);
  });
  it('gray-scott (two fields, periodic: single steps)', () => {
    expect(compare(example('gray-scott'), 40, 40, { steps: 12 }).passes).toBe(0);
  });
  it('heat-1d (rows only)', () => {
    expect(compare(example('heat-1d'), 203, 3, { steps: 21 }).passes).toBe(10);
  });
  it('wave (a primed read, two fields)', () => {
    expect(compare(example('wave'), 48, 37, { steps: 16 }).passes).toBeGreaterThan(0);
  });
  it('Float64', () => {
    expect(compare(PM, 30, 50, { dtype: 'float64' }).passes).toBe(6);
  });
  it('a wide halo (offsets of 2)', () => {
    expect(compare(`grid 2d\nboundary reflect\nstep dt = 0.05\nsteps 11\nfield u = image\nu' = u + dt * (u[2,0] + u[-2,0] + u[0,2] + u[0,-2] - 4 * u)\n`, 33, 90).passes).toBe(5);
  });
  it('a blow-up between the two steps of a pass is found at the same step and pixel', () => {
    const { ra } = compare(`grid 2d\nboundary reflect\nstep dt = 1\nsteps 10\nfield u = image\nu' = if y > 40 then u * 1e9 else u\n`, 24, 48);
    expect(ra.status).toBe('blow-up');
  });
  it('growth and new-extremum warnings at the same steps', () => {
    // Heat beyond its positivity limit 1/4 (a checkerboard mode grows by |1 - 8·0.3| = 1.4 per step).
    const { ra, passes } = compare(example('heat-2d').replace(/step dt = [0-9.]+/, 'step dt = 0.3'), 40, 40, { steps: 60 });
    expect(ra.warnings.map(w => w.kind).sort()).toEqual(['growth', 'new-extremum']);
    expect(passes).toBeGreaterThan(0);
  });
  it('several passes per call: 200 steps on a small image, with frames every 50', () => {
    // Each frame measures the change from the step before: steps 49 and 50 (and so on) single, 24 passes per 50.
    const r = compare(PM, 24, 40, { steps: 200, every: 50 });
    expect(r.passes).toBe(96);
    expect(r.longest).toBeGreaterThan(1);
    expect(r.calls).toBeLessThan(100);
  });
  it('a pass that is not quiet in the middle of a call ends the call; single steps find the pixel', () => {
    // Rows below 20 grow by 1.001 per step: the first step leaves the initial range (new-extremum, found by single
    // steps), the growth bound 1e3 is crossed after ~7000 steps, far inside a call of many passes.
    const { ra, passes, longest } = compare(`grid 2d\nboundary reflect\nstep dt = 1\nsteps 9000\nfield u = image\nu' = if y > 20 then u * 1.001 else u\n`, 16, 32);
    expect(ra.warnings.map(w => w.kind)).toEqual(['new-extremum', 'growth']);
    expect(ra.warnings[1].step).toBeGreaterThan(6000);
    expect(longest).toBeGreaterThan(1);
    expect(passes).toBeGreaterThan(4000);
  });
  it('Float32 data in [0, 1]: the passes use the quiet check, and a pass it refuses is decided by the min/max monitors', () => {
    // Every call of this run starts with the quiet check and none is refused (no warning).
    const pm = compare(PM, 24, 40, { steps: 200, every: 50 });
    expect(pm.drivers.length).toBeGreaterThan(0);
    expect(pm.drivers.every(d => /^tb[qz]:/.test(d))).toBe(true);
    // A blow-up in the first pass: refused by the quiet check, confirmed by the monitors, found by single steps.
    const blow = compare(`grid 2d\nboundary reflect\nparam K = 0.05 in [0, 1]\nstep dt = 1\nsteps 10\nfield u = image\nu' = if y > 40 then u * 1e9 else u\n`, 24, 48);
    expect(blow.drivers[0]).toMatch(/^tb[qz]:0\/4$/);
    expect(blow.drivers[1]).toBe('tb:0/4');
    expect(blow.ra.status).toBe('blow-up');
  });
  it('data away from 0: the quiet check from the lower limit serves the passes and refuses the first new extremum', () => {
    const lifted = (w: number, h: number) => {
      const im = randomImage(w, h, 11);
      for (let i = 0; i < im.data.length; i++) im.data[i] = 0.25 + 0.5 * im.data[i];
      return im;
    };
    const pm = compare(PM, 24, 40, { steps: 200, every: 50, image: lifted(24, 40) });
    expect(pm.drivers.length).toBeGreaterThan(0);
    expect(pm.drivers.every(d => d.startsWith('tbq:'))).toBe(true);
    // Heat beyond its positivity limit: the first pass leaves the initial range; found at the same step and pixel.
    const hot = compare(example('heat-2d').replace(/step dt = [0-9.]+/, 'step dt = 0.3'), 40, 40, { steps: 60, image: lifted(40, 40) });
    expect(hot.drivers[0]).toMatch(/^tbq:0\/\d+$/);
    expect(hot.ra.warnings.map(w => w.kind)).toContain('new-extremum');
  });
  it('values in [lo, 0) pass the limits but not the quiet check: the min/max monitors take that pass and the rest of the run', () => {
    // Upwind transport to the right (weights 1/2, 1/2: an extremum-monitored scheme); the left half starts at
    // -1e-10, inside the limits (the initial range) but below the quiet check's 0, and stays there.
    const w = 32, h = 24, image = randomImage(w, h, 9);
    for (let y = 0; y < h; y++) for (let x = 0; x < w / 2; x++) image.data[y * w + x] = -1e-10;
    const r = compare(`grid 2d\nboundary reflect\nstep dt = 0.5\nsteps 40\nfield u = image\nu' = u - dt * (u - u[-1,0])\n`, w, h, { image });
    expect(r.ra.warnings).toEqual([]);
    expect(r.drivers[0]).toMatch(/^tbz:0\/\d+$/);
    expect(r.drivers[1]).toMatch(/^tb:(\d+)\/\1$/);
    expect(r.drivers.slice(1).every(d => d.startsWith('tb:'))).toBe(true);
    expect(r.passes).toBeGreaterThan(15);
  });
  it('a cancel is asked between calls and ends the run at the last step of a call, as single steps to there', () => {
    const s = schemeOf(PM);
    const image = randomImage(40, 30, 8);
    for (const stop of [5, 6, 41]) {
      const a = createRun(s, { image, steps: 120, backend: paired });
      let seen = 0;
      const calls: string[] = [];
      const r = a.runSync({ onProgress: k => { seen = k; calls.push(`p${k}`); }, shouldCancel: () => { calls.push('c'); return seen >= stop; } });
      expect(r.status).toBe('cancelled');
      expect(r.stepsDone).toBeGreaterThanOrEqual(stop);
      // Every step reported once, in order; the last ask came after the last step.
      expect(calls.filter(c => c !== 'c')).toEqual(Array.from({ length: r.stepsDone }, (_, k) => `p${k + 1}`));
      expect(calls[calls.length - 1]).toBe('c');
      const b = createRun(s, { image, steps: r.stepsDone, backend: single });
      b.runSync();
      expectClose(a.fieldData(0), b.fieldData(0), 0, `cancelled after step ${r.stepsDone}`);
    }
  });
  it('no passes when onProgress reads the fields (everyStep)', () => {
    const s = schemeOf(PM);
    const compiled = paired.compile(s, { dtype: 'float32' });
    const spy = vi.spyOn(compiled, 'updatePasses' as never) as unknown as { mockRestore(): void };
    const r = createRun(s, { image: randomImage(20, 20, 2), steps: 10, backend: paired });
    const means: number[] = [];
    r.runSync({ everyStep: true, onProgress: () => means.push(Array.from(r.fieldData(0)).reduce((x, y) => x + y, 0)) });
    expect(spy).not.toHaveBeenCalled();
    expect(means.length).toBe(10);
    spy.mockRestore();
  });
  it('equals the JavaScript backend within 1e-6 (Float32)', () => {
    const { s, a, common } = compare(PM, 64, 64, { steps: 20 });
    const c = createRun(s, { ...common, backend: js });
    c.runSync();
    expectClose(a.fieldData(0), c.fieldData(0), 1e-6, 'paired wasm vs js');
  });
});
