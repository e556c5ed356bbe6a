// `fluxel fit --method gradient` as users run it (the built dist/cli.js, which starts worker threads: serial):
// the JSON fields of the gradient method, agreement of its reported optimum with an in-process plain run (the
// engine's own evaluation, numerics.md Float32 semantics: agreement to rounding), determinism, and the usage error.
import { spawnSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation';
import { evaluateSetting } from '../../src/tune/evaluate';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const EP = join(ROOT, 'examples/edge-preserving.fluxel');
const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-fitgrad-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: dir, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

const common = ['--scene', 'cells', '--size', '40x36', '--noise', '0.1', '--seed', '4', '--steps', '20'];

describe('fluxel fit --method gradient', () => {
  it('reports the projected-gradient fit with its runs and stays deterministic across worker counts', () => {
    const a = fluxel('fit', EP, ...common, '--free', 'K,sigma', '--method', 'gradient', '--workers', '1', '--json');
    expect(a.code, a.stderr).toBe(0);
    const j = JSON.parse(a.stdout);
    expect(j.method).toBe('projected-gradient');
    expect(j.runs).toBe(3 * j.evaluations);
    expect(j.logScale).toEqual(['K']);
    expect(typeof j.projectedGradient).toBe('number');
    expect(j.values.K >= 0.005 && j.values.K <= 0.5 && j.values.sigma >= 0 && j.values.sigma <= 3).toBe(true);
    expect(j.psnr).toBeGreaterThan(j.noisy);
    const scheme = parseAndCheck(readFileSync(EP, 'utf8')).scheme!;
    const scene = makeScene('cells', { width: 40, height: 36, noise: 0.1, seed: 4 });
    const again = evaluateSetting(scheme, { image: scene.noisy, reference: scene.clean, steps: 20, metric: 'psnr' }, j.values);
    expect(again.bestStep).toBe(j.step);
    expect(Math.abs(again.best - j.psnr)).toBeLessThan(1e-4);
    const b = fluxel('fit', EP, ...common, '--free', 'K,sigma', '--method', 'gradient', '--workers', '2', '--json');
    expect(b.code, b.stderr).toBe(0);
    const k = JSON.parse(b.stdout);
    expect([k.values, k.step, k.psnr, k.evaluations]).toEqual([j.values, j.step, j.psnr, j.evaluations]);
  });

  it('refuses an unknown method (exit 2)', () => {
    const r = fluxel('fit', EP, ...common, '--free', 'K', '--method', 'newton');
    expect(r.code).toBe(2);
    expect(r.stderr).toContain("--method takes derivative-free or gradient, got 'newton'.");
  });
});
