// `fluxel sweep` and `fluxel fit` as users run them (the built dist/cli.js, which starts worker threads: serial).
// Sweep CSV values are checked against in-process evaluations of the same scene, the PNG is read back by
// Debian's Pillow, fits are checked for determinism and against a recomputation of their reported optimum.
import { execFileSync, spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { makeScene } from '../../src/images/scenes';
import { parseAndCheck } from '../../src/notation';
import { evaluateSetting } from '../../src/tune/evaluate';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const EP = join(ROOT, 'examples/edge-preserving.fluxel');
const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-tune-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: dir, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

const scheme = parseAndCheck(readFileSync(EP, 'utf8')).scheme!;
const scene = makeScene('card', { width: 40, height: 36, noise: 0.1, seed: 4 });
const task = { image: scene.noisy, reference: scene.clean, steps: 10, metric: 'psnr' as const };
const common = ['--scene', 'card', '--size', '40x36', '--noise', '0.1', '--seed', '4', '--steps', '10'];

describe('fluxel sweep', () => {
  it('one --vary: CSV of every setting and step equal to in-process runs, JSON best, an RGB heat map', () => {
    const r = fluxel('sweep', EP, ...common, '--vary', 'K=0.02:0.2:4', '--workers', '2', '--out', 'one');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stderr).toBe(''); // not a terminal: no progress bar
    expect(r.stdout).toMatch(/^best: K = [\d.]+, step \d+: psnr [\d.]+ dB$/m);
    const rows = readFileSync(join(dir, 'one/sweep.csv'), 'utf8').trim().split('\n');
    expect(rows[0]).toBe('setting,K,step,psnr');
    expect(rows.length).toBe(1 + 4 * 11);
    const Ks = [0.02, 0.08, 0.14, 0.2];
    Ks.forEach((K, i) => {
      const want = evaluateSetting(scheme, task, { K });
      for (let step = 0; step <= 10; step++) {
        const [idx, k, s, v] = rows[1 + i * 11 + step].split(',').map(Number);
        expect([idx, k, s]).toEqual([i, K, step]);
        // The CSV prints the shortest round-trip form: exact equality with the in-process Float64 value.
        expect(v, `K ${K} step ${step}`).toBe(want.values[step]);
      }
    });
    const j = JSON.parse(readFileSync(join(dir, 'one/sweep.json'), 'utf8'));
    const all = rows.slice(1).map((l) => l.split(',').map(Number));
    const max = all.reduce((a, b) => (b[3] > a[3] ? b : a));
    expect(j.best).toEqual({ params: { K: max[1] }, step: max[2], psnr: max[3] });
    expect(j.noisy).toBe(all[0][3]);
    expect(j.fixed).toEqual({ sigma: 1, dt: 0.2 });
    expect(j.vary).toEqual([{ name: 'K', lo: 0.02, hi: 0.2, count: 4 }]);
    expect(j.settings.length).toBe(4);
    const info = execFileSync('/usr/bin/python3', ['-c', 'import sys\nfrom PIL import Image\nim = Image.open(sys.argv[1])\nprint(im.mode, im.size[0], im.size[1])', join(dir, 'one/sweep.png')], { encoding: 'utf8' });
    expect(info.trim()).toBe('RGB 940 554');
  });

  it('two --vary: a param × param grid, the same best with 1 worker as with 2', () => {
    const a = fluxel('sweep', EP, ...common, '--vary', 'K=0.02:0.2:3', '--vary', 'sigma=0:2:3', '--workers', '1', '--out', 'two1', '--metric', 'ssim');
    const b = fluxel('sweep', EP, ...common, '--vary', 'K=0.02:0.2:3', '--vary', 'sigma=0:2:3', '--workers', '2', '--out', 'two2', '--metric', 'ssim');
    expect(a.code, a.stderr).toBe(0);
    expect(b.code, b.stderr).toBe(0);
    expect(readFileSync(join(dir, 'two1/sweep.csv'), 'utf8')).toBe(readFileSync(join(dir, 'two2/sweep.csv'), 'utf8'));
    const j = JSON.parse(readFileSync(join(dir, 'two2/sweep.json'), 'utf8'));
    expect(j.settings.map((s: { params: object }) => s.params)[4]).toEqual({ K: 0.11, sigma: 1 });
    expect(Object.keys(j.best)).toEqual(['params', 'step', 'ssim']);
    expect(existsSync(join(dir, 'two2/sweep.png'))).toBe(true);
  });

  it('on a terminal draws a progress bar of settings (script(1) gives the child a pseudo-terminal)', () => {
    const cmd = `${process.execPath} ${CLI} sweep ${EP} ${common.join(' ')} --vary K=0.02:0.2:3 --workers 2 --out tty`;
    const r = spawnSync('script', ['-qec', cmd, '/dev/null'], { cwd: dir, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/fluxel sweep \[[^\]]*\] 3\/3 settings/);
  });

  it('refuses out-of-range values, a missing scene and SSIM on tiny scenes with one clear line', () => {
    const r = fluxel('sweep', EP, ...common, '--vary', 'K=0.001:0.2:4');
    expect(r.code).toBe(2);
    expect(r.stderr.split('\n')[0]).toBe('fluxel sweep: --vary K=0.001:0.2: outside the declared range [0.005, 0.5] of K.');
    expect(fluxel('sweep', EP, '--vary', 'K=0.01:0.2:4').stderr).toMatch(/--scene NAME is required/);
    expect(fluxel('sweep', EP, '--scene', 'card', '--size', '8x8', '--metric', 'ssim', '--vary', 'K=0.01:0.2:2').stderr).toMatch(/SSIM needs at least 11×11 pixels; the scene is 8×8/);
    expect(fluxel('sweep', EP, ...common).code).toBe(2);
    const broken = join(dir, 'broken.fluxel');
    writeFileSync(broken, 'grid 2d\nstep dt = 0.1\nsteps 2\nfield u = image\nu\' = u + nope\n');
    const b = fluxel('sweep', broken, ...common, '--vary', 'dt=0.1:0.2:2');
    expect(b.code).toBe(1);
    expect(b.stderr).toMatch(/broken\.fluxel:5:\d+ error/);
  });
});

