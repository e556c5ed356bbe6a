// Runner semantics: lets on the extended grid, primed reads, constant fields, coordinates, time, 1d middle row, tiny images.
import { describe, expect, it } from 'vitest';
import { JsBackend } from '../../../src/engine/jsBackend';
import { createRun } from '../../../src/engine/run';
import { expectClose, randomImage, schemeOf } from './util';

describe('let fields on the extended grid', () => {
  it('take halo values from the extended inputs, not from a boundary rule on the let (numerics.md)', () => {
    // d = u[1,0] - u. With reflect, the extended u has u[-1] = u[0], so d at x = -1 is u[0] - u[-1] = 0,
    // whereas reflecting d itself would give d[0] = u[1] - u[0]. The update copies d[-1,0] into u.
    const s = schemeOf(`grid 2d\nboundary reflect\nstep dt = 1\nsteps 1\nfield u = image\nlet d = u[1,0] - u\nu' = d[-1,0]\n`);
    const img = { width: 4, height: 2, data: Float64Array.from([1, 2, 4, 8, 16, 32, 64, 128]) };
    const run = createRun(s, { image: img, dtype: 'float64' });
    run.runSync();
    // Row 0: u = 1 2 4 8 | ghost 8 → d = 1 2 4 0 and d[-1] = 0. So u' = d[x-1] = 0 1 2 4.
    expect(Array.from(run.fieldData(0)), 'u after one step').toEqual([0, 1, 2, 4, 0, 16, 32, 64]);
  });
});

describe('updates', () => {
  it('a primed read sees the new value; a field without update stays constant; x, y are pixel coordinates', () => {
    const s = schemeOf(`grid 2d\nstep dt = 0.5\nsteps 3\nfield c = x + 10 * y\nfield u = 0\nfield v = 0\nu' = u + c\nv' = u' * 2\n`);
    const run = createRun(s, { width: 3, height: 2, dtype: 'float64' });
    const r = run.runSync();
    expect(r.status).toBe('done');
    expect(Array.from(run.fieldData(0)), 'c is constant').toEqual([0, 1, 2, 10, 11, 12]);
    expect(Array.from(run.fieldData(1)), 'u = 3c').toEqual([0, 3, 6, 30, 33, 36]);
    expect(Array.from(run.fieldData(2)), "v = 2u' = 6c").toEqual([0, 6, 12, 60, 66, 72]);
  });

  it('t is the time at the current level (step·dt)', () => {
    const s = schemeOf(`grid 2d\nstep dt = 0.25\nsteps 4\nfield u = 0\nu' = u + t\n`);
    const run = createRun(s, { width: 2, height: 2, dtype: 'float64' });
    run.runSync();
    // 0 + 0.25 + 0.5 + 0.75 = 1.5 (exact in binary).
    expect(run.fieldData(0)[0]).toBe(1.5);
  });

  it('`until t = T` keeps T when dt is overridden; explicit steps win', () => {
    const s = schemeOf(`grid 2d\nstep dt = 0.2\nuntil t = 2\nfield u = 0\nu' = u + dt\n`);
    expect(createRun(s, { width: 2, height: 2 }).steps).toBe(10);
    expect(createRun(s, { width: 2, height: 2, dt: 0.1 }).steps).toBe(20);
    expect(createRun(s, { width: 2, height: 2, dt: 0.1, steps: 3 }).steps).toBe(3);
  });

  it('steps 0 returns the input unchanged', () => {
    const s = schemeOf(`grid 2d\nstep dt = 0.2\nsteps 5\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`);
    const img = randomImage(5, 4, 3);
    const run = createRun(s, { image: img, steps: 0, dtype: 'float64' });
    const r = run.runSync();
    expect(r.stepsDone).toBe(0);
    expectClose(run.fieldData(0), img.data, 0, 'steps 0');
    expect(r.frames.length, 'one frame at step 0').toBe(1);
  });
});

