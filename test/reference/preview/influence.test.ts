// The live run's influence map (analysisCompute.computeInfluence: the run replayed from its input, then the
// adjoint sweep of src/analysis/influence.ts, cropped for the wire) against an independent construction with
// numpy/scipy, run by Debian's /usr/bin/python3 (contracts §7): the one-step operator A of the 5-point heat scheme
// is assembled column by column from scipy.ndimage.convolve with mode 'reflect' (= Fluxel's reflect, numerics.md),
// and the influence of input pixel q on pixel p after N steps is the entry (p, q) of A^N (numpy.linalg.matrix_power).
// Source: SciPy reference, scipy.ndimage.convolve (mode 'reflect', "d c b a | a b c d | d c b a"); the matrix-power
// form of N explicit steps of a linear scheme is common practice.
import { execFileSync } from 'node:child_process';
import { describe, expect, it } from 'vitest';
import { computeInfluence } from '../../../src/extension/preview/analysisCompute';

const SCHEME = (c: number) => [
  'grid 2d',
  'boundary reflect',
  `param K = ${c} in [0, 1]`,
  'step dt = 1',
  'steps 10',
  'field u = image',
  "u' = u + dt * K * sum n in N4: u[n] - u",
  '',
].join('\n');

const PY = `
import sys, json, numpy as np
from scipy.ndimage import convolve
w, h, N, px, py, c = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3]), int(sys.argv[4]), int(sys.argv[5]), float(sys.argv[6])
k = np.array([[0, c, 0], [c, 1 - 4 * c, c], [0, c, 0]])
n = w * h
A = np.zeros((n, n))
for j in range(n):
    e = np.zeros(n); e[j] = 1
    A[:, j] = convolve(e.reshape(h, w), k, mode='reflect').ravel()
row = np.linalg.matrix_power(A, N)[py * w + px]
print(json.dumps(row.tolist()))
`;

function scipyRow(w: number, h: number, n: number, px: number, py: number, c: number): number[] {
  return JSON.parse(execFileSync('/usr/bin/python3', ['-c', PY, String(w), String(h), String(n), String(px), String(py), String(c)]).toString()) as number[];
}

describe('influence map of the live run vs A^N from scipy.ndimage.convolve', () => {
  for (const [px, py, n] of [[1, 1, 3], [6, 4, 2], [0, 8, 4]] as const) {
    it(`pixel (${px}, ${py}) after ${n} steps on a 12×10 grid, reflecting edges included`, () => {
      const w = 12, h = 10, c = 0.2;
      const image = { width: w, height: h, data: Float32Array.from({ length: w * h }, (_, i) => ((i * 37) % 11) / 10) };
      const m = computeInfluence({ text: SCHEME(c), knobs: { values: { K: c }, dt: 1 }, image, width: w, height: h, steps: n, x: px, y: py, field: 'u' });
      const ref = scipyRow(w, h, n, px, py, c);
      expect(m.steps).toBe(n);
      let compared = 0;
      let peak = 0;
      for (let y = 0; y < h; y++) {
        for (let x = 0; x < w; x++) {
          const inside = x >= m.x0 && x < m.x0 + m.width && y >= m.y0 && y < m.y0 + m.height;
          const got = inside ? m.data[(y - m.y0) * m.width + (x - m.x0)] : 0;
          // Float32 on the wire: 1e-6 absolute on weights ≤ 1.
          expect(Math.abs(got - ref[y * w + x]), `(${x}, ${y})`).toBeLessThan(1e-6);
          peak = Math.max(peak, Math.abs(ref[y * w + x]));
          compared++;
        }
      }
      expect(compared).toBe(w * h);
      expect(m.peak).toBeCloseTo(peak, 6);
      expect(m.sum).toBeCloseTo(ref.reduce((a, v) => a + v, 0), 6);
    });
  }
});
