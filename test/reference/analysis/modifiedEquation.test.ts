// Reference checks of src/analysis/modifiedEquation.ts (what a stencil approximates) against published
// modified equations and truncation errors, each with its source beside it; plus the acceptance
// diagnostics (a missing /h^2 with spacing 0.5, a stray + 0.01*u).
import { describe, expect, it } from 'vitest';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';
import { modifiedEquation, modifiedEquationDiagnostics, type Term } from '../../../src/analysis/modifiedEquation';
import { impulseResponse } from '../../../src/analysis/kernel';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';

function scheme(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error(r.diagnostics.map((d) => `${d.code}: ${d.message}`).join('; '));
  return r.scheme;
}

const coef = (ts: readonly Term[] | undefined, i: number, j: number) => ts?.find((t) => t.i === i && t.j === j)?.coef ?? 0;

function close(actual: number, expected: number, what: string, rel = 1e-10): void {
  const tol = rel * Math.max(1, Math.abs(expected));
  expect(Math.abs(actual - expected) <= tol, `${what}: got ${actual}, expected ${expected}`).toBe(true);
}

const heat1d = (h: number, dt: number) => `grid 1d\nspacing ${h}\nboundary periodic\nstep dt = ${dt}\nsteps 1\nfield u = image\nu' = u + dt / h^2 * sum n in N2: u[n] - u\n`;
const heat2d = (h: number, dt: number) => `grid 2d\nspacing ${h}\nboundary periodic\nstep dt = ${dt}\nsteps 1\nfield u = image\nu' = u + dt / h^2 * sum n in N4: u[n] - u\n`;
const nine = (h: number, dt: number) => `grid 2d\nspacing ${h}\nboundary periodic\nstep dt = ${dt}\nsteps 1\nfield u = image\nu' = u + dt / (6 * h^2) * (4 * (u[1,0] + u[-1,0] + u[0,1] + u[0,-1]) + u[1,1] + u[-1,1] + u[1,-1] + u[-1,-1] - 20 * u)\n`;
const upwind = (a: number, h: number, dt: number) => `grid 1d\nspacing ${h}\nboundary periodic\nparam a = ${a}\nstep dt = ${dt}\nsteps 1\nfield u = image\nu' = u - a * dt / h * (u - u[-1])\n`;
const laxWendroff = (a: number, h: number, dt: number) => `grid 1d\nspacing ${h}\nboundary periodic\nparam a = ${a}\nstep dt = ${dt}\nsteps 1\nfield u = image\nu' = u - a * dt / (2 * h) * (u[1] - u[-1]) + (a * dt / h)^2 / 2 * (u[1] - 2 * u + u[-1])\n`;

describe('diffusion stencils', () => {
  // LeVeque, Finite Difference Methods for Ordinary and Partial Differential Equations, SIAM 2007, §1.5 and §2.5
  // (from memory for the section numbers): the 3-point second difference has truncation error (h²/12)u'''' + O(h⁴);
  // in 2d the 5-point Laplacian's is (h²/12)(u_xxxx + u_yyyy). The moments of L = (update − identity)/dt are
  // exactly these coefficients.
  it('5-point Laplacian: u_t = Δu, leading error (h²/12)(u_xxxx + u_yyyy), order 2 in space', () => {
    for (const h of [1, 0.5, 0.25]) {
      const me = modifiedEquation(scheme(heat2d(h, 0.1 * h * h)));
      const f = me.fields[0];
      close(coef(f.moments[2], 2, 0), 1, `u_xx, h = ${h}`);
      close(coef(f.moments[2], 0, 2), 1, `u_yy, h = ${h}`);
      expect(coef(f.moments[2], 1, 1)).toBe(0);
      close(coef(f.moments[4], 4, 0), (h * h) / 12, `u_xxxx, h = ${h}`);
      close(coef(f.moments[4], 0, 4), (h * h) / 12, `u_yyyy, h = ${h}`);
      expect(coef(f.moments[4], 2, 2)).toBe(0);
      expect(f.source).toBe(0);
      expect(f.drift).toEqual([0, 0]);
      expect(f.kind).toBe('isotropic diffusion');
      expect(f.orderSpace).toBe(2);
      expect(f.orderTime).toBe(1);
      close(f.leadingError!.spacePart.find((t) => t.i === 4)!.coef, (h * h) / 12, 'space part of the leading error');
    }
    const me = modifiedEquation(scheme(heat2d(1, 0.2)));
    expect(me.summary).toContain('u_t = 1·Δu (isotropic diffusion)');
    expect(me.summary).toContain('(h²/12)(u_xxxx + u_yyyy)');
  });

  // Warming & Hyett, "The modified equation approach to the stability and accuracy analysis of finite-difference
  // methods", J. Comput. Phys. 14 (1974); Morton & Mayers 2005, §2.10 (from memory): FTCS for u_t = u_xx has the
  // modified equation u_t = u_xx + (h²/12 − dt/2)u_xxxx + …, so r = dt/h² = 1/6 cancels the leading error.
  it('1d FTCS: modified equation u_t = u_xx + (h²/12 − dt/2) u_xxxx; r = 1/6 makes it fourth order', () => {
    for (const [h, dt] of [[1, 0.2], [0.5, 0.05], [2, 1.5]]) {
      const f = modifiedEquation(scheme(heat1d(h, dt))).fields[0];
      close(coef(f.modified![2], 2, 0), 1, 'u_xx');
      close(coef(f.modified![4], 4, 0), (h * h) / 12 - dt / 2, `u_xxxx at h = ${h}, dt = ${dt}`);
      close(coef(f.leadingError!.timePart, 4, 0), -dt / 2, 'time part −dt/2');
    }
    const f6 = modifiedEquation(scheme(heat1d(1, 1 / 6))).fields[0];
    expect(f6.leadingError!.order).toBe(6);
  });

  // The isotropic 9-point Laplacian (weights 1/6·[1 4 1; 4 −20 4; 1 4 1]/h²) has leading error (h²/12)Δ²u,
  // a multiple of Δ²u and so direction-independent: Patra & Karttunen, "Stencils with isotropic discretization
  // error for differential operators", Numer. Methods PDE 22 (2006) (from memory); also common practice.
  it('isotropic 9-point Laplacian: leading error (h²/12)·Δ²u', () => {
    for (const h of [1, 0.5]) {
      const f = modifiedEquation(scheme(nine(h, 0.05 * h * h))).fields[0];
      close(coef(f.moments[2], 2, 0), 1, 'u_xx');
      close(coef(f.moments[2], 0, 2), 1, 'u_yy');
      const m4 = f.moments[4];
      close(coef(m4, 4, 0), (h * h) / 12, 'u_xxxx');
      close(coef(m4, 0, 4), (h * h) / 12, 'u_yyyy');
      close(coef(m4, 2, 2), (2 * h * h) / 12, 'u_xxyy = 2 × u_xxxx (Δ² = ∂x⁴ + 2∂x²∂y² + ∂y⁴)');
      expect(f.orderSpace).toBe(2);
    }
    expect(modifiedEquation(scheme(nine(1, 0.05))).summary).toContain('(h²/12)·Δ²u');
  });
});

