// evaluateSettingWithGradient: the same curve as a plain evaluation, and the derivative of the best step's metric
// against central differences of plain evaluations (common practice; Float64, step 1e-6·|v|, tolerance 1e-5 relative;
// the best step does not move under such small changes, so the differences see one smooth function).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeScene } from '../../../src/images/scenes';
import { parseAndCheck } from '../../../src/notation';
import { evaluateSetting, evaluateSettingWithGradient, type MetricName } from '../../../src/tune/evaluate';

const scheme = parseAndCheck(readFileSync(join(__dirname, '../../../examples/edge-preserving.fluxel'), 'utf8')).scheme!;
const scene = makeScene('card', { width: 32, height: 30, noise: 0.1, seed: 9 });

describe('evaluateSettingWithGradient', () => {
  for (const metric of ['psnr', 'ssim'] as MetricName[]) {
    it(`${metric}: curve as plain, gradient at the best step as central differences`, () => {
      const task = { image: scene.noisy, reference: scene.clean, steps: 25, metric, dtype: 'float64' as const };
      const at = { K: 0.05, sigma: 0.7, dt: 0.15 };
      const c = evaluateSettingWithGradient(scheme, task, at, ['K', 'sigma', 'dt']);
      const plain = evaluateSetting(scheme, task, at);
      expect(c.bestStep).toBe(plain.bestStep);
      expect(c.bestStep).toBeGreaterThan(0);
      for (let s = 0; s < plain.values.length; s++) expect(Math.abs(c.values[s] - plain.values[s])).toBeLessThan(1e-10);
      (['K', 'sigma', 'dt'] as const).forEach((name, j) => {
        const h = 1e-6 * at[name];
        const up = evaluateSetting(scheme, task, { ...at, [name]: at[name] + h });
        const dn = evaluateSetting(scheme, task, { ...at, [name]: at[name] - h });
        expect([up.bestStep, dn.bestStep]).toEqual([c.bestStep, c.bestStep]);
        const fd = (up.best - dn.best) / (2 * h);
        const g = (c.gradient as Float64Array)[j];
        expect(Math.abs(g - fd), `d${metric}/d${name}: ${g} vs ${fd}`).toBeLessThanOrEqual(1e-5 * Math.abs(fd) + 1e-9);
      });
    });
  }
  it('reads every image field\'s own picture, as a plain evaluation does (a named mask input)', () => {
    const masked = parseAndCheck(readFileSync(join(__dirname, '../../../examples/masked-smoothing.fluxel'), 'utf8')).scheme!;
    // Keep the left half (mask 1), smooth the right half (mask 0).
    const mask = { width: 32, height: 30, data: Float32Array.from({ length: 32 * 30 }, (_, i) => (i % 32 < 16 ? 1 : 0)) };
    const task = { image: scene.noisy, fieldImages: { m: mask }, reference: scene.clean, steps: 12, metric: 'psnr' as const, dtype: 'float64' as const };
    const c = evaluateSettingWithGradient(masked, task, { dt: 0.2 }, ['dt']);
    const plain = evaluateSetting(masked, task, { dt: 0.2 });
    expect(c.bestStep).toBe(plain.bestStep);
    for (let s = 0; s < plain.values.length; s++) expect(Math.abs(c.values[s] - plain.values[s])).toBeLessThan(1e-10);
    // Without the mask the same scheme reads it from nowhere: the engine refuses rather than guessing.
    expect(() => evaluateSettingWithGradient(masked, { ...task, fieldImages: undefined }, { dt: 0.2 }, ['dt'])).toThrow(/no picture was given/);
  });
});
