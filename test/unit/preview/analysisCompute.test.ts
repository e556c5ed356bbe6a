// The live run's adapters over src/analysis: the stable region's edge as line segments (marching squares), the
// frequency map reshaped for the wire, and the modified-equation summary with its ranged warnings.

import { describe, expect, it } from 'vitest';
import { computeApproximates, computeSpectrum, levelSegments } from '../../../src/extension/preview/analysisCompute';

const heat = (opts: { spacing?: number; h2?: boolean; extra?: string } = {}) => [
  'grid 2d',
  `spacing ${opts.spacing ?? 1}`,
  'boundary reflect',
  'param K = 1 in [0, 2]',
  'step dt = 0.2',
  'steps 10',
  'field u = image',
  `u' = u + dt * K${opts.h2 === false ? '' : ' / h^2'} * sum n in N4: u[n] - u${opts.extra ?? ''}`,
  '',
].join('\n');

describe('level segments (marching squares)', () => {
  it('traces a circle: every segment end lies on the level set of r² within the interpolation error', () => {
    // f(x, y) = x² + y² sampled on 41 points over [−π, π]; the level π²/4 is the circle of radius π/2 (worked example).
    const n = 41;
    const axis = Array.from({ length: n }, (_, i) => -Math.PI + (2 * Math.PI * i) / (n - 1));
    const values = new Float64Array(n * n);
    for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) values[j * n + i] = axis[i] ** 2 + axis[j] ** 2;
    const seg = levelSegments(values, axis, n, n, Math.PI ** 2 / 4);
    expect(seg.length % 4).toBe(0);
    expect(seg.length / 4).toBeGreaterThan(40);
    const step = axis[1] - axis[0];
    for (let k = 0; k < seg.length; k += 2) {
      // Linear interpolation of x² along a side of length `step` is off by at most step²/4 in f, so in r by about step²/(8r).
      expect(Math.abs(Math.hypot(seg[k], seg[k + 1]) - Math.PI / 2)).toBeLessThan(step ** 2 / (4 * Math.PI) + 1e-12);
    }
  });

  it('marks each crossing of a 1-D line once, and nothing for a line that stays on one side', () => {
    const axis = [-2, -1, 0, 1, 2];
    expect(levelSegments([2, 0, 0, 0, 2], axis, 5, 1, 1)).toEqual([-1.5, 0, -1.5, 0, 1.5, 0, 1.5, 0]);
    expect(levelSegments([0, 0, 0, 0, 0], axis, 5, 1, 1)).toEqual([]);
  });
});

describe('frequency map for the panel', () => {
  it('shows the 5-point heat scheme over its limit with its peak at (π, π) and an edge where |G| = 1', () => {
    // dt·K/h² = 0.4 > 1/4: G(π, π) = 1 − 8·0.4 = −2.2 (von Neumann analysis of the 5-point heat scheme, common practice).
    const m = computeSpectrum(heat(), { values: { K: 2 }, dt: 0.2 });
    expect(m.dims).toBe(2);
    expect(m.amp.length).toBe(m.cols * m.rows);
    expect(m.peak.value).toBeCloseTo(2.2, 9);
    expect(m.peak.theta.map(Math.abs)).toEqual([Math.PI, Math.PI]);
    expect(m.hi).toBeCloseTo(2.2, 6);
    expect(m.edge.length).toBeGreaterThan(0);
    const g = (tx: number, ty: number) => Math.abs(1 - 4 * 0.4 * (Math.sin(tx / 2) ** 2 + Math.sin(ty / 2) ** 2));
    for (let k = 0; k < m.edge.length; k += 2) expect(Math.abs(g(m.edge[k], m.edge[k + 1]) - 1)).toBeLessThan(0.02);
    expect(m.isotropy?.angles.length).toBe(m.isotropy?.error.length);
    expect(m.note).toMatch(/exact for this linear scheme/);
  });

  it('draws no edge within the limit', () => {
    const m = computeSpectrum(heat(), { values: { K: 1 }, dt: 0.2 });
    expect(m.edge).toEqual([]);
    expect(m.peak.value).toBeCloseTo(1, 9);
  });
});

describe('modified-equation summary for the panel', () => {
  it('states the diffusion the heat scheme approximates', () => {
    const a = computeApproximates(heat(), { values: { K: 1 }, dt: 0.2 });
    expect(a.text).toMatch(/Δu/);
    expect(a.warnings).toEqual([]);
    expect(a.details.at(-1)).toMatch(/^Exact/);
  });

  it('warns, with the update line, about a missing /h^2 at spacing 0.5 and about a stray source term', () => {
    for (const text of [heat({ spacing: 0.5, h2: false }), heat({ extra: ' + 0.01*u' })]) {
      const a = computeApproximates(text, { values: { K: 1 }, dt: 0.2 });
      expect(a.warnings.length, text).toBeGreaterThan(0);
      expect(a.warnings[0].range?.start.line).toBe(8);
    }
  });
});
