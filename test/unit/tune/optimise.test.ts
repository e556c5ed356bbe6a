// Unit tests for the bounded minimisers of src/tune/optimise.ts on functions whose minima are known in closed form.
import { describe, expect, it } from 'vitest';
import { goldenSection, nelderMead, projectedGradient, type BatchGradientObjective, type BatchObjective } from '../../../src/tune/optimise';

/** Wraps a plain function as a batch objective and records every point it was asked about. */
function objective(f: (x: number[]) => number) {
  const seen: number[][] = [];
  const batch: BatchObjective = async (points) => {
    seen.push(...points.map((p) => p.slice()));
    return points.map(f);
  };
  return { batch, seen };
}

// Rosenbrock's function (H. H. Rosenbrock, "An automatic method for finding the greatest or least value of a
// function", The Computer Journal 3(3), 1960): minimum 0 at (1, 1); a standard hard case for simplex methods.
const rosenbrock = ([x, y]: number[]) => 100 * (y - x * x) ** 2 + (1 - x) ** 2;

describe('nelderMead in a box', () => {
  it('finds the Rosenbrock minimum (1, 1) inside [-2, 2] × [-1, 3] from (-1.2, 1)', async () => {
    // (-1.2, 1) is the classical starting point of Rosenbrock 1960.
    const { batch, seen } = objective(rosenbrock);
    const r = await nelderMead(batch, { lo: [-2, -1], hi: [2, 3] }, { start: [-1.2, 1], xTolerance: 1e-7, fTolerance: 1e-12, maxEvaluations: 2000 });
    const tol = 1e-3;
    expect(Math.abs(r.x[0] - 1), `x = ${r.x[0]}, tolerance ${tol}`).toBeLessThan(tol);
    expect(Math.abs(r.x[1] - 1), `y = ${r.x[1]}, tolerance ${tol}`).toBeLessThan(tol);
    expect(r.f, `f = ${r.f}`).toBeLessThan(1e-6);
    expect(r.stop).toBe('tolerance');
    // Every evaluated point respects the bounds (projection).
    for (const p of seen) expect(p[0] >= -2 && p[0] <= 2 && p[1] >= -1 && p[1] <= 3, `point ${p}`).toBe(true);
  });

  it('with the box cutting Rosenbrock off at x ≤ 0.5, finds the constrained minimum on the face (0.5, 0.25)', async () => {
    // On the face x = 0.5 the best y is x² = 0.25 (f = 0.25); inside the box f only grows towards smaller x
    // along the valley y = x², so the constrained minimum is (0.5, 0.25) (worked by hand).
    const { batch } = objective(rosenbrock);
    const r = await nelderMead(batch, { lo: [-2, -1], hi: [0.5, 3] }, { start: [-1.2, 1], xTolerance: 1e-7, fTolerance: 1e-12, maxEvaluations: 2000 });
    expect(Math.abs(r.x[0] - 0.5), `x = ${r.x[0]}`).toBeLessThan(1e-4);
    expect(Math.abs(r.x[1] - 0.25), `y = ${r.x[1]}`).toBeLessThan(1e-3);
    expect(Math.abs(r.f - 0.25), `f = ${r.f}`).toBeLessThan(1e-6);
  });

  it('puts the minimum of a quadratic whose free minimum lies outside the box on the nearest corner', async () => {
    // f = (x − 3)² + (y + 1)² on [0, 2]²: the free minimum (3, −1) lies outside; the box minimum is the
    // projection (2, 0) with f = 2 (a separable convex function: minimise each coordinate on its interval).
    const { batch } = objective(([x, y]) => (x - 3) ** 2 + (y + 1) ** 2);
    const r = await nelderMead(batch, { lo: [0, 0], hi: [2, 2] }, { start: [1, 1], maxEvaluations: 300 });
    expect(r.x[0]).toBeCloseTo(2, 6);
    expect(r.x[1]).toBeCloseTo(0, 6);
    expect(Math.abs(r.f - 2), `f = ${r.f}`).toBeLessThan(1e-6);
  });

  it('finds an interior minimum of a tilted quadratic in three variables', async () => {
    // f = Σ (x_i − c_i)² + 0.5 (x_0 − c_0)(x_1 − c_1): positive definite, minimum at c = (0.3, −0.2, 0.7).
    const c = [0.3, -0.2, 0.7];
    const { batch } = objective((x) => x.reduce((s, v, i) => s + (v - c[i]) ** 2, 0) + 0.5 * (x[0] - c[0]) * (x[1] - c[1]));
    const r = await nelderMead(batch, { lo: [-1, -1, -1], hi: [1, 1, 1] }, { start: [0, 0, 0], xTolerance: 1e-6, fTolerance: 1e-12, maxEvaluations: 1000 });
    r.x.forEach((v, i) => expect(Math.abs(v - c[i]), `x${i} = ${v}, expected ${c[i]}`).toBeLessThan(1e-4));
  });

  it('is deterministic and stops at the evaluation limit', async () => {
    const a = await nelderMead(objective(rosenbrock).batch, { lo: [-2, -2], hi: [2, 2] }, { start: [-1.2, 1], maxEvaluations: 25 });
    const b = await nelderMead(objective(rosenbrock).batch, { lo: [-2, -2], hi: [2, 2] }, { start: [-1.2, 1], maxEvaluations: 25 });
    expect(a).toEqual(b);
    expect(a.stop).toBe('max-evaluations');
    // A shrink evaluates n points at once, so the limit can be passed by at most n − 1.
    expect(a.evaluations).toBeGreaterThanOrEqual(25);
    expect(a.evaluations).toBeLessThanOrEqual(26);
  });

  it('treats NaN as the worst value and refuses empty boxes', async () => {
    const { batch } = objective(([x]) => (x > 0.8 ? Number.NaN : (x - 0.5) ** 2));
    const r = await nelderMead(batch, { lo: [0], hi: [1] }, { start: [0.9], maxEvaluations: 200 });
    expect(Math.abs(r.x[0] - 0.5), `x = ${r.x[0]}`).toBeLessThan(1e-3);
    await expect(nelderMead(batch, { lo: [1], hi: [1] }, { start: [1] })).rejects.toThrow(/lo < hi/);
  });
});

