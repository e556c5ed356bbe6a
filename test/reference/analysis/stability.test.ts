// Reference checks of src/analysis/stability.ts against published stability limits and hand derivations,
// each with its source beside it. Schemes are written in the notation and parsed with parseAndCheck.
// Imports only the notation front door and the analysis modules.
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';
import { analyseStability, linearStencil, linearisedEstimate, stabilityDiagnostics } from '../../../src/analysis/stability';
import { symbol } from '../../../src/analysis/stabilityVonNeumann';

function scheme(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  const errors = r.diagnostics.filter((d) => d.severity === 'error');
  if (!r.scheme) throw new Error(`scheme did not check: ${errors.map((d) => `${d.code}: ${d.message}`).join('; ')}`);
  return r.scheme;
}

function close(actual: number | null | undefined, expected: number, tol: number, what: string): void {
  expect(actual, `${what}: got null/undefined, expected ${expected}`).not.toBeNull();
  expect(actual, `${what}: got undefined`).not.toBeUndefined();
  const err = Math.abs((actual as number) - expected);
  expect(err <= tol, `${what}: got ${actual}, expected ${expected}, |error| ${err} > tolerance ${tol}`).toBe(true);
}

const heat1d = (h: number, dt: number) => `grid 1d
spacing ${h}
boundary reflect
step dt = ${dt}
steps 10
field u = image
u' = u + dt / h^2 * sum n in N2: u[n] - u
`;

const heat2d = (h: number, dt: number) => `grid 2d
spacing ${h}
boundary reflect
step dt = ${dt}
steps 10
field u = image
u' = u + dt / h^2 * sum n in N4: u[n] - u
`;

