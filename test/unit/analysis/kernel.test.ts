// Kernel weights and impulse responses from src/analysis/kernel.ts, checked against hand-derived weights
// and the heat kernel's spread. Each check names its source.
// Imports only the notation front door and the analysis modules.
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';
import { impulseResponse, kernelAt } from '../../../src/analysis/kernel';

function scheme(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error(r.diagnostics.map((d) => `${d.code}: ${d.message}`).join('; '));
  return r.scheme;
}

function close(actual: number, expected: number, tol: number, what: string): void {
  const err = Math.abs(actual - expected);
  expect(err <= tol, `${what}: got ${actual}, expected ${expected}, |error| ${err} > tolerance ${tol}`).toBe(true);
}

const heat2d = (h: number, dt: number) => `grid 2d
spacing ${h}
boundary reflect
step dt = ${dt}
steps 10
field u = image
u' = u + dt / h^2 * sum n in N4: u[n] - u
`;

function ramp(width: number, height: number): Float64Array {
  const a = new Float64Array(width * height);
  for (let k = 0; k < a.length; k++) a[k] = ((k * 37) % 11) / 10;
  return a;
}

describe('kernelAt', () => {
  // Morton & Mayers, Numerical Solution of PDEs, 2nd ed. 2005, §3.2: the explicit 5-point scheme is
  // U' = (1 − 4r) U + r (four neighbours), r = dt/h².
  it('2d heat: weights exactly (r, r, r, r, 1 − 4r), anywhere, including the border', () => {
    const h = 0.5;
    const dt = 0.05;
    const rr = dt / (h * h);
    const s = scheme(heat2d(h, dt));
    const state = { width: 6, height: 5, fields: [ramp(6, 5)] };
    for (const [x, y] of [[2, 2], [0, 0], [5, 4]]) {
      const k = kernelAt(s, state, x, y);
      expect(k.radius).toBe(1);
      const g = k.grid;
      close(g[4], 1 - 4 * rr, 1e-15, 'centre');
      for (const i of [1, 3, 5, 7]) close(g[i], rr, 1e-15, `axis neighbour ${i}`);
      for (const i of [0, 2, 6, 8]) close(g[i], 0, 0, `diagonal ${i}`);
      close(k.sum, 1, 1e-14, 'sum of weights');
      expect(k.negativeCentre).toBe(false);
    }
  });

  it('a centre weight below zero is flagged', () => {
    const k = kernelAt(scheme(heat2d(1, 0.3)), { width: 4, height: 4, fields: [ramp(4, 4)] }, 1, 1);
    close(k.centre, 1 - 4 * 0.3, 1e-15, 'centre');
    expect(k.negativeCentre).toBe(true);
  });

  // Hand derivation (ours) for Perona–Malik without blur: frozen weights are dt·g(u[n] − u) off centre and
  // 1 − dt·Σ g(u[n] − u) at the centre, with g = 1/(1 + (s/K)²).
  it('Perona–Malik frozen weights equal dt·g(difference)', () => {
    const K = 0.1;
    const dt = 0.2;
    const s = scheme(`grid 1d
spacing 1
boundary reflect
param K = ${K} in [0.01, 1]
step dt = ${dt}
steps 10
field u = image
diffusivity g(s) = 1 / (1 + (s / K)^2)
u' = u + dt * sum n in N2: g(u[n] - u) * (u[n] - u)
`);
    const u = Float64Array.of(0.1, 0.3, 0.35, 0.9);
    const g = (d: number) => 1 / (1 + (d / K) ** 2);
    const k = kernelAt(s, { width: 4, height: 1, fields: [u] }, 2, 0);
    close(k.grid[0], dt * g(0.3 - 0.35), 1e-15, 'left weight');
    close(k.grid[2], dt * g(0.9 - 0.35), 1e-15, 'right weight');
    close(k.grid[1], 1 - dt * (g(-0.05) + g(0.55)), 1e-15, 'centre weight');
    close(k.value, 0.35 + dt * (g(-0.05) * -0.05 + g(0.55) * 0.55), 1e-15, 'new value');
    // Linearised weights add the derivative of the flux: d/du[n] of g(d)·d = g(d) + g'(d)·d (common practice).
    const lin = kernelAt(s, { width: 4, height: 1, fields: [u] }, 2, 0, { linearised: true });
    const dflux = (d: number) => (1 - (d / K) ** 2) / (1 + (d / K) ** 2) ** 2;
    close(lin.grid[2], dt * dflux(0.55), 1e-12, 'linearised right weight');
  });

  it('a primed read composes stencils: the wave update of u carries dt² c² times the Laplacian', () => {
    // u' = u + dt·v' with v' = v + dt·c²·Σ(u[n] − u): ∂u'/∂u[n] = dt²c², ∂u'/∂v = dt (derivation, ours).
    const s = scheme(`grid 2d
spacing 1
boundary reflect
param c = 0.7 in [0.1, 2]
step dt = 0.3
steps 10
field u = 0
field v = 0
v' = v + dt * c^2 * sum n in N4: u[n] - u
u' = u + dt * v'
`);
    const zero = new Float64Array(16);
    const k = kernelAt(s, { width: 4, height: 4, fields: [zero, zero] }, 1, 1, { field: 'u' });
    close(k.grid[1], 0.09 * 0.49, 1e-15, 'u neighbour weight');
    close(k.centre, 1 - 4 * 0.09 * 0.49, 1e-15, 'u centre weight');
    const vw = k.entries.find((e) => e.field === 'v');
    close(vw?.weight ?? NaN, 0.3, 1e-15, 'weight on v');
  });
});

