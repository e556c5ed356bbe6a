// Small-matrix eigenvalues (src/analysis/stabilityEigen.ts) and ghost-cell indexing (stabilityState.ts),
// checked against hand-computed cases.
// Imports only the modules under test.
import { expect, it } from 'vitest';
import { cmatrix, eigenvalues, spectralRadius } from '../../../src/analysis/stabilityEigen';
import { ghostIndex } from '../../../src/analysis/stabilityState';

it('3×3 triangular matrix: eigenvalues are the diagonal (common practice)', () => {
  const m = cmatrix(3);
  m.re.set([2, 1, 5, 0, -1, 3, 0, 0, 0.5]);
  m.im.set([0, 0, 0, 0, 0, 0, 0, 0, 1]);
  const want: [number, number][] = [[2, 0], [-1, 0], [0.5, 1]];
  const got = eigenvalues(m);
  for (const [wr, wi] of want) {
    const d = Math.min(...got.map(([a, b]) => Math.hypot(a - wr, b - wi)));
    expect(d <= 1e-9, `eigenvalue ${wr}+${wi}i: nearest computed is ${d} away (tolerance 1e-9)`).toBe(true);
  }
});

it('2×2 rotation by φ has eigenvalues e^{±iφ}, spectral radius 1 (common practice)', () => {
  const phi = 0.7;
  const m = cmatrix(2);
  m.re.set([Math.cos(phi), -Math.sin(phi), Math.sin(phi), Math.cos(phi)]);
  const r = spectralRadius(m);
  expect(Math.abs(r - 1) <= 1e-14, `spectral radius ${r}, expected 1 within 1e-14`).toBe(true);
});

// numerics.md "Boundaries": reflect d c b a | a b c d | d c b a; periodic wraps.
it('ghost indices follow the reflect and periodic tables of numerics.md', () => {
  const reflect = [-4, -3, -2, -1, 4, 5, 6, 7].map((i) => ghostIndex(i, 4, { kind: 'reflect' }));
  expect(reflect).toEqual([3, 2, 1, 0, 3, 2, 1, 0]);
  const periodic = [-4, -1, 4, 7].map((i) => ghostIndex(i, 4, { kind: 'periodic' }));
  expect(periodic).toEqual([0, 3, 0, 3]);
  expect(ghostIndex(-1, 4, { kind: 'fixed', value: 0.5 })).toBe(-1);
});

// The eigenvalues of a block-triangular matrix are those of its diagonal blocks (common practice, any linear
// algebra text). Three uncoupled fields with the same rate give a triple eigenvalue, which polynomial root
// iteration only finds to about 1e-5; the block split must give it to rounding.
it('a triangular 3×3 with a triple eigenvalue gives it to rounding', () => {
  const m = cmatrix(3);
  m.re.set([-0.8, 0, 0, 0.3, -0.8, 0, 0, 0.5, -0.8]);
  const ev = eigenvalues(m);
  expect(ev.length).toBe(3);
  for (const [a, b] of ev) expect(Math.hypot(a + 0.8, b) <= 1e-15, `eigenvalue ${a}+${b}i, expected -0.8 within 1e-15`).toBe(true);
});

it('an uncoupled 4×4 (two 2×2 rotations) keeps the eigenvalues of each block', () => {
  const m = cmatrix(4);
  const c = Math.cos(0.7), s = Math.sin(0.7);
  m.re.set([c, -s, 0, 0, s, c, 0, 0, 0, 0, c, -s, 0, 0, s, c]);
  const mods = eigenvalues(m).map(([a, b]) => Math.hypot(a, b));
  for (const r of mods) expect(Math.abs(r - 1) <= 1e-15, `modulus ${r}, expected 1 within 1e-15`).toBe(true);
});
