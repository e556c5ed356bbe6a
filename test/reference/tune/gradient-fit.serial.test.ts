// Acceptance (issue 12, gradient-based fitting): on the edge-preserving example with a noisy scene, the projected-
// gradient fit (exact derivatives from the engine's sensitivity mode) scores at least as well as the best point of
// a 20×20 sweep grid over the same box, stays inside the bounds, and needs fewer engine runs than the grid.
//
// Outside references: the grid is what `fluxel sweep --vary K=0.005:0.5:20 --vary sigma=0:3:20` evaluates (the
// same expansion and scoring, src/tune/grid.ts and evaluate.ts), an exhaustive search the fit must not lose to; the
// method is D. P. Bertsekas, "On the Goldstein–Levitin–Polyak gradient projection method", IEEE TAC 21(2), 1976.
// Counting engine runs: a grid point is 1 run; a fit evaluation carries P = 2 tangents, and its dual kernels do the
// value's work plus one tangent's per name, so it counts as 1 + P = 3 runs (FitResult.runs). Measured cost, though
// (test/bench/sensitivity.bench.ts, same process): a K,sigma run takes 4.3× (64²) to 5.3× (256²) a plain run, since
// the sigma tangent needs the blur's derivative (two more separable filter passes per step) and the K tangent a
// blurred tangent; so the test also checks the fit against the grid at 6 plain runs per evaluation.
// Measured (survey scene 64×64, noise 0.1, seed 2, 60 steps, Float32, PSNR): grid best 27.0043 dB at K = 0.0310526,
// sigma = 0.473684 (step 31); fit 27.3276 dB at K = 0.01354, sigma = 0.6744 (step 60), 36 evaluations = 108 runs
// (about 190 plain runs by measured cost) against the grid's 400. Nelder–Mead (the derivative-free method) reaches 27.3275 dB in 60 evaluations.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeScene } from '../../../src/images/scenes';
import { parseAndCheck } from '../../../src/notation';
import { evaluateSetting } from '../../../src/tune/evaluate';
import { runFit } from '../../../src/tune/fit';
import { expandGrid, parseFree, parseVary } from '../../../src/tune/grid';
import { TunePool } from '../../../src/tune/pool';

const source = readFileSync(join(__dirname, '../../../examples/edge-preserving.fluxel'), 'utf8');
const scheme = parseAndCheck(source).scheme!;
const scene = makeScene('survey', { width: 64, height: 64, noise: 0.1, seed: 2 });
const problem = { source, image: scene.noisy, reference: scene.clean };
const STEPS = 60;

describe('gradient fit against a 20×20 sweep grid (edge-preserving, noisy survey scene)', () => {
  it('scores at least as well as the grid\'s best, inside the box, with fewer engine runs', async () => {
    const axes = [parseVary(scheme, 'K=0.005:0.5:20'), parseVary(scheme, 'sigma=0:3:20')];
    const grid = expandGrid(axes);
    expect(grid.length).toBe(400);
    const pool = await TunePool.open(2, { ...problem, steps: STEPS, metric: 'psnr', dtype: 'float32' });
    let curves;
    try {
      curves = await pool.evaluate(grid);
    } finally {
      await pool.close();
    }
    let bi = 0;
    curves.forEach((c, i) => {
      if (c.best > curves[bi].best) bi = i;
    });
    const gridBest = curves[bi].best;

    const free = parseFree(scheme, 'K,sigma');
    const fit = await runFit(problem, { free, steps: STEPS, metric: 'psnr', workers: 1, method: 'gradient', maxEvaluations: 60 });
    expect(fit.method).toBe('projected-gradient');
    expect(fit.logScale).toEqual(['K']);
    expect(fit.best, `fit ${fit.best} dB at K = ${fit.values.K}, sigma = ${fit.values.sigma}; grid best ${gridBest} dB at ${JSON.stringify(grid[bi])}`).toBeGreaterThanOrEqual(gridBest);
    for (const f of free) {
      expect(fit.values[f.name] >= f.lo && fit.values[f.name] <= f.hi, `${f.name} = ${fit.values[f.name]} in [${f.lo}, ${f.hi}]`).toBe(true);
      for (const h of fit.history) expect(h.values[f.name] >= f.lo && h.values[f.name] <= f.hi).toBe(true);
    }
    expect(fit.runs).toBe(3 * fit.evaluations);
    expect(fit.runs, `${fit.evaluations} evaluations = ${fit.runs} runs against the grid's ${grid.length}`).toBeLessThan(grid.length);
    expect(6 * fit.evaluations, `${fit.evaluations} evaluations at the measured cost of at most 6 plain runs each`).toBeLessThan(grid.length);
    expect(fit.stop).toBe('tolerance');
    // The reported score is what a plain run of the fitted values gives. Float32 semantics (numerics.md): the plain
    // run's SIMD kernels compute in Float32, the dual kernels in Float64, both store Float32, so they agree to
    // rounding (measured 1.0e-7 dB), not bit for bit.
    const again = evaluateSetting(scheme, { ...problem, steps: STEPS, metric: 'psnr' }, fit.values);
    expect(again.bestStep).toBe(fit.step);
    expect(Math.abs(again.best - fit.best)).toBeLessThan(1e-4);
    expect(again.best).toBeGreaterThanOrEqual(gridBest);
  });
});
