// `fluxel run` end to end in-process: outputs, frames, --stats shape (contracts.md §4), exit codes and error lines.
import { mkdtempSync, readdirSync, readFileSync, rmSync, writeFileSync, existsSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it, vi } from 'vitest';
import { runMain } from '../../../src/cli/run';
import { readImageFile, writeImageFile } from '../../../src/images/files';

const dir = mkdtempSync(join(tmpdir(), 'fluxel-run-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const PM = `grid 2d\nboundary reflect\nparam K = 0.06 in [0.005, 0.5]\nstep dt = 0.2\nsteps 12\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + (s / K)^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;

async function cli(args: string[]): Promise<{ code: number; err: string }> {
  let err = '';
  const spy = vi.spyOn(process.stderr, 'write').mockImplementation((chunk: string | Uint8Array) => {
    err += String(chunk);
    return true;
  });
  try {
    return { code: await runMain(args), err };
  } finally {
    spy.mockRestore();
  }
}

describe('fluxel run', () => {
  const scheme = join(dir, 'pm.fluxel');
  writeFileSync(scheme, PM);

  it('runs on a scene, writes output, frames and stats in the contract shape', async () => {
    const out = join(dir, 'out.pfm'), stats = join(dir, 'stats.json'), frames = join(dir, 'frames');
    const { code, err } = await cli([scheme, '--scene', 'cells', '--noise', '0.05', '--seed', '3', '--size', '48x40', '--output', out, '--frames', frames, '--every', '4', '--stats', stats, '--set', 'K=0.1']);
    expect(code, err).toBe(0);
    const img = (await readImageFile(out)).channels[0];
    expect([img.width, img.height]).toEqual([48, 40]);
    expect(readdirSync(frames).sort()).toEqual(['u-000000.pfm', 'u-000004.pfm', 'u-000008.pfm', 'u-000012.pfm']);
    const s = JSON.parse(readFileSync(stats, 'utf8'));
    expect(Object.keys(s).sort()).toEqual(['backend', 'best', 'dt', 'dtype', 'frames', 'input', 'params', 'scheme', 'seed', 'sourceHash', 'stepSeconds', 'steps', 'stopReason', 'warnings'].sort());
    expect(s.params).toEqual({ K: 0.1 });
    expect([s.dt, s.steps, s.dtype, s.backend, s.input, s.seed]).toEqual([0.2, 12, 'float32', 'wasm (f32x4, 1 thread)', 'scene:cells', 3]);
    expect(s.frames.map((f: { step: number }) => f.step)).toEqual([0, 4, 8, 12]);
    expect(typeof s.frames[1].psnr, 'psnr against the clean scene').toBe('number');
    // The contract's min, max, mean plus the per-step measures (drift, TV, energy; the change from step 1 on).
    expect(Object.keys(s.frames[0].fields.u).sort()).toEqual(['drift', 'energy', 'max', 'mean', 'min', 'tv']);
    expect(Object.keys(s.frames[1].fields.u).sort()).toEqual(['change', 'drift', 'energy', 'max', 'mean', 'min', 'tv']);
    // Denoising a noisy picture with edge-preserving diffusion should raise PSNR above the noisy input's.
    expect(s.best.step > 0, `best step ${s.best.step}`).toBe(true);
  });

  it('accepts options before the file, --steps 0 writes the input as read', async () => {
    const input = join(dir, 'in.pfm'), out = join(dir, 'same.pfm');
    const data = Float32Array.from({ length: 35 }, (_, i) => (i % 7) / 3 - 0.5);
    await writeImageFile(input, { width: 7, height: 5, data });
    const { code, err } = await cli(['--steps', '0', '--input', input, '--output', out, scheme]);
    expect(code, err).toBe(0);
    expect(Array.from((await readImageFile(out)).channels[0].data)).toEqual(Array.from(data));
  });

  it('exit 1 with file:line:col for scheme errors; exit 2 for usage errors; output untouched on failure', async () => {
    const bad = join(dir, 'bad.fluxel'), out = join(dir, 'keep.png');
    writeFileSync(bad, 'grid 2d\nfield u = image\nu\' = u + q\n');
    writeFileSync(out, 'old');
    const r1 = await cli([bad, '--output', out]);
    expect(r1.code).toBe(1);
    expect(r1.err).toMatch(/bad\.fluxel:3:\d+ error /);
    expect(readFileSync(out, 'utf8')).toBe('old');
    expect((await cli([scheme])).code, 'missing --output').toBe(2);
    expect((await cli([scheme, '--output', out, '--steps', '-1'])).code, 'negative steps').toBe(2);
    expect((await cli([scheme, '--output', out, '--set', 'nope=1'])).code, 'unknown parameter').toBe(2);
    expect((await cli([scheme, '--output', out, '--input', join(dir, 'missing.png')])).code, 'missing input').toBe(1);
  });

  it('a blow-up stops, says where and when, and exits 1', async () => {
    const out = join(dir, 'never.png'), heat = join(dir, 'heat.fluxel');
    // Linear heat at dt = 2 (8× the stable 1/4): the checkerboard mode grows by 15 per step.
    writeFileSync(heat, `grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 10\nfield u = image\n\nu' = u + dt * sum n in N4: u[n] - u\n`);
    const { code, err } = await cli([heat, '--scene', 'card', '--size', '32x32', '--set', 'dt=2', '--steps', '400', '--output', out]);
    expect(code).toBe(1);
    expect(err).toMatch(/heat\.fluxel:7:1 warning blow-up .*step \d+/);
    expect(existsSync(out)).toBe(false);
  });
});
