// The tuning worker pool (src/tune/pool.ts): worker results equal in-process evaluations bit for bit, whatever
// the number of workers, and a scheme that fails inside a worker rejects with its message. Starts threads: serial.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeScene } from '../../../src/images/scenes';
import { parseAndCheck } from '../../../src/notation';
import { evaluateSetting } from '../../../src/tune/evaluate';
import { expandGrid, parseVary } from '../../../src/tune/grid';
import { TunePool } from '../../../src/tune/pool';
import { FitCancelled, runFit } from '../../../src/tune/fit';

const source = readFileSync(join(__dirname, '../../../examples/edge-preserving.fluxel'), 'utf8');
const scheme = parseAndCheck(source).scheme!;
const scene = makeScene('survey', { width: 40, height: 32, noise: 0.08, seed: 5 });
const task = { image: scene.noisy, reference: scene.clean, steps: 15, metric: 'psnr' as const };

describe('TunePool', () => {
  it('gives the in-process curves, in grid order, with 1 and with 2 workers', async () => {
    const settings = expandGrid([parseVary(scheme, 'K=0.02:0.2:3'), parseVary(scheme, 'sigma=0:2:2')]);
    const want = settings.map((s) => evaluateSetting(scheme, task, s));
    for (const size of [1, 2]) {
      const pool = await TunePool.open(size, { source, ...task, dtype: 'float32' });
      const seen: number[] = [];
      try {
        const got = await pool.evaluate(settings, (i) => seen.push(i));
        expect(got.map((c) => Array.from(c.values)), `${size} worker(s)`).toEqual(want.map((c) => Array.from(c.values)));
        expect(got.map((c) => c.bestStep)).toEqual(want.map((c) => c.bestStep));
        expect(seen.slice().sort((a, b) => a - b)).toEqual(settings.map((_, i) => i));
        // A second batch on the same pool reuses the workers' setup.
        const again = await pool.evaluate([settings[2]]);
        expect(Array.from(again[0].values)).toEqual(Array.from(want[2].values));
      } finally {
        await pool.close();
      }
    }
  });

  it('rejects with the worker\'s message when the source does not check or a setting is refused', async () => {
    const broken = await TunePool.open(1, { source: 'grid 2d\nstep dt = 0.1\nsteps 2\nfield u = image\nu\' = u + nope\n', ...task, dtype: 'float32' });
    try {
      await expect(broken.evaluate([{}])).rejects.toThrow(/^5:\d+: .*nope/);
    } finally {
      await broken.close();
    }
    const pool = await TunePool.open(2, { source, ...task, dtype: 'float32' });
    try {
      await expect(pool.evaluate([{ K: 0.1 }, { lambda: 1 }])).rejects.toThrow(/unknown parameter 'lambda'/);
    } finally {
      await pool.close();
    }
  });

  it('gives the same curves on the backend named in the setup (js) as on the default, within 1e-6 dB', async () => {
    const want = evaluateSetting(scheme, task, { K: 0.1 });
    const pool = await TunePool.open(1, { source, ...task, dtype: 'float32', backend: 'js' });
    try {
      const [got] = await pool.evaluate([{ K: 0.1 }]);
      const diff = Math.max(...Array.from(got.values, (v, i) => Math.abs(v - want.values[i])));
      expect(diff <= 1e-6, `max |PSNR difference| ${diff} dB exceeds 1e-6`).toBe(true);
    } finally {
      await pool.close();
    }
  });
});

describe('runFit cancellation', () => {
  it('rejects with FitCancelled once its signal aborts, starting no evaluation after the batch in flight', async () => {
    const abort = new AbortController();
    let seen = 0;
    const fit = runFit({ source, image: scene.noisy, reference: scene.clean }, {
      free: [{ name: 'K', lo: 0.01, hi: 0.3, value: 0.1 }], steps: 15, metric: 'psnr', workers: 1, maxEvaluations: 40,
      signal: abort.signal,
      onEvaluation: (n) => {
        seen = n;
        if (n === 1) abort.abort();
      },
    });
    await expect(fit).rejects.toBeInstanceOf(FitCancelled);
    // Golden-section's first batch is the two ends and two inner points (optimise.ts); nothing runs after it.
    expect(seen, 'evaluations before the cancel took effect').toBe(4);
  });

  it('does not start when its signal has already aborted', async () => {
    const abort = new AbortController();
    abort.abort();
    await expect(runFit({ source, image: scene.noisy, reference: scene.clean }, { free: [{ name: 'K', lo: 0.01, hi: 0.3, value: 0.1 }], steps: 5, metric: 'psnr', workers: 1, signal: abort.signal })).rejects.toBeInstanceOf(FitCancelled);
  });
});