describe('transport stencils', () => {
  // Warming & Hyett 1974, and LeVeque 2007, §10.9 (modified equations, from memory for the section): first-order
  // upwind for u_t + a u_x = 0 (a > 0, ν = a dt/h) has the modified equation u_t + a u_x = (a h/2)(1 − ν) u_xx.
  it('first-order upwind: u_t + a·u_x = (a·h/2)(1 − ν)·u_xx, first order in space and time', () => {
    for (const [a, h, dt] of [[1, 1, 0.5], [0.8, 0.5, 0.3], [2, 0.25, 0.1]]) {
      const nu = (a * dt) / h;
      const f = modifiedEquation(scheme(upwind(a, h, dt))).fields[0];
      close(coef(f.modified![1], 1, 0), -a, 'u_x coefficient −a');
      close(f.drift[0], a, 'drift velocity a');
      close(coef(f.modified![2], 2, 0), ((a * h) / 2) * (1 - nu), `numerical diffusion at ν = ${nu}`);
      expect(f.principalOrders).toEqual([1]);
      expect(f.leadingError!.order).toBe(2);
      close(coef(f.leadingError!.spacePart, 2, 0), (a * h) / 2, 'space part a·h/2');
      close(coef(f.leadingError!.timePart, 2, 0), (-a * a * dt) / 2, 'time part −a²dt/2');
      expect(f.orderSpace).toBe(1);
      expect(f.orderTime).toBe(1);
    }
  });

  // The same numerical diffusion seen in a run: N upwind steps on an impulse give a binomial distribution
  // with variance N·ν(1 − ν) cells² (common practice), which is 2·D·t/h² for D = (a h/2)(1 − ν), t = N·dt.
  it('upwind: the modified equation’s diffusion equals the impulse response’s spread', () => {
    const [a, h, dt, N] = [0.7, 0.5, 0.4, 30];
    const s = scheme(upwind(a, h, dt));
    const D = coef(modifiedEquation(s).fields[0].modified![2], 2, 0);
    const ir = impulseResponse(s, N)!;
    close(ir.variance[0], (2 * D * N * dt) / (h * h), 'variance in cells²', 1e-9);
  });

  // Warming & Hyett 1974; LeVeque 2007, §10.9 (from memory for the section): Lax–Wendroff has the modified
  // equation u_t + a u_x = −(a h²/6)(1 − ν²) u_xxx (dispersive), second order in space and time.
  it('Lax–Wendroff: no u_xx term, leading dispersive term −(a·h²/6)(1 − ν²)·u_xxx', () => {
    for (const [a, h, dt] of [[1, 1, 0.5], [0.8, 0.5, 0.3], [1.5, 0.25, 0.1]]) {
      const nu = (a * dt) / h;
      const f = modifiedEquation(scheme(laxWendroff(a, h, dt))).fields[0];
      close(coef(f.modified![1], 1, 0), -a, 'u_x coefficient −a');
      expect(Math.abs(coef(f.modified![2], 2, 0))).toBeLessThan(1e-12);
      expect(f.leadingError!.order).toBe(3);
      close(coef(f.modified![3], 3, 0), -((a * h * h) / 6) * (1 - nu * nu), `u_xxx at ν = ${nu}`);
      expect(f.orderSpace).toBe(2);
      expect(f.orderTime).toBe(2);
    }
  });
});

