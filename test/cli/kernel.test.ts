// The `fluxel kernel` command as users run it: the built bundle dist/cli.js on the bundled examples.
// Needs `npm run build` first (the test command does it). Expected weights are derived beside each check.

import { spawnSync } from 'node:child_process';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeScene } from '../../src/images/scenes';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: ROOT, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

function json(...args: string[]) {
  const r = fluxel(...args, '--json');
  expect(r.code, r.stderr).toBe(0);
  return JSON.parse(r.stdout);
}

function close(actual: number, expected: number, tol: number, what: string): void {
  const err = Math.abs(actual - expected);
  expect(err <= tol, `${what}: got ${actual}, expected ${expected}, |error| ${err} > tolerance ${tol}`).toBe(true);
}

function scratch(name: string, text: string): string {
  const dir = mkdtempSync(join(tmpdir(), 'fluxel-kernel-'));
  const file = join(dir, name);
  writeFileSync(file, text);
  return file;
}

describe('fluxel kernel on the heat examples', () => {
  // Morton & Mayers, Numerical Solution of PDEs, 2nd ed. 2005, §3.2: the explicit 5-point scheme is
  // U' = (1 − 4r)U + r·(four neighbours), r = dt/h²; heat-2d has dt = 0.2, h = 1, so r = 0.2 and 1 − 4r = 0.2.
  it('heat-2d prints the 5-point weights (r, r, r, r, 1 − 4r) as a grid, sum 1', () => {
    const r = fluxel('kernel', 'examples/heat-2d.fluxel', '--at', '20,17');
    expect(r.code, r.stderr).toBe(0);
    const lines = r.stdout.split('\n');
    const row = (dy: number) => lines.find((l) => l.startsWith(`dy=${dy} `))?.trim().split(/\s+/).slice(1);
    expect(row(-1)).toEqual(['0', '0.2', '0']);
    expect(row(0)).toEqual(['0.2', '0.2', '0.2']);
    expect(row(1)).toEqual(['0', '0.2', '0']);
    expect(r.stdout).toMatch(/sum of weights 1; centre weight 0\.2\b/);
    expect(r.stdout).not.toMatch(/negative/);

    const j = json('kernel', 'examples/heat-2d.fluxel', '--at', '20,17');
    const rr = 0.2;
    const want = [[0, rr, 0], [rr, 1 - 4 * rr, rr], [0, rr, 0]];
    j.weights.forEach((row: number[], y: number) => row.forEach((w, x) => close(w, want[y][x], 1e-15, `weight at dx=${x - 1}, dy=${y - 1}`)));
    close(j.sum, 1, 1e-14, 'sum');
  });

  // Common practice (variances of independent steps add): one FTCS step spreads mass with variance 2r per axis
  // (weight r at ±1), so N steps give exactly 2rN = 2·dt·N/h² = 2t on an unbounded grid, σ = √(2t).
  it('heat-2d impulse response after the declared 40 steps: variance 2t per axis, σ = √(2t) = 4', () => {
    const j = json('kernel', 'examples/heat-2d.fluxel', '--at', '3,3');
    expect(j.impulse.steps).toBe(40);
    close(j.impulse.t, 8, 1e-12, 't');
    close(j.impulse.sum, 1, 1e-12, 'mass');
    for (const v of j.impulse.variance) close(v, 16, 1e-9, 'variance per axis');
    for (const s of j.impulse.sigma) close(s, 4, 1e-9, 'σ per axis');
    close(j.impulse.heatSigma, 4, 1e-12, '√(2t)');
    expect(j.impulse.truncated).toBe(false);
    const text = fluxel('kernel', 'examples/heat-2d.fluxel', '--at', '3,3', '--step', '10').stdout;
    // With --step 10 the response covers those 10 steps: t = 2, variance 4, σ = 2 = √4.
    expect(text).toMatch(/after 10 steps \(t = 2\).*variance x 4, variance y 4/);
    expect(text).toMatch(/σ x 2, y 2 vs √\(2t\) = 2/);
  });

  // Morton & Mayers 2005, §2.6: the 1d FTCS weights are (r, 1 − 2r, r); heat-1d has r = 0.4.
  it('heat-1d (an image contributes its middle row): one row (0.4, 0.2, 0.4)', () => {
    const j = json('kernel', 'examples/heat-1d.fluxel', '--scene', 'cells', '--at', '100');
    expect(j.weights.length).toBe(1);
    [0.4, 0.2, 0.4].forEach((w, i) => close(j.weights[0][i], w, 1e-15, `1d weight ${i - 1}`));
    expect(j.at).toEqual({ x: 100, y: 0 });
    // The new value is the FTCS update of the scene's middle row (row 128 of 256) at x = 100.
    const scene = makeScene('cells', {});
    const row = 128 * 256;
    const u = (x: number) => scene.noisy.data[row + x];
    close(j.value, 0.4 * u(99) + 0.2 * u(100) + 0.4 * u(101), 1e-6, 'new value from the middle row');
  });

  it('a negative centre weight is flagged (2d heat at dt = 0.3: 1 − 4·0.3 = −0.2)', () => {
    const f = scratch('hot.fluxel', 'grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.3\nsteps 5\nfield u = image\nu\' = u + dt / h^2 * sum n in N4: u[n] - u\n');
    const r = fluxel('kernel', f, '--scene', 'card', '--at', '5,5');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/warning: the centre weight is negative \(-0\.2\)/);
    expect(json('kernel', f, '--scene', 'card', '--at', '5,5').negativeCentre).toBe(true);
  });
});

