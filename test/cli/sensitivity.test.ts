// `fluxel run --sensitivity` through the built bundle (needs `npm run build`): the derivative images beside the output,
// the `sensitivity` entry of --stats, and the usage errors. The numerics themselves are checked in
// test/reference/engine/sensitivity.test.ts; here the files are compared with central differences of two more
// `fluxel run` calls (common practice), with a step large enough for the PFM files' Float32 values: h = 1e-3·|K|,
// tolerance 1e-2 of the largest difference quotient for the image, 1e-3 relative for dPSNR (from the stats' Float64 PSNR).
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readImageFile } from '../../src/images/files';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const EXAMPLE = join(ROOT, 'examples/edge-preserving.fluxel');
const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-sens-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: dir, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

const SCENE = ['--scene', 'survey', '--size', '48x40', '--noise', '0.1', '--seed', '4', '--float64'];

describe('fluxel run --sensitivity', () => {
  it('writes OUT.d-NAME.pfm per name and the metric derivatives in --stats; both agree with central differences', async () => {
    const r = fluxel('run', EXAMPLE, ...SCENE, '--sensitivity', 'K,dt', '--output', 'res.png', '--stats', 'res.json');
    expect(r.code, r.stderr).toBe(0);
    expect(existsSync(join(dir, 'res.d-K.pfm'))).toBe(true);
    expect(existsSync(join(dir, 'res.d-dt.pfm'))).toBe(true);
    const stats = JSON.parse(readFileSync(join(dir, 'res.json'), 'utf8'));
    expect(stats.backend).toBe('js-tangents');
    expect(Object.keys(stats.sensitivity)).toEqual(['K', 'dt']);
    expect(stats.sensitivity.K).toMatchObject({ field: 'u', step: 60, image: 'res.d-K.pfm' });
    for (const m of ['mse', 'psnr', 'ssim']) expect(typeof stats.sensitivity.K[m]).toBe('number');

    const h = 1e-3 * 0.06;
    for (const [tag, k] of [['up', 0.06 + h], ['dn', 0.06 - h]] as const) {
      const q = fluxel('run', EXAMPLE, ...SCENE, '--set', `K=${k}`, '--output', `${tag}.pfm`, '--stats', `${tag}.json`);
      expect(q.code, q.stderr).toBe(0);
    }
    const up = (await readImageFile(join(dir, 'up.pfm'))).channels[0].data;
    const dn = (await readImageFile(join(dir, 'dn.pfm'))).channels[0].data;
    const dK = (await readImageFile(join(dir, 'res.d-K.pfm'))).channels[0].data;
    let err = 0, scale = 0;
    for (let i = 0; i < dK.length; i++) {
      const fd = (up[i] - dn[i]) / (2 * h);
      scale = Math.max(scale, Math.abs(fd));
      err = Math.max(err, Math.abs(fd - dK[i]));
    }
    expect(scale).toBeGreaterThan(0.1);
    expect(err, `max |d-K.pfm − difference quotient| (largest quotient ${scale})`).toBeLessThan(1e-2 * scale);
    const last = (f: string) => JSON.parse(readFileSync(join(dir, f), 'utf8')).frames.at(-1).psnr as number;
    const fdPsnr = (last('up.json') - last('dn.json')) / (2 * h);
    expect(Math.abs(stats.sensitivity.K.psnr - fdPsnr)).toBeLessThan(1e-3 * Math.abs(fdPsnr));
  });

  it('without a clean reference (a scheme with no image field) writes the images and no metric derivatives', () => {
    const r = fluxel('run', join(ROOT, 'examples/wave.fluxel'), '--size', '24x20', '--sensitivity', 'c', '--output', 'wave.png', '--stats', 'wave.json');
    expect(r.code, r.stderr).toBe(0);
    const stats = JSON.parse(readFileSync(join(dir, 'wave.json'), 'utf8'));
    expect(stats.sensitivity).toEqual({ c: { field: 'u', step: 80, image: 'wave.d-c.pfm' } });
    expect(existsSync(join(dir, 'wave.d-c.pfm'))).toBe(true);
  });

  it('refuses unknown and repeated names (exit 2, naming what exists)', () => {
    const a = fluxel('run', EXAMPLE, ...SCENE, '--sensitivity', 'K,kappa', '--output', 'x.png');
    expect(a.code).toBe(2);
    expect(a.stderr).toContain("--sensitivity kappa: the scheme has no parameter 'kappa' (names: K, sigma, dt)");
    const b = fluxel('run', EXAMPLE, ...SCENE, '--sensitivity', 'dt,dt', '--output', 'x.png');
    expect(b.code).toBe(2);
    expect(b.stderr).toContain("--sensitivity names 'dt' twice");
    expect(existsSync(join(dir, 'x.png'))).toBe(false);
  });

  it('with --backend wasm it says that the derivatives ran on the JavaScript kernels', () => {
    const r = fluxel('run', EXAMPLE, ...SCENE, '--backend', 'wasm', '--sensitivity', 'sigma', '--output', 'w.png');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('ran on js-tangents (the wasm kernels carry no derivatives)');
  });
});