describe('diagnostics (issue acceptance)', () => {
  const codesOf = (text: string) => {
    const s = scheme(text);
    return modifiedEquationDiagnostics(s, modifiedEquation(s));
  };

  it('a deliberate missing /h^2 with spacing 0.5: the diffusion coefficient changes with h', () => {
    const text = `grid 2d\nspacing 0.5\nboundary reflect\nstep dt = 0.05\nsteps 10\nfield u = image\nu' = u + dt * sum n in N4: u[n] - u\n`;
    const d = codesOf(text).filter((x) => x.code === 'coefficient-scales-with-h');
    expect(d).toHaveLength(1);
    expect(d[0].severity).toBe('warning');
    expect(d[0].message).toContain('h^2');
    expect(d[0].message).toContain('0.25 at h = 0.5');
    expect(d[0].range.start.line).toBe(7);
    expect(d[0].range.end.line).toBe(7);
    // With /h^2 the same scheme is clean.
    expect(codesOf(text.replace('dt *', 'dt / h^2 *')).map((x) => x.code)).toEqual([]);
  });

  it('a stray + 0.01*u: the operator\'s weights do not sum to 0 (a source), scaling like 1/dt', () => {
    const text = `grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.2\nsteps 10\nfield u = image\nu' = u + dt / h^2 * (sum n in N4: u[n] - u) + 0.01*u\n`;
    const d = codesOf(text).filter((x) => x.code === 'source-term');
    expect(d).toHaveLength(1);
    expect(d[0].severity).toBe('warning');
    expect(d[0].message).toContain('0.05');
    expect(d[0].message).toContain('not multiplied by dt');
    expect(d[0].range.start.line).toBe(7);
  });

  it('unexpected drift and anisotropic diffusion', () => {
    const drift = `grid 1d\nspacing 1\nboundary reflect\nstep dt = 0.1\nsteps 1\nfield u = image\nu' = u + dt * (1.1 * u[1] - 2 * u + 0.9 * u[-1])\n`;
    expect(codesOf(drift).map((x) => x.code)).toEqual(['unexpected-drift']);
    const aniso = `grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.1\nsteps 1\nfield u = image\nu' = u + dt * (2 * (u[1,0] + u[-1,0] - 2 * u) + (u[0,1] + u[0,-1] - 2 * u))\n`;
    expect(codesOf(aniso).map((x) => x.code)).toEqual(['anisotropic-diffusion']);
    // Transport schemes drift on purpose: upwind and Lax–Wendroff get no drift warning.
    expect(codesOf(upwind(1, 1, 0.5)).map((x) => x.code)).toEqual([]);
    expect(codesOf(laxWendroff(1, 1, 0.5)).map((x) => x.code)).toEqual([]);
  });

  it('no bundled example gets a warning from these checks', () => {
    const dir = join(__dirname, '../../../examples');
    for (const f of readdirSync(dir).filter((x) => x.endsWith('.fluxel'))) {
      const warnings = codesOf(readFileSync(join(dir, f), 'utf8')).filter((d) => d.severity !== 'info');
      expect(warnings.map((d) => `${f}: ${d.message}`)).toEqual([]);
    }
  });
});

describe('source terms on purpose and by mistake', () => {
  const diags = (text: string) => {
    const r = parseAndCheck(text);
    return modifiedEquationDiagnostics(r.scheme!, modifiedEquation(r.scheme!)).filter((d) => d.code === 'source-term');
  };
  it('a stray + 0.01*u in Perona–Malik (nonlinear) is still a warning: it scales like 1/dt', () => {
    const d = diags("grid 2d\nspacing 1\nboundary reflect\nparam K = 0.1\nstep dt = 0.2\nsteps 10\nfield u = image\ndiffusivity g(s) = 1 / (1 + (s / K)^2)\nu' = u + dt * (sum n in N4: g(u[n] - u) * (u[n] - u)) + 0.01*u\n");
    expect(d.map((x) => x.severity)).toEqual(['warning']);
  });
  it('the reaction of Allen–Cahn (u − u³, multiplied by dt) is information: ∂/∂u = 1 − 3u² = 0.25 at u = 0.5', () => {
    // The linearisation of u − u³ at u = 0.5 (the flat state's value for image fields) is 1 − 3·0.25 = 0.25 (by hand).
    const d = diags("grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.1\nsteps 10\nfield u = image\nu' = u + dt * ((sum n in N4: u[n] - u) + u - u^3)\n");
    expect(d.map((x) => x.severity)).toEqual(['info']);
    expect(d[0].message).toContain('0.25');
  });
});