describe('grid shapes', () => {
  it('a 1d scheme on a 2d image runs on its middle row (contracts: issue 2), as the analysis does', () => {
    // Rows 0..4 differ; the middle row is row ⌊5/2⌋ = 2 (src/analysis/stabilityState.ts uses the same row).
    const s = schemeOf(`grid 1d\nboundary reflect\nstep dt = 0.25\nsteps 7\nfield u = image\nu' = u + dt * sum n in N2: u[n] - u\n`);
    const rows = [0, 1, 2, 3, 4].map(k => randomImage(9, 1, 5 + k));
    const tall = { width: 9, height: 5, data: Float64Array.from(rows.flatMap(r => Array.from(r.data))) };
    const one = createRun(s, { image: rows[2], dtype: 'float64' }); one.runSync();
    const run = createRun(s, { image: tall, dtype: 'float64' }); run.runSync();
    expect([run.geometry.width, run.geometry.height], 'the output is one row').toEqual([9, 1]);
    expectClose(run.fieldData(0), one.fieldData(0), 0, 'tall image vs its middle row alone');
    // Hand check of one step on the middle row with reflect ghosts: u' = u + dt (u[x-1] - 2u + u[x+1]).
    const m = rows[2].data, first = createRun(s, { image: tall, dtype: 'float64', steps: 1 });
    first.runSync();
    const want = Array.from(m, (v, x) => v + 0.25 * (m[Math.max(0, x - 1)] - 2 * v + m[Math.min(8, x + 1)]));
    expectClose(first.fieldData(0), want, 1e-15, 'one step by hand');
    // An even height takes the lower of the two middle rows, ⌊4/2⌋ = 2.
    const even = { width: 9, height: 4, data: tall.data.slice(0, 36) };
    const e = createRun(s, { image: even, dtype: 'float64' }); e.runSync();
    expectClose(e.fieldData(0), one.fieldData(0), 0, 'height 4 uses row 2');
  });

  it('a 2d scheme runs on 1×1, 4×1 and 1×N images (contracts §2)', () => {
    const s = schemeOf(`grid 2d\nboundary reflect\nparam sigma = 2 in [0, 3]\nstep dt = 0.2\nsteps 3\nfield u = image\nlet w = blur(u, sigma)\nu' = u + dt * sum n in N8: w[n] - w\n`);
    for (const [w, h] of [[1, 1], [4, 1], [1, 6]]) {
      const img = randomImage(w, h, w * 10 + h);
      const run = createRun(s, { image: img, dtype: 'float64' });
      const r = run.runSync();
      expect(r.status, `${w}×${h}`).toBe('done');
      // With reflect every flux sums to zero, so the mean is kept.
      const mean = (arr: ArrayLike<number>) => Array.from(arr).reduce((p, q) => p + q, 0) / arr.length;
      expect(Math.abs(mean(run.fieldData(0)) - mean(img.data)) < 1e-12, `${w}×${h}: mean kept`).toBe(true);
    }
  });
});

describe('cancellation', () => {
  it('shouldCancel is checked before every step: a run cancelled after step 5 has done exactly 5 steps', () => {
    const s = schemeOf(`grid 2d\nstep dt = 0.2\nsteps 50\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`);
    // Single steps: the JavaScript backend, or any backend when the caller reads the fields every step.
    for (const opts of [{ backend: new JsBackend() }, {}]) {
      const run = createRun(s, { image: randomImage(8, 8, 1), ...opts });
      let seen = 0;
      const r = run.runSync({ everyStep: !('backend' in opts), onProgress: step => { seen = step; }, shouldCancel: () => seen >= 5 });
      expect([r.status, r.stepsDone]).toEqual(['cancelled', 5]);
    }
  });
  it('with several steps per backend call, shouldCancel is asked after each call: the run ends at that call\'s last step', () => {
    const s = schemeOf(`grid 2d\nstep dt = 0.2\nsteps 500\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`);
    const run = createRun(s, { image: randomImage(8, 8, 1) });
    let seen = 0, asked = 0;
    const r = run.runSync({ onProgress: step => { seen = step; }, shouldCancel: () => (asked++, seen >= 5) });
    expect(r.status).toBe('cancelled');
    expect(r.stepsDone).toBe(seen);
    expect(r.stepsDone).toBeGreaterThanOrEqual(5);
    expect(r.stepsDone).toBeLessThan(500);
    // Asked before the first call and after each call up to the one that reported step 5.
    expect(asked).toBeLessThanOrEqual(5 + 1);
  });
});