/** The strongest vertical step edge of the clean test card: left pixel x, the middle y of its run, the contrast. */
function strongestEdge(): { x: number; y: number; delta: number } {
  const { width, height, data } = makeScene('card', { noise: 0 }).clean;
  let best = { x: 0, y: 0, delta: 0, run: 0 };
  for (let x = 0; x + 1 < width; x++) {
    // Runs of rows where the horizontal difference at column x stays the same: a straight vertical edge.
    let start = 0;
    for (let y = 1; y <= height; y++) {
      const d = (yy: number) => data[yy * width + x + 1] - data[yy * width + x];
      if (y < height && d(y) === d(start)) continue;
      const delta = d(start);
      const run = y - start;
      if (run >= 16 && (Math.abs(delta) > Math.abs(best.delta) + 1e-6 || (Math.abs(Math.abs(delta) - Math.abs(best.delta)) <= 1e-6 && run > best.run))) {
        best = { x, y: start + Math.floor(run / 2), delta, run };
      }
      start = y;
    }
  }
  return best;
}

describe('fluxel kernel on edge-preserving diffusion at a test-card edge', () => {
  // Perona & Malik, IEEE PAMI 12(7), 1990, with Catté et al.'s regularisation (SIAM J. Numer. Anal. 29(1), 1992):
  // the weight on neighbour n is dt·g(w[n] − w), g(s) = 1/(1 + (s/K)²), w = u blurred with σ = 1.
  // At a straight vertical step of contrast Δ (constant over more than the blur radius 4 on both sides), the
  // blurred difference across the edge is w(x+1) − w(x) = t₀·Δ, with t₀ the centre tap of the normalised
  // Gaussian, 1/Σ_{|k|≤4} e^{−k²/2} ≈ 0.3989 (numerics.md taps); along the edge w is constant, so g(0) = 1.
  // For the card's 0.1 → 0.9 step (Δ = 0.8) and K = 0.06: across/along = 1/(1 + (0.3989·0.8/0.06)²) ≈ 0.034.
  it('the weight across the edge is g(t₀Δ) ≈ 0.034 times the weight along it', () => {
    const e = strongestEdge();
    expect(Math.abs(e.delta) > 0.5, `found a strong edge (Δ = ${e.delta} at x = ${e.x})`).toBe(true);
    const j = json('kernel', 'examples/edge-preserving.fluxel', '--scene', 'card', '--noise', '0', '--at', `${e.x},${e.y}`);
    const [up, left, centre, right, down] = [j.weights[0][1], j.weights[1][0], j.weights[1][1], j.weights[1][2], j.weights[2][1]];
    let taps = 0;
    for (let k = -4; k <= 4; k++) taps += Math.exp(-(k * k) / 2);
    const t0 = 1 / taps;
    const K = 0.06;
    const dt = 0.2;
    const ratio = 1 / (1 + ((t0 * e.delta) / K) ** 2);
    close(up, dt, 1e-6, 'weight along the edge (up)');
    close(down, dt, 1e-6, 'weight along the edge (down)');
    close(right, dt * ratio, 1e-6 * dt, 'weight across the edge');
    close(right / up, ratio, 1e-5, 'across/along ratio');
    expect(right / up < 0.05, `across/along ${right / up} is much smaller than 1`).toBe(true);
    // The other horizontal neighbour sees the edge one pixel further off (w(x−1) − w(x) = −t₁Δ): also damped.
    expect(left < 0.5 * up, `left ${left} < half of along ${up}`).toBe(true);
    close(j.sum, 1, 1e-12, 'frozen weights sum to 1');
    close(centre, 1 - up - down - left - right, 1e-12, 'centre weight');
  });

  // Derivation (ours): adding a constant c to u shifts w by c and leaves every difference unchanged, so u' shifts
  // by c: the full linearisation's weights also sum to 1, and they reach as far as the blur (radius 4 + 1).
  it('--linearised differentiates the diffusivity too: wider stencil, weights still sum to 1', () => {
    const e = strongestEdge();
    const j = json('kernel', 'examples/edge-preserving.fluxel', '--scene', 'card', '--noise', '0', '--at', `${e.x},${e.y}`, '--linearised');
    expect(j.linearised).toBe(true);
    expect(j.radius).toBe(5);
    close(j.sum, 1, 1e-9, 'sum of linearised weights');
  });

  it('--step advances the state with the engine before taking the weights', () => {
    const e = strongestEdge();
    const j = json('kernel', 'examples/edge-preserving.fluxel', '--scene', 'card', '--noise', '0', '--at', `${e.x},${e.y}`, '--step', '10');
    expect(j.step).toBe(10);
    close(j.t, 2, 1e-12, 't after 10 steps of dt = 0.2');
    // The edge survives 10 steps (that is the point of the scheme): across stays far below along.
    expect(j.weights[1][2] / j.weights[0][1] < 0.2, `across/along after 10 steps: ${j.weights[1][2] / j.weights[0][1]}`).toBe(true);
  });
});

