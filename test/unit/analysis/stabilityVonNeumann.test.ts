// Unit checks of the von Neumann machinery in src/analysis/stabilityVonNeumann.ts: the folded, tabulated
// frequency scan against a brute-force scan of the full grid, and the closed-form positivity limit of weights
// quadratic in dt against hand-solved quadratics.
// Imports only the analysis modules.
import { describe, expect, it } from 'vitest';
import { cmatrix, eigenvalues } from '../../../src/analysis/stabilityEigen';
import {
  buildDtModel, positivityLimit, symbol, thetaGrid, vonNeumann,
  type MatrixEntry, type MatrixStencil,
} from '../../../src/analysis/stabilityVonNeumann';

function close(actual: number, expected: number, tol: number, what: string): void {
  const err = Math.abs(actual - expected);
  expect(err <= tol, `${what}: got ${actual}, expected ${expected}, |error| ${err} > tolerance ${tol}`).toBe(true);
}

/** Symplectic Euler for the wave equation with the 5-point Laplacian: v' = v + dt·c²·L u, u' = u + dt·v'. */
function waveWeights(c: number) {
  const n4 = [[1, 0], [-1, 0], [0, 1], [0, -1]];
  return (dt: number): MatrixStencil => {
    // Field 0 = v, field 1 = u.
    const e: MatrixEntry[] = [{ i: 0, j: 0, dx: 0, dy: 0, w: 1 }, { i: 0, j: 1, dx: 0, dy: 0, w: -4 * dt * c * c }];
    for (const [dx, dy] of n4) e.push({ i: 0, j: 1, dx, dy, w: dt * c * c });
    e.push({ i: 1, j: 1, dx: 0, dy: 0, w: 1 - 4 * dt * dt * c * c }, { i: 1, j: 0, dx: 0, dy: 0, w: dt });
    for (const [dx, dy] of n4) e.push({ i: 1, j: 1, dx, dy, w: dt * dt * c * c });
    return { n: 2, entries: e };
  };
}

/** Spectral radius of G(θ, dt) over the full, unfolded thetaGrid (both signs of θ, both ±π). */
function bruteRadius(w: MatrixStencil, perHalf: number): number {
  let r = 0;
  const m = cmatrix(w.n);
  for (const th of thetaGrid(2, perHalf)) {
    for (const [a, b] of eigenvalues(symbol(w, th, m))) r = Math.max(r, Math.hypot(a, b));
  }
  return r;
}

describe('vonNeumann (folded, tabulated scan)', () => {
  // CFL 1928 / common practice: the scheme above is stable iff c·dt ≤ 1/√2 (h = 1); derivation in
  // test/reference/analysis/stability.test.ts. The brute-force scan confirms the folded grid lost no frequency.
  it('wave scheme: limit 1/(c√2), and the full grid agrees on either side of it', () => {
    for (const c of [1, 0.7]) {
      const weights = waveWeights(c);
      const model = buildDtModel(2, weights, 0.1);
      expect(model.poly?.length, 'weights are quadratic in dt').toBe(3);
      const r = vonNeumann(model, 2, 0.1);
      const want = 1 / (c * Math.SQRT2);
      close(r.limit, want, 1e-6 * want, `wave limit, c = ${c}`);
      const below = bruteRadius(weights(0.97 * want), 16);
      const above = bruteRadius(weights(1.03 * want), 16);
      expect(below <= 1 + 1e-7, `full-grid spectral radius below the limit: ${below}`).toBe(true);
      expect(above > 1 + 1e-3, `full-grid spectral radius above the limit: ${above}`).toBe(true);
    }
  });

  // Common practice: 1d upwind u' = u − ν(u − u[−1]) has G = 1 − ν + ν e^{−iθ}, stable iff 0 ≤ ν ≤ 1.
  it('1d upwind: closed form over the folded grid gives ν = 1', () => {
    const model = buildDtModel(1, (dt) => ({ n: 1, entries: [{ i: 0, j: 0, dx: 0, dy: 0, w: 1 - 0.8 * dt }, { i: 0, j: 0, dx: -1, dy: 0, w: 0.8 * dt }] }), 1);
    close(vonNeumann(model, 1, 1).limit, 1.25, 1e-9, 'upwind limit for c = 0.8');
  });
});

describe('positivityLimit with weights quadratic in dt', () => {
  const single = (c0: number, c1: number, c2: number) =>
    buildDtModel(1, (t) => ({ n: 1, entries: [{ i: 0, j: 0, dx: 0, dy: 0, w: c0 + c1 * t + c2 * t * t }] }), 0.1);

  // Hand-solved quadratics (from memory): 1 − 3t + 2t² = (1 − t)(1 − 2t) is negative on (1/2, 1);
  // 1 + t − t² has its positive root at (1 + √5)/2; (1 − t)² touches 0 without turning negative;
  // t − t² (zero constant term) turns negative after t = 1.
  it('first sign change of hand-solved quadratics', () => {
    close(positivityLimit(single(1, -3, 2), 0.1) as number, 0.5, 1e-12, '1 − 3t + 2t²');
    close(positivityLimit(single(1, 1, -1), 0.1) as number, (1 + Math.sqrt(5)) / 2, 1e-12, '1 + t − t²');
    expect(positivityLimit(single(1, -2, 1), 0.1), '(1 − t)² never turns negative').toBe(Infinity);
    close(positivityLimit(single(0, 1, -1), 0.1) as number, 1, 1e-12, 't − t²');
  });

  // The wave scheme's u-row has centre weight 1 − 4c²dt², but the v-row has −4c²dt at once: no dt keeps every
  // weight ≥ 0 (the wave scheme is not an averaging scheme).
  it('wave scheme: no positive dt keeps all weights ≥ 0', () => {
    expect(positivityLimit(buildDtModel(2, waveWeights(1), 0.1), 0.1)).toBeNull();
  });
});
