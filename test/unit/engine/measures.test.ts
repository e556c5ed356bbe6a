// Per-step measures in the frame statistics (drift, total variation, Dirichlet energy, change since the previous
// step) on both backends, checked against the metrics module's own functions on the recorded fields and against
// a hand-computed example; and the `stopChange` rule (stop reason, safety cap warning).
import { describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { backendByName } from '../../../src/engine/wasm/select';
import { dirichletEnergy, totalVariation } from '../../../src/analysis/metrics';
import { randomImage, schemeOf } from './util';

const heat = `grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.2\nsteps 6\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`;

describe('per-step measures', () => {
  for (const name of ['js', 'wasm'] as const) {
    it(`${name}: every recorded frame carries drift, TV, energy and the change, equal to direct computation`, () => {
      const s = schemeOf(heat);
      const img = randomImage(12, 9, 3);
      const run = createRun(s, { image: img, dtype: 'float64', every: 1, backend: backendByName(name) });
      const fields: Float64Array[] = [];
      run.runSync({ onFrame: (f) => fields.push(Float64Array.from(f.fields.u.data)) });
      expect(run.frames.length).toBe(7);
      const mean0 = img.data.reduce((a, b) => a + b, 0) / img.data.length;
      run.frames.forEach((fr, k) => {
        const st = fr.fields.u;
        const im = { width: 12, height: 9, data: fields[k] };
        expect(st.tv).toBeCloseTo(totalVariation(im), 12);
        expect(st.energy).toBeCloseTo(dirichletEnergy(im), 12);
        // Reflecting boundaries conserve the mean (the weights are symmetric): drift stays at rounding level.
        expect(Math.abs(st.drift as number)).toBeLessThan(1e-12);
        expect(st.mean - mean0).toBeCloseTo(st.drift as number, 14);
        if (k === 0) expect(st.change).toBeUndefined();
        else {
          let s2 = 0, mx = 0;
          for (let i = 0; i < fields[k].length; i++) { const d = fields[k][i] - fields[k - 1][i]; s2 += d * d; mx = Math.max(mx, Math.abs(d)); }
          expect(st.change?.rms).toBeCloseTo(Math.sqrt(s2 / fields[k].length), 14);
          expect(st.change?.max).toBeCloseTo(mx, 14);
        }
      });
      // Diffusion lowers the Dirichlet energy step by step (it is the gradient flow of that energy; common practice).
      for (let k = 1; k < run.frames.length; k++) expect(run.frames[k].fields.u.energy as number).toBeLessThan(run.frames[k - 1].fields.u.energy as number);
    });
  }

  it('worked example of numerics.md: TV 17.47213595499958 and energy 22.5 at step 0; drift follows a source', () => {
    // numerics.md "Metrics": A = [[0,1,3],[2,2,2],[5,4,0]] (computed by hand, common practice).
    const s = schemeOf(`grid 2d\nboundary reflect\nstep dt = 1\nsteps 1\nfield u = image\nu' = u + 0.5\n`);
    const run = createRun(s, { image: { width: 3, height: 3, data: Float64Array.from([0, 1, 3, 2, 2, 2, 5, 4, 0]) }, dtype: 'float64' });
    const r = run.runSync();
    expect(r.frames[0].fields.u.tv).toBeCloseTo(17.47213595499958, 12);
    expect(r.frames[0].fields.u.energy).toBe(22.5);
    expect(r.frames[1].fields.u.drift).toBeCloseTo(0.5, 14);
    expect(r.frames[1].fields.u.change).toEqual({ rms: 0.5, max: 0.5 });
    expect(r.stopReason).toBe('steps');
  });

  it('measures: false leaves only min, max and mean', () => {
    const run = createRun(schemeOf(heat), { image: randomImage(5, 5, 1), measures: false });
    const r = run.runSync();
    expect(Object.keys(r.frames[1].fields.u).sort()).toEqual(['max', 'mean', 'min']);
  });
});

describe('stopping on the change per step', () => {
  for (const name of ['js', 'wasm'] as const) {
    it(`${name}: stops at the first step whose RMS change is below the tolerance, and says so`, () => {
      const s = schemeOf(heat);
      const run = createRun(s, { image: randomImage(16, 16, 5), dtype: 'float64', stopChange: 1e-3, steps: 5000, every: 1, backend: backendByName(name) });
      const r = run.runSync();
      expect(r.stopReason).toBe('change');
      expect(r.stepsDone).toBeLessThan(5000);
      const f = r.frames;
      const last = f[f.length - 1].fields.u.change?.rms as number;
      const before = f[f.length - 2].fields.u.change?.rms as number;
      expect(last).toBeLessThan(1e-3);
      expect(before).toBeGreaterThanOrEqual(1e-3);
      expect(r.warnings).toEqual([]);
    });
  }

  it('reaching the cap is a no-convergence warning and stop reason `cap`', () => {
    const run = createRun(schemeOf(heat), { image: randomImage(16, 16, 5), stopChange: 1e-9, steps: 3 });
    const r = run.runSync();
    expect(r.stopReason).toBe('cap');
    expect(r.stepsDone).toBe(3);
    expect(r.warnings.map((w) => w.kind)).toEqual(['no-convergence']);
  });
});