describe('linear diffusion (von Neumann)', () => {
  // Morton & Mayers, Numerical Solution of Partial Differential Equations, 2nd ed. 2005, §2.6–2.7:
  // explicit FTCS for u_t = u_xx is stable iff r = dt/h² ≤ 1/2; LeVeque, Finite Difference Methods for ODEs
  // and PDEs, 2007, §9.6 (same bound from the amplification factor). So dt ≤ h²/2.
  it('1d FTCS heat: dt ≤ h²/2 for several h, worst frequency θ = π', () => {
    for (const h of [1, 0.5, 2]) {
      const r = analyseStability(scheme(heat1d(h, 0.1 * h * h)));
      expect(r.method).toBe('von-neumann');
      close(r.limit, (h * h) / 2, 1e-12 * h * h, `1d heat limit, h = ${h}`);
      close(r.positivityLimit, (h * h) / 2, 1e-12 * h * h, `1d heat positivity limit, h = ${h}`);
      const th = (r.worst as { theta: number[] }).theta;
      close(Math.abs(th[0]), Math.PI, 1e-9, 'worst frequency |θ|');
      expect(r.stable).toBe(true);
    }
  });

  // Morton & Mayers 2005, §3.2 (two space dimensions): the 5-point explicit scheme needs dt/h² ≤ 1/4;
  // LeVeque 2007, §9.7 likewise.
  it('2d 5-point heat: dt ≤ h²/4, worst at (π, π)', () => {
    for (const h of [1, 0.5]) {
      const r = analyseStability(scheme(heat2d(h, 0.2 * h * h)));
      close(r.limit, (h * h) / 4, 1e-12, `2d heat limit, h = ${h}`);
      close(r.positivityLimit, (h * h) / 4, 1e-12, `2d heat positivity limit, h = ${h}`);
      const th = (r.worst as { theta: number[] }).theta;
      close(Math.abs(th[0]), Math.PI, 1e-9, 'worst θx');
      close(Math.abs(th[1]), Math.PI, 1e-9, 'worst θy');
    }
  });

  it('declared dt above the limit is reported unstable with a step-over-limit warning', () => {
    const s = scheme(heat2d(1, 0.3));
    const r = analyseStability(s);
    expect(r.stable).toBe(false);
    const d = stabilityDiagnostics(s, r);
    const w = d.find((x) => x.code === 'step-over-limit');
    expect(w?.severity).toBe('warning');
    expect(w?.range).toEqual(s.stepRange);
  });

  // Morton & Mayers 2005, §2.7, eq. for the FTCS amplification factor: λ(k) = 1 − 4 r sin²(kh/2).
  it('amplification factor G(θ) = 1 − 4 r sin²(θ/2) at sampled θ', () => {
    const r = 0.3;
    const w = linearStencil(scheme(heat1d(1, r)));
    expect(w).not.toBeNull();
    for (const th of [0, 0.3, 1, Math.PI / 2, 2.5, Math.PI, -1.7]) {
      const g = symbol(w!, [th]);
      close(g.re[0], 1 - 4 * r * Math.sin(th / 2) ** 2, 1e-14, `Re G(${th})`);
      close(g.im[0], 0, 1e-14, `Im G(${th})`);
    }
  });

  // Isotropic 9-point Laplacian (1/6h²)[1 4 1; 4 −20 4; 1 4 1] (e.g. LeVeque 2007, §3.5, eq. 3.17).
  // Derivation (ours): its symbol is L(a, b) = (1/6)(8 cos a + 8 cos b + 4 cos a cos b − 20). At (π, π):
  // (−8 − 8 + 4 − 20)/6 = −16/3; at (π, 0): (−8 + 8 − 4 − 20)/6 = −4; it is most negative at (π, π), so
  // |1 + r L| ≤ 1 needs r ≤ 2/(16/3) = 3/8. The centre weight 1 − 20r/6 ≥ 0 needs r ≤ 3/10: the positivity limit.
  it('9-point isotropic Laplacian: von Neumann 3/8, positivity 3/10', () => {
    const r = analyseStability(scheme(`grid 2d
spacing 1
boundary periodic
step dt = 0.2
steps 10
field u = image
u' = u + dt / (6 * h^2) * (4 * (u[1,0] + u[-1,0] + u[0,1] + u[0,-1]) + u[1,1] + u[-1,-1] + u[1,-1] + u[-1,1] - 20 * u)
`));
    expect(r.method).toBe('von-neumann');
    close(r.limit, 3 / 8, 1e-12, '9-point von Neumann limit');
    close(r.positivityLimit, 3 / 10, 1e-12, '9-point positivity limit');
    const th = (r.worst as { theta: number[] }).theta;
    close(Math.abs(th[0]), Math.PI, 1e-6, 'worst θx');
    close(Math.abs(th[1]), Math.PI, 1e-6, 'worst θy');
  });

  it('dt between the positivity and von Neumann limits gives an info about overshoots', () => {
    const s = scheme(`grid 2d
spacing 1
boundary periodic
step dt = 0.35
steps 10
field u = image
u' = u + dt / 6 * (4 * (u[1,0] + u[-1,0] + u[0,1] + u[0,-1]) + u[1,1] + u[-1,-1] + u[1,-1] + u[-1,1] - 20 * u)
`);
    const r = analyseStability(s);
    expect(r.stable).toBe(true);
    expect(stabilityDiagnostics(s, r).map((d) => d.code)).toContain('step-over-positivity-limit');
  });

  // The linearised method must reproduce the von Neumann limit on a linear scheme (numerics.md).
  it('linearised estimate on the 2d heat scheme reproduces 1/4', () => {
    const e = linearisedEstimate(scheme(heat2d(1, 0.2)));
    close(e?.limit, 0.25, 1e-9, 'linearised limit of 2d heat');
  });
});

