// `fluxel compare` as users run it (the built dist/cli.js): numbers checked against scikit-image on the same files
// read by Pillow, "inf" for identical images, the too-small-for-SSIM note, size mismatches and --range.
// Needs `npm run build` first. The sweep and fit commands start workers: see tune.serial.test.ts.
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { writeImageFile } from '../../src/images/files';
import { makeScene } from '../../src/images/scenes';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-compare-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: dir, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/** A 16-bit big-endian binary PGM (Netpbm P5 with maxval 65535), written by hand. */
function pgm16(file: string, width: number, height: number, sample: (i: number) => number): void {
  const head = Buffer.from(`P5\n${width} ${height}\n65535\n`, 'ascii');
  const body = Buffer.alloc(width * height * 2);
  for (let i = 0; i < width * height; i++) body.writeUInt16BE(sample(i), 2 * i);
  writeFileSync(join(dir, file), Buffer.concat([head, body]));
}

describe('fluxel compare', () => {
  it('agrees with scikit-image (Wang et al. options) on 8-bit PNGs read by Pillow', async () => {
    const s = makeScene('cells', { width: 70, height: 50, noise: 0.08, seed: 2 });
    await writeImageFile(join(dir, 'ref.png'), s.clean);
    await writeImageFile(join(dir, 'img.png'), s.noisy);
    const r = fluxel('compare', 'ref.png', 'img.png', '--json');
    expect(r.code, r.stderr).toBe(0);
    const j = JSON.parse(r.stdout);
    // Reference: scikit-image's metrics on the same files, samples / 255 (contracts.md §3), SSIM with
    // gaussian_weights=True, sigma=1.5, use_sample_covariance=False, data_range=1 (numerics.md "Metrics").
    const py = [
      'import sys, json, numpy as np',
      'from PIL import Image',
      'from skimage.metrics import mean_squared_error, peak_signal_noise_ratio, structural_similarity',
      'a = np.asarray(Image.open(sys.argv[1]), dtype=np.float64) / 255',
      'b = np.asarray(Image.open(sys.argv[2]), dtype=np.float64) / 255',
      's = structural_similarity(a, b, data_range=1, gaussian_weights=True, sigma=1.5, use_sample_covariance=False)',
      'print(json.dumps([mean_squared_error(a, b), peak_signal_noise_ratio(a, b, data_range=1), s]))',
    ].join('\n');
    const [mse, psnr, ssim] = JSON.parse(execFileSync('/usr/bin/python3', ['-c', py, join(dir, 'ref.png'), join(dir, 'img.png')], { encoding: 'utf8' }));
    // Both sides in Float64 with different summation orders: 1e-12 relative (as test/reference/metrics.test.ts).
    expect(Math.abs(j.mse - mse) / mse, `mse ${j.mse} vs ${mse}`).toBeLessThan(1e-12);
    expect(Math.abs(j.psnr - psnr), `psnr ${j.psnr} vs ${psnr}`).toBeLessThan(1e-10);
    expect(Math.abs(j.ssim - ssim), `ssim ${j.ssim} vs ${ssim}`).toBeLessThan(1e-12);
    expect(j.peak).toBe(1);
    const text = fluxel('compare', 'ref.png', 'img.png');
    expect(text.code).toBe(0);
    expect(text.stdout).toMatch(/^psnr {2}\d+\.\d+ dB$/m);
    expect(text.stdout).toMatch(/^ssim {2}0\.\d+$/m);
  });

  it('prints "inf" for identical images (text and JSON) and SSIM 1', () => {
    const j = JSON.parse(fluxel('compare', 'ref.png', 'ref.png', '--json').stdout);
    expect([j.mse, j.psnr, j.ssim]).toEqual([0, 'inf', 1]);
    expect(fluxel('compare', 'ref.png', 'ref.png').stdout).toMatch(/^psnr {2}inf$/m);
  });

  it('images under 11×11: MSE and PSNR, SSIM null with a note, exit 0', () => {
    // 16-bit PGM, ref all 0 and img all 4095: with --range 0:4095 the values are 0 and 1, so MSE = 1 and
    // PSNR = 10·log10(1/1) = 0 dB (worked by hand); without it, 4095/65535 gives MSE (4095/65535)².
    pgm16('a.pgm', 8, 6, () => 0);
    pgm16('b.pgm', 8, 6, () => 4095);
    const r = fluxel('compare', 'a.pgm', 'b.pgm', '--json', '--range', '0:4095');
    expect(r.code, r.stderr).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.mse).toBe(1);
    expect(j.psnr).toBe(0);
    expect(j.ssim).toBeNull();
    expect(j.ssimNote).toMatch(/SSIM needs at least 11×11 pixels; the images are 8×6/);
    const plain = JSON.parse(fluxel('compare', 'a.pgm', 'b.pgm', '--json').stdout);
    expect(Math.abs(plain.mse - (4095 / 65535) ** 2)).toBeLessThan(1e-15);
    const text = fluxel('compare', 'a.pgm', 'b.pgm');
    expect(text.code).toBe(0);
    expect(text.stdout).toMatch(/^ssim {2}n\/a: SSIM needs at least 11×11 pixels/m);
  });

  it('refuses a size mismatch, an unreadable file and bad usage with one clear line', () => {
    const m = fluxel('compare', 'ref.png', 'a.pgm');
    expect(m.code).toBe(1);
    expect(m.stderr.trim()).toBe('fluxel compare: a.pgm: size 8×6 differs from the reference ref.png (70×50).');
    const missing = fluxel('compare', 'ref.png', 'nope.png');
    expect(missing.code).toBe(1);
    expect(missing.stderr).toMatch(/^fluxel compare: cannot read nope\.png: ENOENT/);
    writeFileSync(join(dir, 'junk.png'), 'not an image');
    const junk = fluxel('compare', 'junk.png', 'ref.png');
    expect(junk.code).toBe(1);
    expect(junk.stderr).toMatch(/^fluxel compare: junk\.png: /);
    expect(fluxel('compare', 'ref.png').code).toBe(2);
    expect(fluxel('compare', 'ref.png', 'img.png', '--range', '5:1').code).toBe(2);
  });
});
