// The "see why" fronts of the built CLI (dist/cli.js): what `check` says a scheme approximates and the acceptance
// diagnostics, `spectrum` (PNG and JSON), `kernel --influence`, `run --baseline` (A/B) and the per-step measures
// and the change stop in `run --stats`. Needs `npm run build` first. Expected values are derived beside each check.

import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { PNG } from 'pngjs';
import { describe, expect, it } from 'vitest';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: ROOT, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

const dir = mkdtempSync(join(tmpdir(), 'fluxel-why-'));
function scratch(name: string, text: string): string {
  const file = join(dir, name);
  writeFileSync(file, text);
  return file;
}

describe('fluxel check: what the scheme approximates', () => {
  it('heat-2d: text line and the JSON key `approximates`', () => {
    const t = fluxel('check', 'examples/heat-2d.fluxel');
    expect(t.code).toBe(0);
    expect(t.stdout).toContain('approximates: u_t = 1·Δu (isotropic diffusion), leading error (h²/12)(u_xxxx + u_yyyy)');
    const j = JSON.parse(fluxel('check', 'examples/heat-2d.fluxel', '--json').stdout);
    expect(j.approximates.fields[0].equation).toBe('u_t = 1·Δu (isotropic diffusion)');
    expect(j.approximates.fields[0].orderSpace).toBe(2);
    expect(j.approximates.fields[0].diffusion).toEqual([[1, 0], [0, 1]]);
  });

  it('a missing /h^2 with spacing 0.5 and a stray + 0.01*u each get a warning with the update\'s range', () => {
    const missing = scratch('missing.fluxel', "grid 2d\nspacing 0.5\nboundary reflect\nstep dt = 0.05\nsteps 10\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n");
    const j1 = JSON.parse(fluxel('check', missing, '--json').stdout);
    const d1 = j1.diagnostics.find((d: { code: string }) => d.code === 'coefficient-scales-with-h');
    expect(d1.severity).toBe('warning');
    expect(d1.range).toEqual({ start: { line: 7, column: 1 }, end: { line: 7, column: 36 } });
    const stray = scratch('stray.fluxel', "grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.2\nsteps 10\nfield u = image\nu' = u + dt / h^2 * (sum n in N4: u[n] - u) + 0.01*u\n");
    const t2 = fluxel('check', stray);
    expect(t2.stdout).toMatch(/stray\.fluxel:7:1 warning source-term .*sum to 0\.05/);
  });
});

describe('fluxel spectrum', () => {
  it('writes a PNG and JSON; over the limit the corner frequencies are unstable', () => {
    const over = scratch('over.fluxel', "grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.3\nsteps 1\nfield u = image\nu' = u + dt / h^2 * sum n in N4: u[n] - u\n");
    const out = join(dir, 'map.png');
    const r = fluxel('spectrum', over, '--out', out, '--json', '--samples', '41');
    expect(r.code, r.stderr).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.width).toBe(41);
    // |G| = |1 − 4r(sin²(θx/2) + sin²(θy/2))| with r = 0.3: 1.4 at (π, π) (Morton & Mayers 2005, §3.2).
    expect(j.maxAmplitude).toBeCloseTo(1.4, 12);
    expect(j.unstableCount).toBeGreaterThan(0);
    expect(j.edge.some((v: number) => v === 1)).toBe(true);
    const png = PNG.sync.read(readFileSync(out));
    expect(png.width).toBeGreaterThan(600);
    // The plot holds the ink edge (dark pixels) and the colour ramp's light end (|G| near 1.4).
    let dark = 0;
    for (let k = 0; k < png.data.length; k += 4) if (png.data[k] < 40 && png.data[k + 1] < 40 && png.data[k + 2] < 40) dark++;
    expect(dark).toBeGreaterThan(1000);
  });

  it('usage errors: a non-PNG output is refused (exit 2)', () => {
    expect(fluxel('spectrum', 'examples/heat-2d.fluxel', '--out', join(dir, 'x.jpg')).code).toBe(2);
  });
});

describe('fluxel kernel --influence', () => {
  it('heat-2d (linear): the influence of 2 steps is the 2-step impulse response', () => {
    const r = fluxel('kernel', 'examples/heat-2d.fluxel', '--at', '20,20', '--influence', '2', '--size', '40x40', '--json');
    expect(r.code, r.stderr).toBe(0);
    const inf = JSON.parse(r.stdout).influence;
    expect(inf.box).toEqual({ x0: 18, y0: 18, x1: 22, y1: 22 });
    const g = inf.maps.u as number[][];
    // Two steps of the 5-point stencil (centre 1 − 4r = 0.2, neighbours r = 0.2): centre 0.2² + 4·0.2² = 0.2,
    // one cell away 2·0.2·0.2 = 0.08, two cells away 0.04, diagonal 2·0.04 = 0.08 (hand-computed convolution).
    expect(g[2][2]).toBeCloseTo(0.2, 12);
    expect(g[2][3]).toBeCloseTo(0.08, 12);
    expect(g[2][4]).toBeCloseTo(0.04, 12);
    expect(g[1][1]).toBeCloseTo(0.08, 12);
    expect(inf.sum).toBeCloseTo(1, 12);
  });
});

describe('fluxel run: A/B, measures, change stop', () => {
  it('--baseline writes both results, the difference and the deltas', () => {
    const out = join(dir, 'ab.png');
    const stats = join(dir, 'ab.json');
    const r = fluxel('run', 'examples/edge-preserving.fluxel', '--baseline', 'examples/heat-2d.fluxel', '--scene', 'survey', '--size', '48x48', '--output', out, '--stats', stats);
    expect(r.code, r.stderr).toBe(0);
    expect(existsSync(join(dir, 'ab.baseline.png'))).toBe(true);
    expect(existsSync(join(dir, 'ab.diff.pfm'))).toBe(true);
    expect(r.stdout).toMatch(/PSNR .* baseline .* Δ/);
    const s = JSON.parse(readFileSync(stats, 'utf8'));
    expect(s.ab.deltas.psnr).toBeCloseTo(s.ab.current.psnr - s.ab.baselineMeasures.psnr, 12);
    expect(s.ab.deltas.tv).toBeCloseTo(s.ab.current.tv - s.ab.baselineMeasures.tv, 9);
    expect(s.ab.difference.rms).toBeGreaterThan(0);
    expect(s.frames[1].fields.u.change.rms).toBeGreaterThan(0);
    expect(s.stopReason).toBe('steps');
  });

  it('`until change < tol` stops early and --stats says why', () => {
    const file = scratch('stop.fluxel', "grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.2\nuntil change < 1e-3\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n");
    const stats = join(dir, 'stop.json');
    const r = fluxel('run', file, '--scene', 'survey', '--size', '32x32', '--output', join(dir, 'stop.png'), '--stats', stats);
    expect(r.code, r.stderr).toBe(0);
    const s = JSON.parse(readFileSync(stats, 'utf8'));
    expect(s.stopReason).toBe('change');
    expect(s.stopChange).toBe(0.001);
    const last = s.frames[s.frames.length - 1];
    expect(last.step).toBeLessThan(10000);
    expect(last.fields.u.change.rms).toBeLessThan(1e-3);
  });
});