describe('fluxel kernel errors', () => {
  it('a pixel outside the image is a usage error naming the image size', () => {
    const r = fluxel('kernel', 'examples/heat-2d.fluxel', '--scene', 'card', '--size', '40x30', '--at', '40,3');
    expect(r.code).toBe(2);
    expect(r.stderr.trim().split('\n').length).toBe(1);
    expect(r.stderr).toMatch(/--at 40,3 is outside the 40×30 image \(x in 0\.\.39, y in 0\.\.29\)/);
  });

  it('missing or malformed --at is a usage error', () => {
    expect(fluxel('kernel', 'examples/heat-2d.fluxel').code).toBe(2);
    const r = fluxel('kernel', 'examples/heat-2d.fluxel', '--at', 'ten,3');
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--at takes X,Y/);
    expect(fluxel('kernel', 'examples/heat-1d.fluxel', '--at', '3,4').code).toBe(2);
    const one = fluxel('kernel', 'examples/heat-2d.fluxel', '--at', '3');
    expect(one.code).toBe(2);
    expect(one.stderr).toMatch(/needs both coordinates/);
  });

  it('a scheme with errors exits 1 with file:line:col diagnostics', () => {
    const f = scratch('bad.fluxel', 'grid 2d\nspacing 1\nstep dt = 0.1\nsteps 2\nfield u = image\nu\' = u + nope\n');
    const r = fluxel('kernel', f, '--at', '1,1');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`${f}:6:`);
    expect(r.stdout).toBe('');
  });

  it('an unreadable input image exits 1 naming the file', () => {
    const r = fluxel('kernel', 'examples/heat-2d.fluxel', '--input', 'no/such/file.png', '--at', '1,1');
    expect(r.code).toBe(1);
    expect(r.stderr).toMatch(/no\/such\/file\.png/);
  });
});
