// The influence map (adjoint sweep): equals the N-step impulse response for linear schemes (kernel.ts), equals
// the true sensitivity ∂u_N[p]/∂u_0[q] by central differences of engine runs for a nonlinear scheme in 'full'
// mode (a general-purpose check of any derivative, common practice), and equals the explicitly formed product of
// frozen-weight matrices in 'frozen' mode.
import { describe, expect, it } from 'vitest';
import { influenceMap } from '../../../src/analysis/influence';
import { impulseResponse, kernelAt } from '../../../src/analysis/kernel';
import { ghostIndex } from '../../../src/analysis/stabilityState';
import { createRun } from '../../../src/engine/run';
import { recordTrajectory } from '../../../src/engine/trajectory';
import { randomImage, schemeOf } from '../engine/util';

const upwind = `grid 2d\nspacing 1\nboundary periodic\nparam c = 0.6\nstep dt = 0.5\nsteps 4\nfield u = image\nu' = u - dt * c / h * (u - u[-1,0]) + 0.1 * dt * (u[0,1] - 2 * u + u[0,-1])\n`;
const pm = `grid 2d\nspacing 1\nboundary reflect\nparam K = 0.3\nstep dt = 0.2\nsteps 3\nfield u = image\ndiffusivity g(s) = 1 / (1 + (s / K)^2)\nu' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)\n`;

describe('influence map', () => {
  it('linear scheme: the row of p equals the N-step impulse response at offset p − q', () => {
    const s = schemeOf(upwind);
    const N = 4;
    const W = 21, H = 17;
    const traj = recordTrajectory(s, N, { image: randomImage(W, H, 2) });
    const p = { x: 10, y: 8 };
    const inf = influenceMap(s, traj.states, p);
    const ir = impulseResponse(s, N);
    expect(ir).not.toBeNull();
    const R = ir!.radius, size = 2 * R + 1;
    let checked = 0;
    for (let y = 0; y < H; y++) for (let x = 0; x < W; x++) {
      const dx = p.x - x, dy = p.y - y;
      const expected = Math.abs(dx) <= R && Math.abs(dy) <= R ? ir!.grid[(dy + R) * size + dx + R] : 0;
      expect(inf.maps.u[y * W + x]).toBeCloseTo(expected, 14);
      if (expected !== 0) checked++;
    }
    expect(checked).toBeGreaterThan(5);
    expect(inf.sum).toBeCloseTo(1, 12);
  });

  it("nonlinear scheme, mode 'full': equals ∂u_N[p]/∂u_0[q] by central differences", () => {
    const s = schemeOf(pm);
    const W = 7, H = 6, N = 3;
    const img = randomImage(W, H, 9);
    const traj = recordTrajectory(s, N, { image: img });
    const p = { x: 3, y: 2 };
    const inf = influenceMap(s, traj.states, p, { mode: 'full' });
    const eps = 1e-6;
    const endValue = (data: Float64Array) => {
      const run = createRun(s, { image: { width: W, height: H, data }, dtype: 'float64', steps: N });
      run.runSync();
      return run.fieldData(0)[p.y * W + p.x];
    };
    let worst = 0;
    for (let q = 0; q < W * H; q++) {
      const up = Float64Array.from(img.data); up[q] += eps;
      const dn = Float64Array.from(img.data); dn[q] -= eps;
      const fd = (endValue(up) - endValue(dn)) / (2 * eps);
      worst = Math.max(worst, Math.abs(fd - inf.maps.u[q]));
    }
    // Central differences have error O(eps²) plus rounding O(1e-16/eps) ≈ 1e-10.
    expect(worst).toBeLessThan(1e-8);
  });

  it("nonlinear scheme, mode 'frozen': equals the product of explicitly formed frozen-weight matrices", () => {
    const s = schemeOf(pm);
    const W = 6, H = 5, N = 3, n = W * H;
    const traj = recordTrajectory(s, N, { image: randomImage(W, H, 4) });
    // Form J_k (n × n) from kernelAt at every pixel, folding ghost offsets with the reflect rule.
    let row = new Float64Array(n);
    const p = { x: 2, y: 3 };
    row[p.y * W + p.x] = 1;
    for (let k = N - 1; k >= 0; k--) {
      const J = new Float64Array(n * n);
      for (let y = 0; y < H; y++) for (let x = 0; x < W; x++) {
        const kw = kernelAt(s, traj.states[k], x, y);
        for (const e of kw.entries) {
          const gx = ghostIndex(x + e.offset[0], W, { kind: 'reflect' });
          const gy = ghostIndex(y + e.offset[1], H, { kind: 'reflect' });
          J[(y * W + x) * n + gy * W + gx] += e.weight;
        }
      }
      const next = new Float64Array(n);
      for (let i = 0; i < n; i++) if (row[i] !== 0) for (let j = 0; j < n; j++) next[j] += row[i] * J[i * n + j];
      row = next;
    }
    const inf = influenceMap(s, traj.states, p);
    for (let q = 0; q < n; q++) expect(inf.maps.u[q]).toBeCloseTo(row[q], 14);
    // Frozen weights of this scheme sum to 1 at every pixel, so the row does too.
    expect(inf.sum).toBeCloseTo(1, 12);
  });

  it('a pixel outside the grid is refused with a message', () => {
    const s = schemeOf(pm);
    const traj = recordTrajectory(s, 1, { image: randomImage(4, 4, 1) });
    expect(() => influenceMap(s, traj.states, { x: 9, y: 0 })).toThrow(/outside/);
  });
});

describe('influence map of a system with a primed read', () => {
  it('wave (v updated first, u reads v\'): both fields\' maps equal central differences of engine runs', () => {
    // A general-purpose derivative check (common practice): for a linear scheme the difference quotient is exact
    // up to rounding, for any perturbation size.
    const s = schemeOf(`grid 2d\nspacing 1\nboundary reflect\nparam c = 1\nstep dt = 0.4\nsteps 3\nfield u = image\nfield v = 0\nv' = v + dt * c^2 / h^2 * sum n in N4: u[n] - u\nu' = u + dt * v'\n`);
    const W = 6, H = 5, N = 3;
    const img = randomImage(W, H, 11);
    const traj = recordTrajectory(s, N, { image: img });
    const p = { x: 2, y: 2, field: 'u' };
    const inf = influenceMap(s, traj.states, p);
    const endValue = (data: Float64Array) => {
      const run = createRun(s, { image: { width: W, height: H, data }, dtype: 'float64', steps: N });
      run.runSync();
      return run.fieldData(0)[p.y * W + p.x];
    };
    for (let q = 0; q < W * H; q++) {
      const up = Float64Array.from(img.data); up[q] += 0.5;
      const dn = Float64Array.from(img.data); dn[q] -= 0.5;
      expect(inf.maps.u[q]).toBeCloseTo(endValue(up) - endValue(dn), 12);
    }
    // v starts at 0 everywhere, but its influence is not zero: u_N depends on v_0 through dt·v'.
    expect(inf.maps.v.some((x) => Math.abs(x) > 0.01)).toBe(true);
  });
});
