// `until change < tol`: parsed into the checked scheme (tolerance, step cap), used by the engine to stop, and
// refused by the exporters with a clear message.
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation';
import { STOP_CHANGE_CAP } from '../../../src/notation/scheme';
import { createRun } from '../../../src/engine/run';
import { exportScheme } from '../../../src/export';

const text = "grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.2\nuntil change < 1e-3\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n";

describe('until change < tol', () => {
  it('checks clean and gives the tolerance and the step cap', () => {
    const r = parseAndCheck(text);
    expect(r.diagnostics).toEqual([]);
    expect(r.scheme?.untilChange).toBe(1e-3);
    expect(r.scheme?.steps).toBe(STOP_CHANGE_CAP);
    expect(r.scheme?.untilTime).toBeNull();
  });

  it('the engine stops on it and reports why', () => {
    const s = parseAndCheck(text).scheme!;
    const img = { width: 16, height: 16, data: Float64Array.from({ length: 256 }, (_, k) => ((k * 7919) % 97) / 97) };
    const r = createRun(s, { image: img, dtype: 'float64' }).runSync();
    expect(r.stopReason).toBe('change');
    expect(r.stopChange).toBe(1e-3);
    expect(r.stepsDone).toBeGreaterThan(1);
    expect(r.stepsDone).toBeLessThan(STOP_CHANGE_CAP);
    expect(r.frames[r.frames.length - 1].fields.u.change!.rms).toBeLessThan(1e-3);
  });

  it('exports refuse it with a message that says what to do', () => {
    const s = parseAndCheck(text).scheme!;
    expect(() => exportScheme(s, "c", { fileName: "x.fluxel", sourceHash: "0", stability: null, dtype: "float32" })).toThrow(/until change < 0\.001.*replace it by `steps N`/);
  });
});