describe('goldenSection', () => {
  it('finds the interior minimum of (x − 0.3)² on [0, 1] to the requested bracket width', async () => {
    const { batch } = objective(([x]) => (x - 0.3) ** 2);
    const r = await goldenSection(batch, 0, 1, { xTolerance: 1e-6 });
    expect(Math.abs(r.x[0] - 0.3), `x = ${r.x[0]}`).toBeLessThan(1e-6);
    // The bracket shrinks by 1/φ ≈ 0.618 per evaluation (Kiefer 1953): about log(1e-6)/log(0.618) ≈ 29 steps.
    expect(r.evaluations).toBeLessThanOrEqual(4 + 30);
  });

  it('returns the end point exactly when the minimum lies on the boundary', async () => {
    const { batch } = objective(([x]) => x);
    const r = await goldenSection(batch, 2, 5);
    expect(r.x[0]).toBe(2);
    expect(r.f).toBe(2);
    const up = await goldenSection(objective(([x]) => -x).batch, 2, 5);
    expect(up.x[0]).toBe(5);
  });

  it('finds the minimum of |x − 1.7| (not differentiable there) on [0, 3]', async () => {
    const r = await goldenSection(objective(([x]) => Math.abs(x - 1.7)).batch, 0, 3, { xTolerance: 1e-5 });
    expect(Math.abs(r.x[0] - 1.7), `x = ${r.x[0]}`).toBeLessThan(1e-4);
  });
});

/** A value-and-gradient objective from plain functions, recording every point asked about. */
function gradObjective(f: (x: number[]) => number, g: (x: number[]) => number[]) {
  const seen: number[][] = [];
  const batch: BatchGradientObjective = async (points) => {
    seen.push(...points.map((p) => p.slice()));
    return points.map((p) => ({ f: f(p), g: g(p) }));
  };
  return { batch, seen };
}

const rosenbrockGrad = ([x, y]: number[]) => [-400 * x * (y - x * x) - 2 * (1 - x), 200 * (y - x * x)];

