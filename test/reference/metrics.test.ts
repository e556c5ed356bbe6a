// Reference checks of src/analysis/metrics.ts against Debian's scikit-image 0.19 and numpy, run through
// test/tools/skimage_metrics.py with /usr/bin/python3; images and results travel as raw float64 files.
// Imports the module under test, the scene generator (src/images/scenes.ts) for test pictures, and Node built-ins.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import {
  anisotropicTotalVariation,
  dirichletEnergy,
  mse,
  psnr,
  ssim,
  ssimMap,
  stats,
  totalVariation,
  type MetricImage,
} from '../../src/analysis/metrics';
import { makeScene, type SceneName } from '../../src/images/scenes';

// Sources of the reference values:
// - scikit-image 0.19.3 (Debian python3-skimage), skimage/metrics/_structural_similarity.py, read from
//   /usr/lib/python3/dist-packages: with gaussian_weights=True it sets truncate = 3.5 and
//   win_size = 2·int(3.5·σ + 0.5) + 1 = 11 for σ = 1.5 (its comment: "to match Wang et. al. 2004"),
//   filters x, y, x², y², xy with scipy.ndimage.gaussian_filter(mode='reflect'), and averages
//   crop(S, (win_size − 1)//2): exactly the positions where the 11×11 window fits, where 'reflect'
//   never enters, i.e. our 'valid' map. Called with data_range=1, gaussian_weights=True, sigma=1.5,
//   use_sample_covariance=False, which differ from its defaults (7×7 uniform window, sample covariance).
// - skimage.metrics.mean_squared_error and peak_signal_noise_ratio(data_range=1), same package.
// - Total variation and Dirichlet energy: numpy np.diff with the last difference zero (an independent
//   formulation of numerics.md "Metrics"; common practice).
// Tolerances: both sides run in Float64 but sum in different orders (scipy filters axis 0 then axis 1 over the
// full image, we filter rows then columns over valid windows), so agreement to ~1e-12 is expected, not bit-equality.
const SSIM_TOL = 1e-12;
const REL_TOL = 1e-12;
const PSNR_TOL = 1e-10; // dB; PSNR is a log, so this is ~2e-11 relative in MSE.

const PYTHON = '/usr/bin/python3';
const SCRIPT = join(__dirname, '..', 'tools', 'skimage_metrics.py');

// mulberry32: a small seeded generator so every run sees the same images (common practice).
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

function gaussianNoise(next: () => number): () => number {
  // Box–Muller transform (common practice); 1 − u keeps the log argument in (0, 1].
  return () => Math.sqrt(-2 * Math.log(1 - next())) * Math.cos(2 * Math.PI * next());
}

function image(width: number, height: number, f: (x: number, y: number) => number): MetricImage {
  const data = new Float64Array(width * height);
  for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) data[y * width + x] = f(x, y);
  return { width, height, data };
}

/** Separable Gaussian blur with clamped edges: only used to make a soft test picture. */
function blur(src: MetricImage, sigma: number): MetricImage {
  const r = Math.ceil(3 * sigma);
  const taps: number[] = [];
  let sum = 0;
  for (let k = -r; k <= r; k++) {
    taps.push(Math.exp(-(k * k) / (2 * sigma * sigma)));
    sum += taps[taps.length - 1];
  }
  const { width, height } = src;
  const clampX = (x: number) => Math.min(width - 1, Math.max(0, x));
  const clampY = (y: number) => Math.min(height - 1, Math.max(0, y));
  const tmp = image(width, height, (x, y) =>
    taps.reduce((acc, w, i) => acc + w * src.data[y * width + clampX(x + i - r)], 0) / sum,
  );
  return image(width, height, (x, y) =>
    taps.reduce((acc, w, i) => acc + w * tmp.data[clampY(y + i - r) * width + x], 0) / sum,
  );
}

interface Case {
  name: string;
  ref: MetricImage;
  img: MetricImage;
}

function makeCases(): Case[] {
  const cases: Case[] = [];
  {
    const next = rng(1);
    cases.push({ name: 'uniform_noise', ref: image(64, 48, () => next()), img: image(64, 48, () => next()) });
  }
  {
    // Noise that leaves [0, 1] (no clamping), on a gradient: data_range stays 1.
    const g = gaussianNoise(rng(2));
    const ref = image(57, 41, (x, y) => (x + 2 * y) / (56 + 80));
    cases.push({ name: 'gradient_plus_noise', ref, img: image(57, 41, (x, y) => ref.data[y * 57 + x] + 0.2 * g()) });
  }
  {
    // Smooth gradients, contrast and brightness change: tiny local variances stress the C2 term.
    const ref = image(40, 33, (x, y) => 0.5 + 0.4 * Math.sin(x / 9) * Math.cos(y / 7));
    cases.push({ name: 'smooth_contrast', ref, img: image(40, 33, (x, y) => 0.8 * ref.data[y * 40 + x] + 0.1) });
  }
  {
    // A blurred disc and the same disc with seeded Gaussian noise (our own synthetic pair).
    const disc = image(96, 80, (x, y) => ((x - 47.5) ** 2 + (y - 40) ** 2 <= 22 ** 2 ? 0.85 : 0.15));
    const soft = blur(disc, 2);
    const g = gaussianNoise(rng(3));
    cases.push({ name: 'blurred_disc_noise', ref: soft, img: image(96, 80, (x, y) => soft.data[y * 96 + x] + 0.05 * g()) });
    cases.push({ name: 'disc_vs_blurred', ref: disc, img: soft });
  }
  {
    // Exactly one 11×11 window, and a tall thin strip: edge cases of the 'valid' map.
    const next = rng(4);
    cases.push({ name: 'one_window', ref: image(11, 11, () => next()), img: image(11, 11, () => next()) });
    const ref = image(12, 150, (x, y) => Math.abs(Math.sin(0.3 * x + 0.05 * y)));
    cases.push({ name: 'tall_strip', ref, img: image(12, 150, (x, y) => ref.data[y * 12 + x] ** 2) });
  }
  // The project's generated scenes (src/images/scenes.ts), clean against noisy, passed to our metrics as the
  // Float32 images makeScene returns (Float32 → Float64 is exact, so python sees the same values).
  const scenes: [SceneName, number, number][] = [
    ['survey', 0.05, 0],
    ['cells', 0.1, 0],
    ['card', 0.02, 0.01],
  ];
  for (const [name, noise, saltPepper] of scenes) {
    const scene = makeScene(name, { width: 96, height: 72, noise, saltPepper, seed: 5 });
    cases.push({ name: `scene_${name}`, ref: scene.clean, img: scene.noisy });
  }
  return cases;
}

