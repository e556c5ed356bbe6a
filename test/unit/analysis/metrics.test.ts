// Unit tests of src/analysis/metrics.ts: worked examples with stated origins, error cases, and a
// direct (non-separable) evaluation of the SSIM formulas as a check of the separable implementation.
// Imports only the module under test.
import { describe, expect, it } from 'vitest';
import {
  anisotropicTotalVariation,
  compareImages,
  dirichletEnergy,
  formatMetric,
  gaussianTaps,
  MetricError,
  mse,
  psnr,
  ssim,
  ssimMap,
  stats,
  totalVariation,
  type MetricImage,
} from '../../../src/analysis/metrics';

function image(width: number, height: number, f: (x: number, y: number) => number): MetricImage {
  const data = new Float64Array(width * height);
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) data[y * width + x] = f(x, y);
  return { width, height, data };
}

function constant(width: number, height: number, c: number): MetricImage {
  return image(width, height, () => c);
}

// mulberry32 seeded generator (common practice), so the random images are the same on every run.
function rng(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

function close(actual: number, expected: number, tol: number, what: string): void {
  const err = Math.abs(actual - expected);
  expect(err, `${what}: got ${actual}, expected ${expected}, |error| ${err} > tol ${tol}`).toBeLessThanOrEqual(tol);
}

// Worked by hand in numerics.md "Metrics" (common practice): forward differences, zero across the last row/column.
// dx = [[1,2,0],[0,0,0],[-1,-4,0]], dy = [[2,1,-1],[3,2,-2],[0,0,0]];
// TV = 2√5 + 13, anisotropic TV = 19, energy = ½·45 = 22.5.
const A = { width: 3, height: 3, data: Float64Array.from([0, 1, 3, 2, 2, 2, 5, 4, 0]) };

describe('total variation and Dirichlet energy', () => {
  it('reproduce the numerics.md worked example', () => {
    close(totalVariation(A), 17.47213595499958, 1e-13, 'isotropic TV of A');
    close(totalVariation(A), 2 * Math.sqrt(5) + 13, 1e-13, 'isotropic TV of A = 2√5 + 13');
    close(anisotropicTotalVariation(A), 19, 1e-13, 'anisotropic TV of A');
    close(totalVariation(A, 'anisotropic'), 19, 1e-13, "totalVariation(A, 'anisotropic')");
    close(dirichletEnergy(A), 22.5, 1e-13, 'Dirichlet energy of A');
  });

  it('accept Float32 data and give the Float64 sums of the same values', () => {
    // The worked example is exact in Float32, so the answers must not change.
    const a32 = { width: 3, height: 3, data: Float32Array.from(A.data) };
    close(totalVariation(a32), 17.47213595499958, 1e-13, 'isotropic TV of A as Float32');
    close(dirichletEnergy(a32), 22.5, 1e-13, 'energy of A as Float32');
  });

  it('treat 1-D strips with the same rule (a ramp 0..n−1 has TV n−1, energy (n−1)/2)', () => {
    // Common practice: unit steps give |dx| = 1 at every pixel but the last.
    const row = image(7, 1, (x) => x);
    const col = image(1, 7, (_x, y) => y);
    for (const [name, img] of [['row', row], ['column', col]] as const) {
      close(totalVariation(img), 6, 1e-14, `TV of a 7-pixel ${name} ramp`);
      close(anisotropicTotalVariation(img), 6, 1e-14, `anisotropic TV of a 7-pixel ${name} ramp`);
      close(dirichletEnergy(img), 3, 1e-14, `energy of a 7-pixel ${name} ramp`);
    }
    close(totalVariation(constant(1, 1, 0.3)), 0, 0, 'TV of a single pixel');
  });
});

describe('stats', () => {
  it('gives min, max and mean of the worked example', () => {
    const s = stats(A);
    expect(s.min, 'min of A').toBe(0);
    expect(s.max, 'max of A').toBe(5);
    close(s.mean, 19 / 9, 1e-15, 'mean of A (sum 19 over 9 pixels, by hand)');
  });

  it('reports NaN rather than hiding it', () => {
    const s = stats({ width: 2, height: 1, data: Float64Array.from([0.5, Number.NaN]) });
    expect(Number.isNaN(s.min) && Number.isNaN(s.max) && Number.isNaN(s.mean), 'NaN in, NaN out').toBe(true);
  });
});

describe('MSE and PSNR', () => {
  // Common practice: a constant error e gives MSE = e², PSNR = 10·log10(1/e²) = −20·log10(e) for L = 1.
  it.each([0.1, 0.01, 0.25, 1 / 255])('constant error e = %f', (e) => {
    const ref = image(13, 9, (x, y) => (x * 9 + y) / 200);
    const img = image(13, 9, (x, y) => (x * 9 + y) / 200 + e);
    close(mse(ref, img), e * e, 1e-12 * e * e + 1e-17, `MSE for constant error ${e}`);
    close(psnr(ref, img), -20 * Math.log10(e), 1e-9, `PSNR for constant error ${e}`);
  });

  it('uses the peak: 8-bit data with error 1 give 20·log10(255) dB (common practice)', () => {
    const ref = image(4, 4, (x, y) => 16 * x + y);
    const img = image(4, 4, (x, y) => 16 * x + y + ((x + y) % 2 === 0 ? 1 : -1));
    close(psnr(ref, img, 255), 20 * Math.log10(255), 1e-10, 'PSNR with peak 255 and |error| 1');
  });

  it('gives +Infinity for identical images, printed as "inf"', () => {
    const ref = image(5, 3, (x, y) => x - y);
    expect(mse(ref, ref), 'MSE of identical images').toBe(0);
    expect(psnr(ref, ref), 'PSNR of identical images').toBe(Number.POSITIVE_INFINITY);
    expect(formatMetric(psnr(ref, ref)), 'printed PSNR of identical images').toBe('inf');
  });

  it('rejects a size mismatch, a bad data length and a bad peak with MetricError', () => {
    const a = constant(4, 3, 0);
    expect(() => mse(a, constant(3, 4, 0)), 'transposed size').toThrow(/4×3.*3×4/);
    expect(() => mse(a, constant(3, 4, 0)), 'error class').toThrow(MetricError);
    expect(() => mse(a, { width: 4, height: 3, data: new Float64Array(11) }), 'short data').toThrow(/holds 11 values/);
    expect(() => psnr(a, a, 0), 'peak 0').toThrow(MetricError);
  });
});

describe('SSIM', () => {
  it('uses the 11-tap Gaussian σ = 1.5, normalised (Wang et al. 2004, Section III-C)', () => {
    const w = gaussianTaps(1.5, 5);
    expect(w.length, '11 taps').toBe(11);
    close(w.reduce((s, v) => s + v, 0), 1, 1e-15, 'taps sum to 1');
    close(w[5] / w[6], Math.exp(1 / 4.5), 1e-14, 'ratio of centre tap to its neighbour is exp(1/(2σ²))');
    close(w[0], w[10], 0, 'symmetric taps');
  });

  it('is 1 for an image against itself (Wang et al. 2004, eq. 13: SSIM(x, x) = 1)', () => {
    const next = rng(7);
    const x = image(23, 17, () => next());
    close(ssim(x, x), 1, 1e-14, 'SSIM of random image with itself');
  });

  // Worked by hand from Wang et al. 2004, eq. 13: for constant images c1, c2 every window has
  // σx = σy = σxy = 0, so the contrast·structure factor is C2/C2 = 1 and SSIM = (2c1c2 + C1)/(c1² + c2² + C1),
  // with C1 = (0.01·1)² = 1e-4.
  it.each([
    [11, 11, 0.2, 0.7],
    [30, 12, 0.5, 0.5],
    [12, 40, 0, 1],
    [16, 16, 0.9, 0.1],
  ])('constant %i×%i images %f vs %f follow the luminance formula', (w, h, c1, c2) => {
    const C1 = 1e-4;
    const expected = (2 * c1 * c2 + C1) / (c1 * c1 + c2 * c2 + C1);
    close(ssim(constant(w, h, c1), constant(w, h, c2)), expected, 1e-12, `SSIM of constants ${c1}, ${c2}`);
  });

  it('is symmetric and scales with the data range (C1, C2 scale with L², eq. 13)', () => {
    const next = rng(8);
    const x = image(20, 15, () => next());
    const y = image(20, 15, (i, j) => x.data[j * 20 + i] * 0.7 + 0.2 * next());
    const s = ssim(x, y);
    close(ssim(y, x), s, 1e-15, 'SSIM(y, x) = SSIM(x, y)');
    const scale = (m: MetricImage) => ({ ...m, data: m.data.map((v) => 255 * v) });
    close(ssim(scale(x), scale(y), { dataRange: 255 }), s, 1e-12, 'SSIM of 255-scaled images with L = 255');
  });

  it('separable map equals a direct 11×11 evaluation of eqs. 13–16 of Wang et al. 2004', () => {
    // Direct evaluation: weighted means, population variances and covariance about the mean, per window.
    const next = rng(9);
    const W = 19;
    const H = 14;
    const x = image(W, H, () => next());
    const y = image(W, H, (i, j) => 0.5 * x.data[j * W + i] + 0.5 * next());
    const g = gaussianTaps(1.5, 5);
    const C1 = 1e-4;
    const C2 = 9e-4;
    const map = ssimMap(x, y);
    expect([map.width, map.height], 'valid map is (W − 10)×(H − 10)').toEqual([W - 10, H - 10]);
    let worst = 0;
    let sum = 0;
    for (let oy = 0; oy < H - 10; oy++) {
      for (let ox = 0; ox < W - 10; ox++) {
        let mx = 0;
        let my = 0;
        for (let j = 0; j < 11; j++) {
          for (let i = 0; i < 11; i++) {
            const wij = g[i] * g[j];
            mx += wij * x.data[(oy + j) * W + ox + i];
            my += wij * y.data[(oy + j) * W + ox + i];
          }
        }
        let vx = 0;
        let vy = 0;
        let cxy = 0;
        for (let j = 0; j < 11; j++) {
          for (let i = 0; i < 11; i++) {
            const wij = g[i] * g[j];
            const dx = x.data[(oy + j) * W + ox + i] - mx;
            const dy = y.data[(oy + j) * W + ox + i] - my;
            vx += wij * dx * dx;
            vy += wij * dy * dy;
            cxy += wij * dx * dy;
          }
        }
        const direct = ((2 * mx * my + C1) * (2 * cxy + C2)) / ((mx * mx + my * my + C1) * (vx + vy + C2));
        sum += direct;
        worst = Math.max(worst, Math.abs(direct - map.data[oy * (W - 10) + ox]));
      }
    }
    expect(worst, `largest |separable − direct| ${worst}, tol 1e-13`).toBeLessThanOrEqual(1e-13);
    close(ssim(x, y), sum / ((W - 10) * (H - 10)), 1e-13, 'mean SSIM equals mean of the direct map');
  });

  it.each([
    [10, 20],
    [20, 10],
    [4, 1],
    [1, 1],
  ])('throws MetricError naming the size for a %i×%i image', (w, h) => {
    const a = constant(w, h, 0.5);
    let caught: unknown;
    try {
      ssim(a, a);
    } catch (e) {
      caught = e;
    }
    expect(caught, 'SSIM must throw, never return a number').toBeInstanceOf(MetricError);
    const msg = (caught as Error).message;
    expect(msg, 'message gives the size').toContain(`${w}×${h}`);
    expect(msg, 'message names the window').toContain('smaller than the 11×11 SSIM window');
  });

  it('rejects a size mismatch and a non-positive data range', () => {
    expect(() => ssim(constant(12, 12, 0), constant(12, 13, 0)), 'size mismatch').toThrow(/12×12.*12×13/);
    expect(() => ssim(constant(12, 12, 0), constant(12, 12, 0), { dataRange: 0 }), 'dataRange 0').toThrow(MetricError);
  });
});

describe('compareImages and formatMetric', () => {
  it('gathers MSE, PSNR, SSIM and error summaries', () => {
    const ref = image(16, 12, (x, y) => (x + y) / 26);
    const img = image(16, 12, (x, y) => (x + y) / 26 + 0.05);
    const c = compareImages(ref, img);
    close(c.mse, 0.0025, 1e-15, 'compare MSE for error 0.05');
    close(c.psnr, -20 * Math.log10(0.05), 1e-9, 'compare PSNR for error 0.05');
    close(c.ssim ?? Number.NaN, ssim(ref, img), 0, 'compare SSIM equals ssim()');
    close(c.maxAbsError, 0.05, 1e-15, 'max |error|');
    close(c.meanError, 0.05, 1e-15, 'mean error (brightness shift)');
    expect([c.width, c.height], 'size').toEqual([16, 12]);
  });

  it('gives SSIM null with a reason for images below 11×11, and keeps MSE/PSNR', () => {
    const a = image(4, 1, (x) => x / 4);
    const c = compareImages(a, a);
    expect(c.ssim, 'no SSIM for 4×1').toBeNull();
    expect(c.ssimNote, 'reason given').toMatch(/11×11.*4×1/);
    expect(c.psnr, 'identical → +Infinity').toBe(Number.POSITIVE_INFINITY);
    expect(() => JSON.stringify(c), 'serialisable').not.toThrow();
  });

  it('propagates NaN into the error summaries', () => {
    const ref = constant(12, 12, 0.5);
    const bad = constant(12, 12, 0.5);
    bad.data[3] = Number.NaN;
    const c = compareImages(ref, bad);
    expect(Number.isNaN(c.maxAbsError) && Number.isNaN(c.mse), 'NaN shows up').toBe(true);
  });

  it.each([
    [Number.POSITIVE_INFINITY, undefined, 'inf'],
    [Number.NEGATIVE_INFINITY, undefined, '-inf'],
    [Number.NaN, undefined, 'nan'],
    [null, undefined, 'n/a'],
    [0.1, undefined, '0.1'],
    [34.123456789, 4, '34.12'],
  ])('formatMetric(%s, %s) = %s', (v, digits, text) => {
    expect(formatMetric(v, digits)).toBe(text);
  });
});