describe('projectedGradient in a box (Bertsekas 1976, Armijo rule along the projection arc)', () => {
  it('finds the interior minimum of a tilted, badly scaled quadratic', async () => {
    // f = 50 (x − 0.3)² + (y + 0.2)² + 2 (x − 0.3)(y + 0.2): positive definite (50·1 > 1), minimum at (0.3, −0.2).
    const f = ([x, y]: number[]) => 50 * (x - 0.3) ** 2 + (y + 0.2) ** 2 + 2 * (x - 0.3) * (y + 0.2);
    const g = ([x, y]: number[]) => [100 * (x - 0.3) + 2 * (y + 0.2), 2 * (y + 0.2) + 2 * (x - 0.3)];
    const { batch, seen } = gradObjective(f, g);
    const r = await projectedGradient(batch, { lo: [-1, -1], hi: [1, 1] }, { start: [0.9, 0.9], gTolerance: 1e-9, xTolerance: 1e-12, maxEvaluations: 500 });
    expect(Math.abs(r.x[0] - 0.3), `x = ${r.x[0]}`).toBeLessThan(1e-6);
    expect(Math.abs(r.x[1] + 0.2), `y = ${r.x[1]}`).toBeLessThan(1e-6);
    expect(r.stop).toBe('tolerance');
    for (const p of seen) expect(Math.abs(p[0]) <= 1 && Math.abs(p[1]) <= 1, `point ${p}`).toBe(true);
  });

  it('puts a quadratic whose free minimum lies outside the box on the nearest corner, with a zero projected gradient', async () => {
    // f = (x − 3)² + (y + 1)² on [0, 2]²: the box minimum is the projection (2, 0) (separable convex function).
    const { batch } = gradObjective(([x, y]) => (x - 3) ** 2 + (y + 1) ** 2, ([x, y]) => [2 * (x - 3), 2 * (y + 1)]);
    const r = await projectedGradient(batch, { lo: [0, 0], hi: [2, 2] }, { start: [1, 1] });
    expect(r.x).toEqual([2, 0]);
    expect(r.f).toBe(2);
    expect(r.projectedGradient).toBe(0);
    expect(r.stop).toBe('tolerance');
  });

  it('finds the Rosenbrock minimum (1, 1) from (-1.2, 1), and the constrained one (0.5, 0.25) when the box cuts x at 0.5', async () => {
    // Rosenbrock 1960 (see above); the constrained minimum was worked by hand in the Nelder–Mead test.
    const free = await projectedGradient(gradObjective(rosenbrock, rosenbrockGrad).batch, { lo: [-2, -1], hi: [2, 3] }, { start: [-1.2, 1], gTolerance: 1e-8, xTolerance: 1e-12, maxEvaluations: 5000 });
    expect(Math.abs(free.x[0] - 1), `x = ${free.x[0]}`).toBeLessThan(1e-4);
    expect(Math.abs(free.x[1] - 1), `y = ${free.x[1]}`).toBeLessThan(1e-4);
    const cut = await projectedGradient(gradObjective(rosenbrock, rosenbrockGrad).batch, { lo: [-2, -1], hi: [0.5, 3] }, { start: [-1.2, 1], gTolerance: 1e-8, xTolerance: 1e-12, maxEvaluations: 5000 });
    expect(cut.x[0]).toBe(0.5);
    expect(Math.abs(cut.x[1] - 0.25), `y = ${cut.x[1]}`).toBeLessThan(1e-5);
    expect(Math.abs(cut.f - 0.25)).toBeLessThan(1e-8);
  });

  it('never accepts a point that does not decrease f (Armijo), is deterministic, and stops at the evaluation limit', async () => {
    const values: number[] = [];
    const run = () => projectedGradient(async (ps) => ps.map((p) => {
      const v = rosenbrock(p);
      values.push(v);
      return { f: v, g: rosenbrockGrad(p) };
    }), { lo: [-2, -2], hi: [2, 2] }, { start: [-1.2, 1], maxEvaluations: 30 });
    const a = await run();
    const b = await run();
    expect(a).toEqual(b);
    expect(a.stop).toBe('max-evaluations');
    expect(a.evaluations).toBe(30);
    expect(a.f).toBeLessThan(rosenbrock([-1.2, 1]));
    expect(a.f).toBe(Math.min(...values.slice(0, 30)));
  });

  it('treats a NaN value as the worst and backs off', async () => {
    const { batch } = gradObjective(([x]) => (x > 0.8 ? Number.NaN : (x - 0.7) ** 2), ([x]) => [2 * (x - 0.7)]);
    const r = await projectedGradient(batch, { lo: [0], hi: [1] }, { start: [0], gTolerance: 1e-9, xTolerance: 1e-12, maxEvaluations: 200 });
    expect(Math.abs(r.x[0] - 0.7), `x = ${r.x[0]}`).toBeLessThan(1e-6);
  });
});
