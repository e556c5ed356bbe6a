// Unit tests for src/images/scenes.ts and random.ts: determinism, value ranges, noise statistics, names.
// Statistical tolerances are derived from standard errors stated beside each check.

import { describe, expect, it } from 'vitest';
import { listScenes, makeScene } from '../../../src/images/scenes';
import { gaussian, mulberry32 } from '../../../src/images/random';
import { ImageError } from '../../../src/images/types';

const NAMES = ['survey', 'cells', 'card'] as const;

describe('scenes', () => {
  it('same seed gives bitwise the same data; another seed changes the noise, not the clean picture', () => {
    for (const name of NAMES) {
      const a = makeScene(name, { seed: 7, saltPepper: 0.01 });
      const b = makeScene(name, { seed: 7, saltPepper: 0.01 });
      const c = makeScene(name, { seed: 8, saltPepper: 0.01 });
      expect(Buffer.from(a.noisy.data.buffer).equals(Buffer.from(b.noisy.data.buffer)), `${name} same seed`).toBe(true);
      expect(Buffer.from(a.clean.data.buffer).equals(Buffer.from(c.clean.data.buffer)), `${name} clean independent of seed`).toBe(true);
      let differ = 0;
      for (let i = 0; i < a.noisy.data.length; i++) if (a.noisy.data[i] !== c.noisy.data[i]) differ++;
      expect(differ > 0.9 * a.noisy.data.length, `${name}: only ${differ} pixels differ between seeds 7 and 8`).toBe(true);
    }
  });

  it('clean values lie in [0,1] and are finite for many sizes, including 1x1, 4x1 and 1xN', () => {
    for (const name of NAMES) {
      for (const [width, height] of [[256, 256], [1, 1], [4, 1], [1, 37], [37, 19], [300, 120]]) {
        const s = makeScene(name, { width, height, noise: 0 });
        expect(s.clean.data.length).toBe(width * height);
        let lo = Infinity;
        let hi = -Infinity;
        for (const v of s.clean.data) {
          lo = Math.min(lo, v);
          hi = Math.max(hi, v);
        }
        expect(lo >= 0 && hi <= 1, `${name} ${width}x${height}: clean range [${lo}, ${hi}] leaves [0,1]`).toBe(true);
        expect(Array.from(s.noisy.data)).toEqual(Array.from(s.clean.data));
      }
    }
  });

  it('the scenes are not flat: each spans a good part of [0,1] (common practice for demo data)', () => {
    for (const name of NAMES) {
      const d = makeScene(name, { noise: 0 }).clean.data;
      let lo = Infinity;
      let hi = -Infinity;
      for (const v of d) {
        lo = Math.min(lo, v);
        hi = Math.max(hi, v);
      }
      expect(hi - lo > 0.5, `${name}: contrast ${hi - lo}`).toBe(true);
    }
  });

  it('Gaussian noise: mean ~ 0 and sample std ~ sigma within 5 standard errors', () => {
    // For n independent N(0, s^2) draws, the sample mean has standard error s/sqrt(n) and the sample standard
    // deviation about s/sqrt(2(n-1)) (large-n normal approximation; e.g. Kendall & Stuart, Advanced Theory
    // of Statistics vol. 1, standard errors of moments; from memory).
    for (const name of NAMES) {
      for (const sigma of [0.02, 0.1]) {
        const s = makeScene(name, { noise: sigma, seed: 3 });
        const n = s.clean.data.length;
        let sum = 0;
        let sum2 = 0;
        for (let i = 0; i < n; i++) {
          const r = s.noisy.data[i] - s.clean.data[i];
          sum += r;
          sum2 += r * r;
        }
        const mean = sum / n;
        const std = Math.sqrt((sum2 - n * mean * mean) / (n - 1));
        const seMean = sigma / Math.sqrt(n);
        const seStd = sigma / Math.sqrt(2 * (n - 1));
        // float32 storage adds rounding of about 3e-8 per value, far below these tolerances.
        expect(Math.abs(mean) < 5 * seMean, `${name} sigma ${sigma}: mean ${mean}, tolerance ${5 * seMean}`).toBe(true);
        expect(Math.abs(std - sigma) < 5 * seStd, `${name} sigma ${sigma}: std ${std}, tolerance ${5 * seStd}`).toBe(true);
      }
    }
  });

  it('Gaussian noise is not clamped: with sigma 0.2 some noisy values leave [0,1]', () => {
    const s = makeScene('card', { noise: 0.2 });
    expect(s.clamped).toBe(false);
    let outside = 0;
    for (const v of s.noisy.data) if (v < 0 || v > 1) outside++;
    expect(outside > 0, 'no value left [0,1]').toBe(true);
  });

  it('salt-and-pepper: fraction of 0/1 pixels ~ p within 5 binomial standard errors, about half each', () => {
    // With Gaussian noise on top, exact 0 or 1 values come only from salt-and-pepper.
    // Binomial(n, p): standard error sqrt(n p (1-p)) (common practice).
    const p = 0.1;
    const s = makeScene('survey', { noise: 0.05, saltPepper: p, seed: 11 });
    const n = s.noisy.data.length;
    let zeros = 0;
    let ones = 0;
    for (const v of s.noisy.data) {
      if (v === 0) zeros++;
      else if (v === 1) ones++;
    }
    const se = Math.sqrt(n * p * (1 - p));
    expect(Math.abs(zeros + ones - n * p) < 5 * se, `hits ${zeros + ones}, want ${n * p} +- ${5 * se}`).toBe(true);
    const half = Math.sqrt((zeros + ones) * 0.25);
    expect(Math.abs(zeros - (zeros + ones) / 2) < 5 * half, `zeros ${zeros}, ones ${ones}`).toBe(true);
  });

  it('aliases resolve; defaults are 256x256, seed 1; unknown names and bad options are refused', () => {
    expect(makeScene('survey-tile').name).toBe('survey');
    expect(makeScene('cell-slide').name).toBe('cells');
    const card = makeScene('test-card');
    expect([card.name, card.clean.width, card.clean.height, card.options.seed]).toEqual(['card', 256, 256, 1]);
    expect(() => makeScene('moon')).toThrow(ImageError);
    expect(() => makeScene('card', { width: 0 })).toThrow(ImageError);
    expect(() => makeScene('card', { noise: -1 })).toThrow(ImageError);
    expect(() => makeScene('card', { saltPepper: 2 })).toThrow(ImageError);
    const list = listScenes();
    expect(list.map((s) => s.name)).toEqual(['survey', 'cells', 'card']);
    expect(list.every((s) => s.description.length > 20 && s.aliases.length === 1)).toBe(true);
  });

  it('test card features sit where documented: period-2 stripes alternate, the one-pixel line is one pixel wide', () => {
    const d = makeScene('card', { noise: 0 }).clean;
    const row = Math.floor(0.47 * d.height);
    const at = (x: number, y: number) => d.data[y * d.width + x];
    expect([at(10, row), at(11, row), at(12, row)]).toEqual([0.8, 0.2, 0.8].map(Math.fround));
    const lineX = Math.floor(0.72 * d.width);
    const y = Math.floor(0.7 * d.height);
    expect([at(lineX - 1, y), at(lineX, y), at(lineX + 1, y)]).toEqual([0.5, 0.9, 0.5].map(Math.fround));
  });
});

