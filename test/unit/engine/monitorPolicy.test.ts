// When the new-extremum monitor applies (numerics.md, "Monitors"): non-negative weights summing to 1, no source.
// Expected classes follow the maximum principle for explicit schemes with a convex combination of old values
// (J. Weickert, Anisotropic Diffusion in Image Processing, Teubner 1998, ch. 3): a source or a weight sum ≠ 1 breaks it.
import { describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine';
import { extremumPrinciple } from '../../../src/engine/monitorPolicy';
import { schemeOf } from './util';

const head = 'grid 2d\nboundary reflect\nstep dt = 0.2\nsteps 5\nfield u = image\n';

describe('extremum principle decision', () => {
  const cases: [string, string, boolean][] = [
    ['5-point heat', "u' = u + dt * sum n in N4: u[n] - u", true],
    ['heat written as explicit neighbour terms', "u' = u + dt * (u[1,0] + u[-1,0] + u[0,1] + u[0,-1] - 4 * u)", true],
    ['heat with a constant source', "u' = u + dt * (sum n in N4: u[n] - u) + dt * 0.1", false],
    ['heat with a position-dependent source', "u' = u + dt * (sum n in N4: u[n] - u) + dt * 0.01 * x", false],
    ['linear decay (weights sum to 1 - dt)', "u' = u - dt * u", false],
    ['Perona–Malik (positivity class)', "u' = u + dt * sum n in N4: g(u[n] - u) * (u[n] - u)", true],
    ['fourth-order second difference in x (weights -1/12 at ±2 for every dt)', "u' = u + dt * (-u[2,0] + 16 * u[1,0] - 30 * u + 16 * u[-1,0] - u[-2,0]) / 12", false],
  ];
  for (const [label, update, applies] of cases) {
    it(label, () => {
      const d = extremumPrinciple(schemeOf(head + 'diffusivity g(s) = 1 / (1 + s^2 / 0.01)\n' + update + '\n'));
      expect(d.applies, d.reason).toBe(applies);
    });
  }

  it('createRun uses the decision by default; callers may force the monitor on or off', () => {
    const img = { width: 4, height: 4, data: new Float64Array(16).fill(0.5) };
    const source = schemeOf(head + "u' = u + dt * 0.1\n");
    expect(createRun(source, { image: img }).extremumDecision.applies).toBe(false);
    expect(createRun(source, { image: img }).runSync().warnings, 'a source term raises the max without a warning').toEqual([]);
    const forced = createRun(source, { image: img, monitors: { extremumCheck: true } }).runSync();
    expect(forced.warnings.map(w => [w.kind, w.step])).toEqual([['new-extremum', 1]]);
    const heat = schemeOf(head + "u' = u + dt * sum n in N4: u[n] - u\n");
    expect(createRun(heat, { image: img, monitors: { extremumCheck: false } }).extremumDecision.applies).toBe(false);
  });
});
