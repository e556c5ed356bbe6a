// The frequency map: |G(θ)| against closed forms, the unstable region and its edge, and the isotropy error.
import { describe, expect, it } from 'vitest';
import { frequencyMap, frequencyMapJson } from '../../../src/analysis/spectrum';
import { schemeOf } from '../engine/util';

const heat2d = (dt: number) => `grid 2d\nspacing 1\nboundary reflect\nstep dt = ${dt}\nsteps 1\nfield u = image\nu' = u + dt / h^2 * sum n in N4: u[n] - u\n`;
const nine = `grid 2d\nspacing 1\nboundary reflect\nstep dt = 0.1\nsteps 1\nfield u = image\nu' = u + dt / (6 * h^2) * (4 * (u[1,0] + u[-1,0] + u[0,1] + u[0,-1]) + u[1,1] + u[-1,1] + u[1,-1] + u[-1,-1] - 20 * u)\n`;

describe('frequency map', () => {
  it('5-point heat: |G| = |1 − 4r(sin²(θx/2) + sin²(θy/2))| at every sample', () => {
    // Von Neumann amplification of FTCS in 2d: Morton & Mayers 2005, §3.2 (r = dt/h²).
    const r = 0.2;
    const m = frequencyMap(schemeOf(heat2d(r)), { samples: 33 });
    expect(m.width).toBe(33);
    expect(m.axis[0]).toBeCloseTo(-Math.PI, 15);
    expect(m.axis[16]).toBe(0);
    for (let row = 0; row < m.height; row++) for (let col = 0; col < m.width; col++) {
      const tx = m.axis[col], ty = m.axis[row];
      const g = Math.abs(1 - 4 * r * (Math.sin(tx / 2) ** 2 + Math.sin(ty / 2) ** 2));
      expect(m.amplitude[row * m.width + col]).toBeCloseTo(g, 13);
    }
    expect(m.unstableCount).toBe(0);
    expect(m.colourRange.hi).toBe(1);
    expect(m.linear).toBe(true);
  });

  it('above the limit dt = 1/4 the corner (±π, ±π) is unstable and the edge separates it from the rest', () => {
    const m = frequencyMap(schemeOf(heat2d(0.3)), { samples: 65 });
    expect(m.unstableCount).toBeGreaterThan(0);
    expect(m.unstable[0]).toBe(1); // (−π, −π)
    expect(m.unstable[32 * 65 + 32]).toBe(0); // θ = 0
    expect(m.maxAmplitude).toBeCloseTo(1.4, 12); // |1 − 8·0.3|
    expect(Math.abs(m.worstTheta[0])).toBeCloseTo(Math.PI, 12);
    let edges = 0;
    for (let k = 0; k < m.edge.length; k++) edges += m.edge[k];
    expect(edges).toBeGreaterThan(0);
    // Every edge cell has a neighbour on the other side of |G| = 1.
    const json = frequencyMapJson(m);
    expect(JSON.parse(JSON.stringify(json)).amplitude.length).toBe(65 * 65);
  });

  it('isotropy: the 9-point Laplacian’s symbol error hardly depends on the direction, the 5-point one’s does', () => {
    // The 9-point operator's leading error is a multiple of Δ² (isotropic); the 5-point one's is
    // (h²/12)(u_xxxx + u_yyyy), which depends on the direction (Patra & Karttunen, "Stencils with isotropic
    // discretization error for differential operators", Numer. Methods PDE 22, 2006; from memory).
    const r = 0.6;
    const m5 = frequencyMap(schemeOf(heat2d(0.1)), { samples: 9, radius: r });
    const m9 = frequencyMap(schemeOf(nine), { samples: 9, radius: r });
    expect(m5.isotropy!.spread).toBeGreaterThan(0.001);
    expect(m9.isotropy!.spread).toBeLessThan(m5.isotropy!.spread / 20);
    // Along the x axis the 5-point relative error is 1 − (2 − 2cos θ)/θ² (exact symbol).
    const acc = m5.accuracy!;
    for (let k = 0; k < acc.theta.length; k += 9) {
      const t = acc.theta[k];
      expect(acc.relError[k]).toBeCloseTo(Math.abs((2 - 2 * Math.cos(t)) / (t * t) - 1), 12);
    }
  });

  it('1d upwind: |G|² = 1 − 2ν(1 − ν)(1 − cos θ)', () => {
    // LeVeque 2007, Finite Difference Methods for ODEs and PDEs, §10.5 (von Neumann analysis of upwind).
    const nu = 0.7;
    const m = frequencyMap(schemeOf(`grid 1d\nspacing 1\nboundary periodic\nstep dt = ${nu}\nsteps 1\nfield u = image\nu' = u - dt / h * (u - u[-1])\n`), { samples: 65 });
    expect(m.height).toBe(1);
    for (let c = 0; c < m.width; c++) {
      const th = m.axis[c];
      expect(m.amplitude[c]).toBeCloseTo(Math.sqrt(1 - 2 * nu * (1 - nu) * (1 - Math.cos(th))), 13);
    }
  });
});

describe('amplitude over θ and dt (1d picture)', () => {
  it('1d FTCS: θ = π turns unstable exactly above dt = h²/2', async () => {
    // Morton & Mayers 2005, §2.6: |G(π)| = |1 − 4r| ≤ 1 iff r = dt/h² ≤ 1/2.
    const { amplitudeOverDt } = await import('../../../src/analysis/spectrum');
    const s = schemeOf(`grid 1d\nspacing 1\nboundary reflect\nstep dt = 0.3\nsteps 1\nfield u = image\nu' = u + dt / h^2 * sum n in N2: u[n] - u\n`);
    const dts = [0.1, 0.3, 0.49, 0.51, 0.7];
    const d = amplitudeOverDt(s, dts, { samples: 21 });
    expect(d.height).toBe(5);
    const last = d.width - 1; // θ = π
    dts.forEach((dt, r) => {
      expect(d.amplitude[r * d.width + last]).toBeCloseTo(Math.abs(1 - 4 * dt), 12);
      expect(d.unstable[r * d.width + last]).toBe(dt > 0.5 ? 1 : 0);
    });
    expect(d.edge[2 * d.width + last] + d.edge[3 * d.width + last]).toBe(2);
  });
});

describe('frozen coefficients', () => {
  it('Perona–Malik on the flat state has the 5-point heat map (g(0) = 1), and says where it froze', () => {
    const pm = schemeOf(`grid 2d\nspacing 1\nboundary reflect\nparam K = 0.1\nstep dt = 0.2\nsteps 1\nfield u = image\ndiffusivity g(s) = 1 / (1 + (s / K)^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`);
    const a = frequencyMap(pm, { samples: 17 });
    const b = frequencyMap(schemeOf(heat2d(0.2)), { samples: 17 });
    expect(a.linear).toBe(false);
    expect(a.at).toEqual({ x: 32, y: 32 });
    for (let k = 0; k < a.amplitude.length; k++) expect(a.amplitude[k]).toBeCloseTo(b.amplitude[k], 14);
  });
});