describe('random', () => {
  it('mulberry32 outputs are 32-bit unsigned integers with a uniform-looking mean', () => {
    const next = mulberry32(42);
    const n = 100000;
    let sum = 0;
    let bad = 0;
    for (let i = 0; i < n; i++) {
      const k = next();
      if (!(Number.isInteger(k) && k >= 0 && k < 2 ** 32)) bad++;
      sum += k / 2 ** 32;
    }
    expect(bad, 'outputs that are not 32-bit unsigned integers').toBe(0);
    // Uniform(0,1) mean 1/2, standard error sqrt(1/12 / n) (common practice).
    const se = Math.sqrt(1 / 12 / n);
    expect(Math.abs(sum / n - 0.5) < 5 * se, `mean ${sum / n}`).toBe(true);
  });

  it('Box-Muller gives standard normal moments: variance 1 and kurtosis 3 within 5 standard errors', () => {
    const z = gaussian(mulberry32(5));
    const n = 200000;
    let m2 = 0;
    let m4 = 0;
    for (let i = 0; i < n; i++) {
      const x = z();
      m2 += x * x;
      m4 += x ** 4;
    }
    m2 /= n;
    m4 /= n;
    // For N(0,1): E x^2 = 1 with Var = 2; E x^4 = 3 with Var = E x^8 - 9 = 105 - 9 = 96 (normal moments, handbook values).
    expect(Math.abs(m2 - 1) < 5 * Math.sqrt(2 / n), `second moment ${m2}`).toBe(true);
    expect(Math.abs(m4 - 3) < 5 * Math.sqrt(96 / n), `fourth moment ${m4}`).toBe(true);
  });
});