describe('transport and waves', () => {
  // Courant, Friedrichs, Lewy, "Über die partiellen Differenzengleichungen der mathematischen Physik",
  // Math. Ann. 100, 1928; LeVeque 2007, §10.7: first-order upwind for u_t + c u_x = 0 is stable iff c·dt/h ≤ 1.
  it('first-order upwind: dt ≤ h/c', () => {
    for (const [c, h] of [[0.8, 1], [2, 0.5]]) {
      const r = analyseStability(scheme(`grid 1d
spacing ${h}
boundary periodic
param c = ${c} in [0, 3]
step dt = 0.1
steps 10
field u = image
u' = u - dt * c / h * (u - u[-1])
`));
      close(r.limit, h / c, 1e-9, `upwind limit c = ${c}, h = ${h}`);
    }
  });

  // LeVeque 2007, §10.5: forward-time centred-space for advection is unstable for every dt > 0
  // (|G|² = 1 + (c dt/h)² sin²θ).
  it('FTCS central advection: no stable dt', () => {
    const s = scheme(`grid 1d
spacing 1
boundary periodic
step dt = 0.1
steps 10
field u = image
u' = u - dt * (u[1] - u[-1]) / 2
`);
    const r = analyseStability(s);
    expect(r.limit).toBeNull();
    expect(r.stable).toBe(false);
    expect(stabilityDiagnostics(s, r).map((d) => d.code)).toContain('no-stable-step');
  });

  // CFL 1928 for the wave equation; derivation (ours, common practice): symplectic Euler v' = v + dt c² L u,
  // u' = u + dt v' has G = [[1 + dt²c²L̂, dt], [dt c² L̂, 1]] with det G = 1 and trace 2 + dt²c²L̂; |eig| ≤ 1
  // iff trace ≥ −2, i.e. dt²c²|L̂| ≤ 4 with |L̂| ≤ 8/h² (5-point, at (π, π)): c·dt/h ≤ 1/√2.
  it('wave equation in velocity form, 5-point Laplacian: c·dt/h ≤ 1/√2 (marginal at the limit)', () => {
    for (const [c, h] of [[1, 1], [0.5, 2]]) {
      const r = analyseStability(scheme(`grid 2d
spacing ${h}
boundary reflect
param c = ${c} in [0.1, 2]
step dt = 0.1
steps 10
field u = exp(-((x - 8)^2 + (y - 8)^2) / 8)
field v = 0
v' = v + dt * c^2 / h^2 * sum n in N4: u[n] - u
u' = u + dt * v'
`));
      expect(r.method).toBe('von-neumann');
      close(r.limit, h / (c * Math.SQRT2), 1e-6 * h / c, `wave limit c = ${c}, h = ${h}`);
    }
  });

  // numerics.md ("call equality marginal"): a dt exactly at the limit is stable and reported as marginal; at the
  // wave limit G(π, π) has trace −2 and det 1, a double eigenvalue −1 (derivation above).
  it('dt exactly at the limit is stable and called marginal; 10% below is not marginal', () => {
    const at = (dt: number) => analyseStability(scheme(`grid 2d
spacing 1
boundary reflect
step dt = ${dt}
steps 10
field u = 0
field v = 0
v' = v + dt * sum n in N4: u[n] - u
u' = u + dt * v'
`));
    const r = at(Math.SQRT1_2);
    expect(r.stable).toBe(true);
    expect(r.marginal).toBe(true);
    expect(r.reason).toMatch(/marginal/);
    expect(at(0.9 * Math.SQRT1_2).marginal).toBe(false);
    const h = analyseStability(scheme(heat2d(1, 0.25)));
    expect(h.stable && h.marginal, 'heat at r = 1/4: stable and marginal').toBe(true);
  });
});