describe('impulseResponse', () => {
  // Heat kernel (common practice): u_t = Δu spreads a point source into a Gaussian of variance 2t per axis.
  // The FTCS step adds exactly 2r cells² of variance per axis (its weights r, 1 − 2r, r along each axis have
  // second moment 2r), so after n steps σ·h = √(2 n r) h = √(2t) exactly.
  it('2d heat: equivalent σ equals √(2t), mass 1, centred', () => {
    const s = scheme(heat2d(0.5, 0.05));
    const r = impulseResponse(s, 20);
    expect(r).not.toBeNull();
    close(r!.sum, 1, 1e-12, 'mass');
    for (const m of r!.mean) close(m, 0, 1e-12, 'centre of mass');
    for (const sg of r!.sigma) close(sg, r!.heatSigma, 1e-12, 'σ against √(2t)');
    expect(r!.truncated).toBe(false);
  });

  // Common practice: the upwind step u' = (1 − ν)u + ν u[−1] moves each unit of mass one cell right with
  // probability ν, so after n steps the response is Binomial(n, ν): mean nν, variance nν(1 − ν) (the numerical
  // diffusion of upwinding; LeVeque, Finite Difference Methods for ODEs and PDEs, 2007, ch. 10, modified equations;
  // section number from memory).
  it('1d upwind: the response drifts by nν cells with variance nν(1 − ν)', () => {
    const s = scheme(`grid 1d
spacing 1
boundary periodic
param c = 0.8 in [0, 2]
step dt = 1
steps 10
field u = image
u' = u - dt * c / h * (u - u[-1])
`);
    const r = impulseResponse(s, 60);
    expect(r).not.toBeNull();
    close(r!.sum, 1, 1e-12, 'mass');
    close(r!.mean[0], 60 * 0.8, 1e-9, 'drift nν');
    close(r!.variance[0], 60 * 0.8 * 0.2, 1e-9, 'variance nν(1 − ν)');
  });

  it('returns null for a nonlinear scheme', () => {
    const s = scheme(`grid 1d
spacing 1
boundary reflect
step dt = 0.1
steps 10
field u = image
u' = u + dt * u * (1 - u)
`);
    expect(impulseResponse(s, 5)).toBeNull();
  });
});
