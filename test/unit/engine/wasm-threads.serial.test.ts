// Two threads over shared memory against one: each thread computes a band of rows of the same kernels, so the
// results must be bitwise equal (and the monitors' findings the same). Starts the helper thread, hence serial.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it, vi } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { WasmBackend } from '../../../src/engine/wasm/backend';
import { forceHelperShare } from '../../../src/engine/wasm/threads';
import { expectClose, randomImage, schemeOf } from './util';

const one = new WasmBackend({ threads: 1 });
const two = new WasmBackend({ threads: 2 });
const PM = `grid 2d\nboundary reflect\nparam K = 0.05 in [0, 1]\nstep dt = 0.2\nsteps 13\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + s^2 / K^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;
const example = (name: string) => readFileSync(join(__dirname, '../../../examples', `${name}.fluxel`), 'utf8');

// Normally the helper takes whatever chunks of rows are left when it wakes (maybe none); here it must run half.
beforeAll(() => forceHelperShare(true));
afterAll(() => forceHelperShare(false));

describe('two threads equal one, bitwise', () => {
  const cases: [string, string, number, number, number | undefined, ('float32' | 'float64')?][] = [
    ['edge-preserving (blur let in JS between steps)', example('edge-preserving'), 67, 61, 15],
    ['tv-flow (an expr let split in bands too)', example('tv-flow'), 40, 33, 30],
    ['gray-scott (two fields, periodic)', example('gray-scott'), 80, 80, 50],
    ['upwind-transport (one-sided offsets, periodic)', example('upwind-transport'), 45, 30, undefined],
    ['wave (primed read)', example('wave'), 64, 64, 40],
    // No lets, reflect: two steps per pass, each thread with its own band buffers.
    ['heat-2d (two steps per pass)', example('heat-2d'), 70, 90, 21],
    ['eight-neighbour (two steps per pass, corners)', example('eight-neighbour'), 50, 77, 20],
    // Many passes per call: the threads meet inside WebAssembly after every pass.
    ['heat-2d, 400 steps (many passes per call)', example('heat-2d'), 70, 90, 400],
    ['Perona–Malik without lets, Float64, 300 steps (many passes per call)', PM, 61, 47, 300, 'float64'],
    ['wave, 200 steps (two fields in the passes)', example('wave'), 64, 40, 200],
  ];
  for (const [what, text, w, h, steps, dtype] of cases) {
    it(what, () => {
      const s = schemeOf(text);
      const image = s.fields.some(f => f.init.kind === 'image') ? randomImage(w, h, 11) : null;
      const a = createRun(s, { image, width: w, height: h, steps, backend: one, dtype });
      const b = createRun(s, { image, width: w, height: h, steps, backend: two, dtype });
      // The compiled scheme is cached per backend: the run above uses this very object.
      const spy = vi.spyOn(two.compile(s, { dtype: dtype ?? 'float32' }), 'updatePasses' as never) as unknown as { mock: { results: { value: unknown }[] }; mockRestore(): void };
      const ra = a.runSync(), rb = b.runSync();
      const most = Math.max(0, ...spy.mock.results.map(r => r.value as number));
      spy.mockRestore();
      // Long runs of schemes without lets take many passes per call on both threads.
      if ((steps ?? 0) >= 200) expect(most, 'passes in one call').toBeGreaterThan(1);
      const lanes = dtype === 'float64' ? 'f64x2' : 'f32x4';
      expect(ra.backend).toMatch(new RegExp(`^wasm \\(${lanes}, 1 thread`));
      expect(rb.backend).toMatch(new RegExp(`^wasm \\(${lanes}, 2 threads`));
      s.fields.forEach((f, k) => expectClose(b.fieldData(k), a.fieldData(k), 0, `${what}: ${f.name}`));
      expect(rb.frames).toEqual(ra.frames);
      expect(rb.warnings).toEqual(ra.warnings);
    });
  }

  it('the quiet check on both threads: a pass it refuses but the limits allow is retaken with the min/max monitors', () => {
    // Upwind transport to the right (an extremum-monitored scheme) whose left half sits at -1e-10: inside the
    // limits, below the quiet check's 0. The first block call switches to the monitors; nothing else changes.
    const s = schemeOf(`grid 2d\nboundary reflect\nstep dt = 0.5\nsteps 300\nfield u = image\nu' = u - dt * (u - u[-1,0])\n`);
    const image = randomImage(64, 40, 5);
    for (let y = 0; y < 40; y++) for (let x = 0; x < 32; x++) image.data[y * 64 + x] = -1e-10;
    const a = createRun(s, { image, backend: one }), b = createRun(s, { image, backend: two });
    const spy = vi.spyOn(two.compile(s, { dtype: 'float32' }), 'runBlock' as never) as unknown as { mock: { calls: unknown[][] }; mockRestore(): void };
    const ra = a.runSync(), rb = b.runSync();
    const drivers = spy.mock.calls.map(c => c[4]);
    spy.mockRestore();
    expect(drivers.slice(0, 2)).toEqual(['tbz', 'tb']);
    expect(drivers.slice(2).every(d => d === 'tb')).toBe(true);
    expect(rb.backend).toMatch(/2 threads/);
    expectClose(b.fieldData(0), a.fieldData(0), 0, 'two threads vs one');
    expect(rb.warnings).toEqual([]);
    expect(ra.warnings).toEqual([]);
  });
  it('a blow-up in the second band is found at the same step and pixel', () => {
    const s = schemeOf(`grid 2d\nboundary reflect\nstep dt = 1\nsteps 10\nfield u = image\nu' = if y > 40 then u * 1e9 else u\n`);
    const image = randomImage(24, 48, 3);
    const ra = createRun(s, { image, backend: one }).runSync();
    const rb = createRun(s, { image, backend: two }).runSync();
    expect(rb.status).toBe('blow-up');
    expect(rb.warnings).toEqual(ra.warnings);
  });

  it('a failure in the helper\'s share of a call is reported instead of waited for, and the next run works', () => {
    const s = schemeOf(example('heat-2d'));
    const image = randomImage(40, 64, 4);
    const run = createRun(s, { image, steps: 40, backend: two });
    // Point the helper's band buffers outside the memory: its first chunk traps.
    const compiled = two.compile(s, { dtype: 'float32' }) as unknown as { arenaOf(ctx: unknown): { scratch: number[] } };
    const arena = compiled.arenaOf((run as unknown as { ctx: unknown }).ctx);
    arena.scratch = [arena.scratch[0], 0x7ff00000];
    expect(() => run.runSync()).toThrow(/helper thread failed/);
    const again = createRun(s, { image, steps: 40, backend: two }).runSync();
    const ref = createRun(s, { image, steps: 40, backend: one }).runSync();
    expect(again.stepsDone).toBe(40);
    expect(again.frames).toEqual(ref.frames);
  });

  it('two runs in turn on the helper thread (it reloads the other module and memory)', () => {
    const s1 = schemeOf(example('heat-2d')), s2 = schemeOf(example('upwind-transport'));
    const img = randomImage(33, 20, 5);
    const r1 = createRun(s1, { image: img, backend: two }), r2 = createRun(s2, { image: img, backend: two });
    const q1 = createRun(s1, { image: img, backend: one }), q2 = createRun(s2, { image: img, backend: one });
    for (let k = 0; k < 10; k++) {
      r1.step();
      r2.step();
      q1.step();
      q2.step();
    }
    expectClose(r1.fieldData(0), q1.fieldData(0), 0, 'heat');
    expectClose(r2.fieldData(0), q2.fieldData(0), 0, 'transport');
  });
});