describe('edge-preserving diffusion (positivity)', () => {
  const pm = (dims: 1 | 2, g: string, extra = '') => `grid ${dims}d
spacing 1
boundary reflect
param K = 0.06 in [0.005, 0.5]
param sigma = 1 in [0, 3]
step dt = 0.1
steps 10
field u = image
diffusivity g(s) = ${g}
let w = blur(u, sigma)
u' = u + dt * sum n in ${dims === 2 ? 'N4' : 'N2'}: g(w[n] - w) * (u[n] - u)${extra}
`;

  // Weickert, ter Haar Romeny, Viergever, "Efficient and reliable schemes for nonlinear diffusion filtering",
  // IEEE TIP 7(3), 1998, §III (explicit scheme, criteria for discrete scale-space): with 0 ≤ g ≤ 1 on a unit
  // grid in m dimensions the explicit scheme is stable (and positive) for dt ≤ 1/(2m).
  it('Perona–Malik with Catté blur: dt ≤ 1/(2m) in 1d and 2d', () => {
    for (const dims of [1, 2] as const) {
      const r = analyseStability(scheme(pm(dims, '1 / (1 + (s / K)^2)')));
      expect(r.method).toBe('positivity');
      close(r.limit, 1 / (2 * dims), 1e-12, `PM limit in ${dims}d`);
    }
  });

  // Same source; the linearised method on a flat image must give 1/(2m) (numerics.md).
  it('linearised estimate on a flat image gives 1/(2m)', () => {
    for (const dims of [1, 2] as const) {
      const s = scheme(pm(dims, 'exp(-(s / K)^2)'));
      const width = 16;
      const height = dims === 2 ? 16 : 1;
      const state = { width, height, fields: [new Float64Array(width * height).fill(0.4)] };
      close(linearisedEstimate(s, { state })?.limit, 1 / (2 * dims), 1e-9, `linearised flat-image limit in ${dims}d`);
    }
  });

  // Derivation (ours, from the same criterion): with weights dt·g/len(n)² over N8, the axis links weigh g ≤ 1 and
  // the diagonal links g/2 ≤ 1/2, so the centre weight is 1 − dt(4·1 + 4·½) = 1 − 6dt ≥ 0: dt ≤ 1/6.
  it('8-neighbour scheme with diagonal weights 1/2: dt ≤ 1/6', () => {
    const r = analyseStability(scheme(`grid 2d
spacing 1
boundary reflect
param K = 0.08 in [0.005, 0.5]
step dt = 0.1
steps 10
field u = image
diffusivity g(s) = exp(-(s / K)^2)
u' = u + dt * sum n in N8: g(u[n] - u) / len(n)^2 * (u[n] - u)
`));
    expect(r.method).toBe('positivity');
    close(r.limit, 1 / 6, 1e-12, '8-neighbour limit');
  });

  it('an equivalent flux-difference spelling classifies the same', () => {
    const r = analyseStability(scheme(`grid 2d
spacing 1
boundary reflect
param K = 0.06 in [0.005, 0.5]
step dt = 0.1
steps 10
field u = image
diffusivity g(s) = 1 / (1 + (s / K)^2)
u' = u + dt * (g(u[1,0] - u) * (u[1,0] - u) - g(u - u[-1,0]) * (u - u[-1,0]) + g(u[0,1] - u) * (u[0,1] - u) - g(u - u[0,-1]) * (u - u[0,-1]))
`));
    expect(r.method).toBe('positivity');
    close(r.limit, 0.25, 1e-12, 'flux-form limit');
  });

  // Perona & Malik, "Scale-space and edge detection using anisotropic diffusion", IEEE PAMI 12(7), 1990,
  // §III: for g = 1/(1 + (s/K)²) the flux s·g(s) is largest at s = K; for g = exp(−(s/K)²) at s = K/√2
  // (d/ds of s·e^{−s²/K²} vanishes where 1 − 2s²/K² = 0).
  it('flux peaks: K and K/√2', () => {
    const a = analyseStability(scheme(pm(2, '1 / (1 + (s / K)^2)')));
    close(a.diffusivities[0].fluxPeak, 0.06, 1e-9, 'flux peak of 1/(1+(s/K)^2)');
    const b = analyseStability(scheme(pm(2, 'exp(-(s / K)^2)')));
    close(b.diffusivities[0].fluxPeak, 0.06 / Math.SQRT2, 1e-9, 'flux peak of exp(-(s/K)^2)');
  });

  // Same source: the peak is reported to the user as an info on the diffusivity's declaration. The regularised
  // TV diffusivity 1/√(ε² + s²) has the flux s/√(ε² + s²), increasing for every s > 0 (derivative ε²/(ε² + s²)^{3/2}
  // > 0, ours), so it has no peak and gets no such diagnostic.
  it('the flux peak is an info diagnostic on the diffusivity; a monotone flux gets none', () => {
    const s = scheme(pm(2, '1 / (1 + (s / K)^2)'));
    const d = stabilityDiagnostics(s, analyseStability(s)).filter((x) => x.code === 'flux-peak');
    expect(d.length).toBe(1);
    expect(d[0].severity).toBe('info');
    expect(d[0].range).toEqual(s.functions.get('g')!.decl.range);
    expect(d[0].message).toContain('0.06');
    const tv = scheme(pm(2, '1 / sqrt(0.01 + s^2)'));
    const rt = analyseStability(tv);
    expect(rt.diffusivities[0].fluxPeak).toBeNull();
    expect(stabilityDiagnostics(tv, rt).map((x) => x.code)).not.toContain('flux-peak');
  });

  // Common practice (forward–backward diffusion): g(s) = 1 − s² is negative for |s| > 1, which makes the
  // continuous problem backward parabolic (ill-posed) there. Differences of [0, 1] data stay within [−1, 1].
  it('g(s) = 1 − s² is flagged as backward diffusion for |s| > 1', () => {
    const s = scheme(pm(2, '1 - s^2'));
    const r = analyseStability(s);
    const neg = r.diffusivities[0].negative;
    expect(neg.length).toBe(2);
    expect(neg[0][0]).toBe(-Infinity);
    close(neg[0][1], -1, 1e-8, 'upper end of the negative range below 0');
    close(neg[1][0], 1, 1e-8, 'lower end of the negative range above 0');
    expect(neg[1][1]).toBe(Infinity);
    const d = stabilityDiagnostics(s, r).find((x) => x.code === 'backward-diffusion');
    expect(d?.severity).toBe('warning');
    expect(d?.range).toEqual(s.functions.get('g')!.decl.range);
    // On the argument range [−1, 1] the diffusivity stays in [0, 1], so the positivity bound is still 1/4.
    expect(r.method).toBe('positivity');
    close(r.limit, 0.25, 1e-9, 'positivity limit of 1 − s² on [−1, 1]');
  });
});