function writeF64(path: string, values: ArrayLike<number>): void {
  // Explicit little-endian writes, whatever the host byte order.
  const buf = Buffer.alloc(values.length * 8);
  for (let i = 0; i < values.length; i++) buf.writeDoubleLE(values[i], i * 8);
  writeFileSync(path, buf);
}

function readF64(path: string): Float64Array {
  const buf = readFileSync(path);
  const out = new Float64Array(buf.length / 8);
  for (let i = 0; i < out.length; i++) out[i] = buf.readDoubleLE(i * 8);
  return out;
}

function relErr(a: number, b: number): number {
  return Math.abs(a - b) / Math.max(Math.abs(b), Number.MIN_VALUE);
}

const cases = makeCases();
let dir = '';
const results = new Map<string, { out: Float64Array; map: Float64Array }>();

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'fluxel-metrics-'));
  writeFileSync(
    join(dir, 'manifest.json'),
    JSON.stringify({ cases: cases.map((c) => ({ name: c.name, width: c.ref.width, height: c.ref.height })) }),
  );
  for (const c of cases) {
    writeF64(join(dir, `${c.name}.ref.f64`), c.ref.data);
    writeF64(join(dir, `${c.name}.img.f64`), c.img.data);
  }
  execFileSync(PYTHON, [SCRIPT, dir], { stdio: ['ignore', 'pipe', 'pipe'] });
  for (const c of cases) {
    results.set(c.name, { out: readF64(join(dir, `${c.name}.out.f64`)), map: readF64(join(dir, `${c.name}.map.f64`)) });
  }
});

afterAll(() => {
  if (dir) rmSync(dir, { recursive: true, force: true });
});

describe('metrics agree with scikit-image / numpy', () => {
  for (const c of cases) {
    it(`${c.name} (${c.ref.width}×${c.ref.height})`, () => {
      const r = results.get(c.name);
      expect(r, `python produced no results for ${c.name}`).toBeDefined();
      const { out, map } = r!;
      const [skMse, skPsnr, skSsim, npTv, npAniso, npEnergy, npMin, npMax, npMean] = out;

      const m = mse(c.ref, c.img);
      expect(relErr(m, skMse), `MSE ${m} vs skimage ${skMse}, tol ${REL_TOL} relative`).toBeLessThanOrEqual(REL_TOL);
      const p = psnr(c.ref, c.img);
      expect(Math.abs(p - skPsnr), `PSNR ${p} vs skimage ${skPsnr}, tol ${PSNR_TOL} dB`).toBeLessThanOrEqual(PSNR_TOL);

      const s = ssim(c.ref, c.img);
      expect(Math.abs(s - skSsim), `SSIM ${s} vs skimage ${skSsim}, tol ${SSIM_TOL}`).toBeLessThanOrEqual(SSIM_TOL);

      // The cropped skimage map must equal our valid map pixel by pixel, which shows that
      // skimage's crop-then-mean is the same set of windows as ours, not just the same mean.
      const ours = ssimMap(c.ref, c.img);
      expect(ours.data.length, 'valid map size equals skimage map cropped by 5 on each side').toBe(map.length);
      let worst = 0;
      for (let i = 0; i < map.length; i++) worst = Math.max(worst, Math.abs(ours.data[i] - map[i]));
      expect(worst, `largest |SSIM map difference| ${worst}, tol ${SSIM_TOL}`).toBeLessThanOrEqual(SSIM_TOL);

      const tv = totalVariation(c.ref);
      const an = anisotropicTotalVariation(c.ref);
      const en = dirichletEnergy(c.ref);
      expect(relErr(tv, npTv), `TV ${tv} vs numpy ${npTv}, tol ${REL_TOL}`).toBeLessThanOrEqual(REL_TOL);
      expect(relErr(an, npAniso), `anisotropic TV ${an} vs numpy ${npAniso}, tol ${REL_TOL}`).toBeLessThanOrEqual(REL_TOL);
      expect(relErr(en, npEnergy), `energy ${en} vs numpy ${npEnergy}, tol ${REL_TOL}`).toBeLessThanOrEqual(REL_TOL);

      const st = stats(c.ref);
      expect(st.min, 'min equals numpy min exactly').toBe(npMin);
      expect(st.max, 'max equals numpy max exactly').toBe(npMax);
      expect(relErr(st.mean, npMean), `mean ${st.mean} vs numpy ${npMean}, tol 1e-14`).toBeLessThanOrEqual(1e-14);
    });
  }
});
