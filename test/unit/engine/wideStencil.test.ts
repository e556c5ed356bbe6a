// Minimised cases of the runaway campaign (test/hardening/runaway.serial.test.ts): a blur width far larger than the
// picture. The engine made padded buffers of (w + 8σ)² values (σ = 1000 on 3×3: five buffers of 64 million values,
// σ = 1e6: a RangeError from the typed-array constructor); the analysis visited (8σ + 1)² taps per evaluated value
// (σ = 40: seconds per check, σ = 1000: hours). Both now stop with a message that names the blur width.

import { describe, expect, it } from 'vitest';
import { analyseStability } from '../../../src/analysis/stability';
import { createRun } from '../../../src/engine/run';
import { EngineError } from '../../../src/engine/plan';
import { parseAndCheck } from '../../../src/notation';
import type { CheckedScheme } from '../../../src/notation/scheme';

const blurScheme = (sigma: string): CheckedScheme =>
  parseAndCheck(`grid 2d\nboundary reflect\nstep dt = 0.1\nsteps 2\nfield u = image\nlet w = blur(u, ${sigma})\nu' = u + 0.1 * (w - u)`).scheme as CheckedScheme;
const image = (w: number, h: number) => ({ width: w, height: h, data: Float32Array.from({ length: w * h }, (_, k) => (k % 5) / 5) });

describe('blur widths far beyond the picture', () => {
  it('the engine refuses a border that would dwarf the grid, naming the blur width', () => {
    for (const sigma of ['1000', '1e6', '1e300']) {
      let err: unknown = null;
      try { createRun(blurScheme(sigma), { image: image(3, 3), monitors: { extremumCheck: false } }); } catch (e) { err = e; }
      expect(err, `sigma ${sigma}`).toBeInstanceOf(EngineError);
      expect(String((err as Error).message)).toMatch(/the blur width needs a border of \d+(e\+\d+)? pixels around the 3×3 grid/);
    }
    // A blur wider than a tiny picture but within the border limit still runs (σ = 40 on 3×3: a border of 160).
    const res = createRun(blurScheme('40'), { image: image(3, 3), monitors: { extremumCheck: false } }).runSync();
    expect(res.status).toBe('done');
  });

  it('the analysis gives up on a blur kernel beyond MAX_BLUR_TAPS with that reason instead of working for hours', () => {
    const report = analyseStability(blurScheme('1000'));
    expect(report.method).toBe('none');
    expect(report.reason).toMatch(/blur\(u, 1000\) is too wide to analyse: its kernel has 64016001 taps/);
    // σ = 3 (the examples' largest) is analysed as before.
    expect(analyseStability(blurScheme('3')).method).not.toBe('none');
  });
});