describe('fluxel fit', () => {
  it('one free name (golden-section): deterministic, inside the range, and its reported optimum recomputes exactly', () => {
    const args = ['fit', EP, ...common, '--free', 'K', '--json'];
    const a = fluxel(...args), b = fluxel(...args);
    expect(a.code, a.stderr).toBe(0);
    const ja = JSON.parse(a.stdout), jb = JSON.parse(b.stdout);
    delete ja.seconds;
    delete jb.seconds;
    expect(ja).toEqual(jb);
    expect(ja.method).toBe('golden-section');
    expect(ja.values.K >= 0.005 && ja.values.K <= 0.5).toBe(true);
    const again = evaluateSetting(scheme, task, { K: ja.values.K });
    expect([ja.step, ja.psnr]).toEqual([again.bestStep, again.best]);
    expect(ja.psnr).toBe(Math.max(...ja.history.map((h: { best: number }) => h.best)));
    expect(ja.psnr).toBeGreaterThan(ja.noisy);
  });

  it('two free names (Nelder–Mead): at least as good as the declared values, text output', () => {
    const r = fluxel('fit', EP, ...common, '--free', 'K,sigma', '--json', '--max-evals', '40');
    expect(r.code, r.stderr).toBe(0);
    const j = JSON.parse(r.stdout);
    expect(j.method).toBe('nelder-mead');
    expect(j.evaluations).toBeLessThanOrEqual(41);
    // The search starts from the declared values (K 0.06, sigma 1), so it can only improve on them.
    expect(j.psnr).toBeGreaterThanOrEqual(evaluateSetting(scheme, task, {}).best);
    const text = fluxel('fit', EP, ...common, '--free', 'K,sigma', '--max-evals', '40');
    expect(text.code).toBe(0);
    expect(text.stdout).toMatch(/^ {2}K = [\d.e-]+ {3}\(range \[0\.005, 0\.5\]\)$/m);
    expect(text.stdout).toMatch(/^ {2}best step \d+: psnr [\d.]+ dB {3}\(noisy input [\d.]+ dB\)$/m);
    expect(text.stdout).toMatch(/--set K=[\d.e-]+ --set sigma=[\d.e-]+ --steps \d+/);
  });

  it('refuses a name without a declared range', () => {
    const file = join(dir, 'norange.fluxel');
    writeFileSync(file, 'grid 2d\nparam a = 1\nstep dt = 0.1\nsteps 2\nfield u = image\nu\' = u + a * dt * sum n in N4: u[n] - u\n');
    const r = fluxel('fit', file, ...common, '--free', 'a');
    expect(r.code).toBe(2);
    expect(r.stderr.split('\n')[0]).toMatch(/^fluxel fit: --free a: the scheme declares no range for a/);
  });
});