describe('reaction–diffusion (linearised)', () => {
  // Gray–Scott: a_t = Da Δa − a b² + F(1 − a), b_t = Db Δb + a b² − (F + k) b (Pearson, "Complex patterns in
  // a simple system", Science 261, 1993). Derivation (ours): at the trivial state a = 1, b = 0 the linearisation
  // is diagonal, M_a = Da L̂ − F and M_b = Db L̂ − (F + k) with L̂ ∈ [−8, 0] (5-point, h = 1), so forward Euler
  // needs dt ≤ 2/(8 Da + F) and dt ≤ 2/(8 Db + F + k); the diffusion part alone needs dt ≤ 1/(4 max(Da, Db)).
  it('Gray–Scott at the trivial state: linearised limit and diffusion limit', () => {
    const Da = 0.2;
    const Db = 0.1;
    const F = 0.037;
    const k = 0.06;
    const r = analyseStability(scheme(`grid 2d
spacing 1
boundary periodic
param Da = ${Da} in [0.05, 0.25]
param Db = ${Db} in [0.02, 0.2]
param F = ${F} in [0.01, 0.08]
param k = ${k} in [0.04, 0.07]
step dt = 1
steps 10
field a = 1
field b = 0
a' = a + dt * (Da * (sum n in N4: a[n] - a) - a * b^2 + F * (1 - a))
b' = b + dt * (Db * (sum n in N4: b[n] - b) + a * b^2 - (F + k) * b)
`));
    expect(r.method).toBe('linearised');
    expect(r.estimate).toBe(true);
    close(r.limit, Math.min(2 / (8 * Da + F), 2 / (8 * Db + F + k)), 1e-9, 'Gray–Scott linearised limit');
    close(r.diffusionLimit, 1 / (4 * Math.max(Da, Db)), 1e-9, 'Gray–Scott diffusion limit');
  });
});

// Several identical, uncoupled 5-point heat fields have the single field's limit r ≤ 1/4 (Morton & Mayers 2005,
// ch. 2; the amplification matrix is diagonal); a scheme whose updates leave every field unchanged is stable for
// every dt (G = I). Both once suffered from repeated eigenvalues found by root iteration.
describe('repeated eigenvalues of uncoupled fields', () => {
  it('four uncoupled heat fields: limit 1/4 exactly', () => {
    const src = ['grid 2d', 'step dt = 0.2', 'steps 3', ...['a', 'b', 'c', 'd'].flatMap((f) => [`field ${f} = 0`, `${f}' = ${f} + dt * sum n in N4: ${f}[n] - ${f}`])].join('\n');
    const r = analyseStability(parseAndCheck(src).scheme!);
    expect(r.method).toBe('von-neumann');
    expect(Math.abs((r.limit ?? NaN) - 0.25) <= 1e-9, `limit ${r.limit}, expected 0.25 within 1e-9`).toBe(true);
  });

  it('three fields kept constant: stable for every dt, no growth reported', () => {
    const src = ['grid 2d', 'step dt = 0.1', 'steps 3', ...['a', 'b', 'c'].flatMap((f) => [`field ${f} = 0`, `${f}' = ${f}`])].join('\n');
    const r = analyseStability(parseAndCheck(src).scheme!);
    expect(r.unconditional).toBe(true);
    expect(r.stable).toBe(true);
  });
});
