// Monitors: blow-up, growth and new-extremum warnings for a step far past the stable limit, none for a stable one.
// Source: the 5-point explicit heat scheme is stable for dt/h² ≤ 1/4 (von Neumann; common practice, e.g.
// J. Weickert, Anisotropic Diffusion in Image Processing, Teubner 1998, ch. 3); at dt = 1 the checkerboard
// mode is multiplied by 1 - 8·dt = -7 each step, so Float32 overflows within ~50 steps.
import { describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { randomImage, schemeOf } from '../../unit/engine/util';

const HEAT = `grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 200\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`;

describe('monitors', () => {
  it('fire for dt = 1 (4× the stable step) with step, pixel and source range; blow-up stops the run', () => {
    const scheme = schemeOf(HEAT);
    const run = createRun(scheme, { image: randomImage(24, 20, 3), dt: 1, monitors: { extremumCheck: true } });
    const r = run.runSync();
    const kinds = r.warnings.map(w => w.kind);
    expect(kinds, 'warnings in the order they happened').toEqual(['new-extremum', 'growth', 'blow-up']);
    const [ex, growth, blow] = r.warnings;
    expect(ex.step, 'the first unstable step already leaves [min, max]').toBe(1);
    expect(growth.step > 1 && growth.step < blow.step, `growth at ${growth.step}, blow-up at ${blow.step}`).toBe(true);
    expect(r.status).toBe('blow-up');
    expect(r.stepsDone, 'the run stops at the blow-up step').toBe(blow.step);
    expect(r.stepsDone < 200).toBe(true);
    // The reported pixel really is non-finite, and the range is the update's declaration.
    const u = run.fieldData(0);
    expect(Number.isFinite(u[blow.y * 24 + blow.x]), `u at (${blow.x}, ${blow.y})`).toBe(false);
    for (const w of r.warnings) {
      expect(w.field).toBe('u');
      expect(w.range, `${w.kind} range`).toEqual(scheme.updates[0].range);
      expect(w.message.length > 10).toBe(true);
    }
    expect(blow.range.start.line, "the u' line").toBe(6);
    // Growth pixel holds the largest |u| at that step; it must be within the image.
    expect(growth.x >= 0 && growth.x < 24 && growth.y >= 0 && growth.y < 20).toBe(true);
  });

  it('stay silent for the stable dt = 0.2, also with the extremum check on (Float32 and Float64)', () => {
    for (const dtype of ['float32', 'float64'] as const) {
      const r = createRun(schemeOf(HEAT), { image: randomImage(24, 20, 3), dtype, monitors: { extremumCheck: true } }).runSync();
      expect(r.warnings, dtype).toEqual([]);
      expect(r.status).toBe('done');
    }
  });

  it('growth bound scales with the initial max |field| but at least 1 (fields starting at 0 do not trip it)', () => {
    // u grows linearly by 1 per step from 0: the bound 1e3·max(1, 0) = 1000 is passed at step 1001.
    const s = schemeOf(`grid 2d\nstep dt = 1\nsteps 1005\nfield u = 0\nu' = u + 1\n`);
    const r = createRun(s, { width: 2, height: 2, dtype: 'float64' }).runSync();
    expect(r.warnings.map(w => [w.kind, w.step])).toEqual([['growth', 1001]]);
  });
});
