// Unit tests for one tuning evaluation (src/tune/evaluate.ts): the metric curve agrees with separate engine runs
// measured by the metrics module, the best step is the curve's maximum, blow-ups leave NaN, 1d uses the middle row.
import { describe, expect, it } from 'vitest';
import { psnr, ssim } from '../../../src/analysis/metrics';
import { createRun, middleRow } from '../../../src/engine';
import { makeScene } from '../../../src/images/scenes';
import { parseAndCheck } from '../../../src/notation';
import { argBest, bestStepTracker, evaluateSetting } from '../../../src/tune/evaluate';

const PM = parseAndCheck(`grid 2d
boundary reflect
param K = 0.06 in [0.005, 0.5]
param sigma = 1 in [0, 3]
step dt = 0.2 in [0.02, 0.3]
steps 12
field u = image
diffusivity g(s) = 1 / (1 + (s / K)^2)
let w = blur(u, sigma)
u' = u + dt * sum n in N4: g(w[n] - w) * (u[n] - u)
`).scheme!;
const scene = makeScene('card', { width: 48, height: 40, noise: 0.1, seed: 3 });
const ref64 = { width: 48, height: 40, data: Float64Array.from(scene.clean.data) };

/** The field after `steps` steps from a separate run (the engine's own loop, not ours). */
function after(steps: number, params: Record<string, number>, dt?: number): Float32Array {
  const run = createRun(PM, { image: scene.noisy, params, dt, steps });
  run.runSync();
  return run.fieldData(0) as Float32Array;
}

describe('evaluateSetting', () => {
  it('records PSNR at every step equal to separate runs of that many steps (tolerance 1e-12 dB: same arithmetic)', () => {
    const c = evaluateSetting(PM, { image: scene.noisy, reference: scene.clean, steps: 12, metric: 'psnr' }, { K: 0.05, sigma: 0.5 });
    expect(c.values.length).toBe(13);
    for (const k of [0, 1, 5, 12]) {
      const want = psnr(ref64, { width: 48, height: 40, data: after(k, { K: 0.05, sigma: 0.5 }) });
      expect(Math.abs(c.values[k] - want), `step ${k}: ${c.values[k]} vs ${want}`).toBeLessThan(1e-12);
    }
    expect(c.values[0]).toBe(psnr(ref64, { width: 48, height: 40, data: scene.noisy.data }));
    const b = argBest(c.values);
    expect([c.bestStep, c.best]).toEqual([b.step, b.value]);
    expect(c.status).toBe('done');
  });

  it('records SSIM when asked, and dt is a setting like any parameter', () => {
    const c = evaluateSetting(PM, { image: scene.noisy, reference: scene.clean, steps: 4, metric: 'ssim' }, { dt: 0.1 });
    const want = ssim(ref64, { width: 48, height: 40, data: after(4, {}, 0.1) });
    expect(Math.abs(c.values[4] - want), `${c.values[4]} vs ${want}`).toBeLessThan(1e-12);
  });

  it('leaves NaN after a blow-up and picks the best step among the steps before it', () => {
    // Linear heat at dt = 1, four times its limit 1/4: the top mode grows by |1 − 8| = 7 per step and overflows.
    const heat = parseAndCheck("grid 2d\nstep dt = 1\nsteps 1\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n").scheme!;
    const c = evaluateSetting(heat, { image: scene.noisy, reference: scene.clean, steps: 400, metric: 'psnr' }, {});
    expect(c.status).toBe('blow-up');
    expect(Number.isNaN(c.values[400])).toBe(true);
    expect(c.bestStep).toBeGreaterThanOrEqual(0);
    expect(Number.isFinite(c.best)).toBe(true);
  });

  it('argBest takes the earliest maximum and skips NaN', () => {
    expect(argBest([1, 3, Number.NaN, 3, 2])).toEqual({ step: 1, value: 3 });
    expect(argBest([Number.NaN])).toEqual({ step: -1, value: Number.NaN });
  });

  it('measures a 1d scheme on the middle row of the picture, as the engine runs it', () => {
    const heat1 = parseAndCheck('grid 1d\nstep dt = 0.4\nsteps 5\nfield u = image\nu\' = u + dt * (u[-1] + u[1] - 2 * u)\n').scheme!;
    const c = evaluateSetting(heat1, { image: scene.noisy, reference: scene.clean, steps: 5, metric: 'psnr' }, {});
    const row = middleRow(scene.clean);
    const noisyRow = middleRow(scene.noisy);
    const want = psnr({ width: 48, height: 1, data: Float64Array.from(row.data) }, { width: 48, height: 1, data: Float64Array.from(noisyRow.data) });
    expect(Math.abs(c.values[0] - want)).toBeLessThan(1e-12);
  });
});

describe('bestStepTracker (fluxel run --stats best)', () => {
  it('finds the same best step as the full curve, for PSNR and for SSIM', () => {
    for (const metric of ['psnr', 'ssim'] as const) {
      const curve = evaluateSetting(PM, { image: scene.noisy, reference: scene.clean, steps: 30, metric }, { K: 0.03 });
      const run = createRun(PM, { image: scene.noisy, params: { K: 0.03 }, steps: 30 });
      const t = bestStepTracker(scene.clean, metric, 0, run);
      run.runSync({ onProgress: (s) => t.measure(s) });
      const b = t.best()!;
      expect(b.step, metric).toBe(curve.bestStep);
      expect(b.metric).toBe(metric);
      expect(metric === 'psnr' ? b.psnr : b.ssim).toBe(curve.best);
    }
  });
});
