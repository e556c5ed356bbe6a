// Runner semantics: lets on the extended grid, primed reads, constant fields, coordinates, time, 1d rows, tiny images.
import { describe, expect, it } from 'vitest';
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
  it('a 1d scheme treats every row on its own', () => {
    const s = schemeOf(`grid 1d\nboundary reflect\nstep dt = 0.25\nsteps 7\nfield u = image\nu' = u + dt * sum n in N2: u[n] - u\n`);
    const a = randomImage(9, 1, 5), b = randomImage(9, 1, 6);
    const both = { width: 9, height: 2, data: Float64Array.from([...a.data, ...b.data]) };
    const ra = createRun(s, { image: a, dtype: 'float64' }); ra.runSync();
    const rb = createRun(s, { image: b, dtype: 'float64' }); rb.runSync();
    const r2 = createRun(s, { image: both, dtype: 'float64' }); r2.runSync();
    expectClose(r2.fieldData(0), [...ra.fieldData(0), ...rb.fieldData(0)], 0, 'two rows vs two separate runs');
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
    const run = createRun(s, { image: randomImage(8, 8, 1) });
    let seen = 0;
    const r = run.runSync({ onProgress: step => { seen = step; }, shouldCancel: () => seen >= 5 });
    expect([r.status, r.stepsDone]).toEqual(['cancelled', 5]);
  });
});
