// Reference check of src/analysis/metricGradients.ts: the exact gradients of SSIM, MSE and PSNR with respect to the
// compared image against central differences of scikit-image's own metrics (Debian's scikit-image 0.19,
// skimage.metrics.structural_similarity with data_range=1, gaussian_weights=True, sigma=1.5,
// use_sample_covariance=False: the settings numerics.md fixes, Wang, Bovik, Sheikh, Simoncelli 2004;
// mean_squared_error; peak_signal_noise_ratio with data_range=1), run by test/tools/skimage_metric_fd.py.
// Differences: step 1e-5 on one pixel (common practice: central differences, error O(step²)); tolerance 1e-8
// absolute for SSIM and MSE gradients (entries ~1e-4..1e-2), 1e-6 dB for PSNR.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { metricSensitivities, mseGradient, ssimGradient } from '../../src/analysis/metricGradients';
import { ssim } from '../../src/analysis/metrics';
import { makeScene } from '../../src/images/scenes';

const PYTHON = '/usr/bin/python3';
const SCRIPT = join(__dirname, '..', 'tools', 'skimage_metric_fd.py');

describe('metric gradients against central differences of scikit-image', () => {
  for (const [w, h, scene] of [[24, 20, 'cells'], [31, 17, 'card']] as const) {
    it(`${w}×${h} ${scene} scene with noise`, () => {
      const s = makeScene(scene, { width: w, height: h, noise: 0.1, seed: 5 });
      const ref = { width: w, height: h, data: Float64Array.from(s.clean.data) };
      const img = { width: w, height: h, data: Float64Array.from(s.noisy.data) };
      // Corners, edges, the middle: pixels inside one window only, and inside the most windows.
      const idx = [0, w - 1, (h - 1) * w, w * h - 1, 5 * w + 5, Math.floor(h / 2) * w + Math.floor(w / 2), 12 * w + 3, 3 * w + 13];
      const dir = mkdtempSync(join(tmpdir(), 'fluxel-metric-fd-'));
      try {
        writeFileSync(join(dir, 'ref.f64'), Buffer.from(ref.data.buffer));
        writeFileSync(join(dir, 'img.f64'), Buffer.from(img.data.buffer));
        const out = JSON.parse(execFileSync(PYTHON, [SCRIPT, dir, String(w), String(h), '1e-5', ...idx.map(String)], { encoding: 'utf8' })) as { ssim: number[]; mse: number[]; psnr: number[] };
        const gs = ssimGradient(ref, img);
        expect(Math.abs(gs.ssim - ssim(ref, img))).toBe(0);
        const gm = mseGradient(ref, img);
        idx.forEach((p, k) => {
          expect(Math.abs(gs.gradient[p] - out.ssim[k]), `dSSIM/dimg at ${p}: ${gs.gradient[p]} vs ${out.ssim[k]}`).toBeLessThan(1e-8);
          expect(Math.abs(gm[p] - out.mse[k]), `dMSE/dimg at ${p}`).toBeLessThan(1e-8);
          // PSNR along the unit tangent e_p.
          const e = new Float64Array(w * h);
          e[p] = 1;
          const [d] = metricSensitivities(ref, img, [e]);
          expect(Math.abs(d.psnr - out.psnr[k]), `dPSNR/dimg at ${p}: ${d.psnr} vs ${out.psnr[k]}`).toBeLessThan(1e-6);
          expect(d.ssim).toBe(gs.gradient[p]);
        });
      } finally {
        rmSync(dir, { recursive: true, force: true });
      }
    });
  }
});
