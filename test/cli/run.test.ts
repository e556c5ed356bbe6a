// The `fluxel run` command as users run it: the built bundle dist/cli.js (issue 3's acceptance command).
// Needs `npm run build` first (the test command does it). PSNR and SSIM follow numerics.md ("Metrics").

import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { readImageFile } from '../../src/images/files';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-run-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: dir, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

interface Stats {
  frames: { step: number; psnr: number; ssim: number; fields: Record<string, { min: number; max: number; mean: number }> }[];
  warnings: { kind: string; step: number; x: number; y: number; field: string; message: string; range: { start: { line: number; column: number } } }[];
  best: { step: number; psnr: number };
  seed: number;
  stepSeconds: number;
  steps: number;
  [key: string]: unknown;
}

describe('fluxel run (built bundle)', () => {
  it('runs --set values outside the declared ranges, and says so', () => {
    const r = fluxel('run', join(ROOT, 'examples/heat-2d.fluxel'), '--set', 'dt=0.01', '--size', '12x10', '--output', 'outside.pfm');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toContain('--set dt=0.01 lies outside its declared range [0.02, 0.3]');
    const inside = fluxel('run', join(ROOT, 'examples/heat-2d.fluxel'), '--set', 'dt=0.1', '--size', '12x10', '--output', 'inside.pfm');
    expect(inside.code, inside.stderr).toBe(0);
    expect(inside.stderr).toBe('');
  });

  it('builds the engine worker bundle beside the CLI', () => {
    expect(existsSync(join(ROOT, 'dist/engine-worker.js'))).toBe(true);
  });

  it('the acceptance command: edge-preserving on the noisy survey scene raises PSNR and SSIM above the input', () => {
    const r = fluxel('run', join(ROOT, 'examples/edge-preserving.fluxel'), '--scene', 'survey', '--noise', '0.1', '--output', 'out.png', '--stats', 's.json');
    expect(r.code, r.stderr).toBe(0);
    // Not a terminal (a pipe): no progress bar, nothing on stderr.
    expect(r.stderr).toBe('');
    const s = JSON.parse(readFileSync(join(dir, 's.json'), 'utf8')) as Stats;
    expect(Object.keys(s).sort()).toEqual(['backend', 'best', 'dt', 'dtype', 'frames', 'input', 'params', 'scheme', 'seed', 'sourceHash', 'stepSeconds', 'steps', 'stopReason', 'warnings'].sort());
    expect(s.seed, 'the default seed is recorded').toBe(1);
    expect(s.warnings).toEqual([]);
    expect(s.stepSeconds > 0).toBe(true);
    const first = s.frames[0], last = s.frames[s.frames.length - 1];
    expect([first.step, last.step]).toEqual([0, s.steps]);
    expect(last.psnr > first.psnr + 3, `PSNR ${first.psnr} -> ${last.psnr} dB`).toBe(true);
    expect(last.ssim > first.ssim, `SSIM ${first.ssim} -> ${last.ssim}`).toBe(true);
    expect(s.best.psnr > first.psnr).toBe(true);
  });

  it('writes the output PNG at the scene size', async () => {
    const img = (await readImageFile(join(dir, 'out.png'))).channels[0];
    expect([img.width, img.height]).toEqual([256, 256]);
  });

  it('a 1d example on a 2d scene writes one row (the middle row of the picture)', async () => {
    const r = fluxel('run', join(ROOT, 'examples/heat-1d.fluxel'), '--scene', 'card', '--size', '64x48', '--output', 'rod.pfm', '--stats', 'rod.json');
    expect(r.code, r.stderr).toBe(0);
    const img = (await readImageFile(join(dir, 'rod.pfm'))).channels[0];
    expect([img.width, img.height]).toEqual([64, 1]);
    const s = JSON.parse(readFileSync(join(dir, 'rod.json'), 'utf8')) as Stats;
    expect(typeof s.frames[0].psnr, 'PSNR against the clean middle row').toBe('number');
  });

  it('dt three times the limit: the monitors fire with step, pixel and source range (stderr and --stats)', () => {
    // 5-point heat is stable for dt ≤ 1/4 (von Neumann; J. Weickert, Anisotropic Diffusion in Image Processing, 1998).
    const r = fluxel('run', join(ROOT, 'examples/heat-2d.fluxel'), '--scene', 'card', '--size', '48x48', '--noise', '0.01', '--set', 'dt=0.75', '--steps', '200', '--output', 'hot.png', '--stats', 'hot.json');
    expect(r.code, 'a blow-up exits 1').toBe(1);
    expect(r.stderr).toMatch(/heat-2d\.fluxel:10:1 warning new-extremum .* at step 1, pixel \(\d+, \d+\)/);
    expect(r.stderr).toMatch(/warning blow-up /);
    expect(existsSync(join(dir, 'hot.png')), 'no output after a blow-up').toBe(false);
    const s = JSON.parse(readFileSync(join(dir, 'hot.json'), 'utf8')) as Stats;
    expect(s.warnings.map(w => w.kind)).toEqual(['new-extremum', 'growth', 'blow-up']);
    for (const w of s.warnings) expect([w.field, w.range.start.line], w.message).toEqual(['u', 10]);
  });

  it('on a terminal a progress bar is drawn (run under script(1), which gives the child a pseudo-terminal)', () => {
    const cmd = `${process.execPath} ${CLI} run ${join(ROOT, 'examples/heat-2d.fluxel')} --scene card --size 64x64 --steps 400 --output tty.png`;
    const r = spawnSync('script', ['-qec', cmd, '/dev/null'], { cwd: dir, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/fluxel run \[[^\]]*\] 400\/400 steps/);
  });
});
