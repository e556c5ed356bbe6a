// Ghost-cell rules against the table in numerics.md ("Boundaries and ghost cells"), including halos wider than the image.
import { describe, expect, it } from 'vitest';
import { fillGhosts, foldIndex, makeGeometry, planGhosts, writeInterior } from '../../../src/engine/boundary';

describe('foldIndex', () => {
  // numerics.md table: around a b c d, reflect gives d c b a | a b c d | d c b a, periodic a b c d | a b c d | a b c d.
  const cases: [string, 'reflect' | 'periodic', number[]][] = [
    ['reflect', 'reflect', [3, 2, 1, 0, 0, 1, 2, 3, 3, 2, 1, 0]],
    ['periodic', 'periodic', [0, 1, 2, 3, 0, 1, 2, 3, 0, 1, 2, 3]],
  ];
  for (const [label, kind, expected] of cases) {
    it(`${label}: indices -4..7 around a 4-cell row`, () => {
      const got = Array.from({ length: 12 }, (_, k) => foldIndex(k - 4, 4, kind));
      expect(got, `${kind} fold of -4..7 for n = 4`).toEqual(expected);
    });
  }
  it('reflect keeps folding past twice the width (as scipy.ndimage mode reflect)', () => {
    // n = 2, row a b, period 4: (-5..-1) a a b b a | a b | b a a b (2..5), so 4 -> a, 5 -> b, -5 -> a, -3 -> b.
    expect([4, 5, -5, -3].map(i => foldIndex(i, 2, 'reflect'))).toEqual([0, 1, 0, 1]);
    expect([7, -7, 100].map(i => foldIndex(i, 1, 'reflect')), 'a single cell reflects to itself').toEqual([0, 0, 0]);
  });
});

describe('fillGhosts', () => {
  const row = [1, 2, 3, 4];
  it('fills a 2d halo of 2 around a 4×1 image for each rule', () => {
    const g = makeGeometry(4, 1, 2, 2);
    const rules = [
      { b: { kind: 'reflect' as const }, line: [2, 1, 1, 2, 3, 4, 4, 3] },
      { b: { kind: 'periodic' as const }, line: [3, 4, 1, 2, 3, 4, 1, 2] },
      { b: { kind: 'fixed' as const, value: -7 }, line: [-7, -7, 1, 2, 3, 4, -7, -7] },
    ];
    for (const { b, line } of rules) {
      const buf = new Float64Array(g.pw * g.ph);
      writeInterior(buf, g, row);
      fillGhosts(buf, g, planGhosts(g, b));
      const mid = Array.from(buf.subarray(2 * g.pw, 3 * g.pw));
      expect(mid, `${b.kind}: the image row with its x halo`).toEqual(line);
      // Rows above and below: a 1-row image repeats itself for reflect and periodic; fixed is constant there.
      for (const py of [0, 1, 3, 4]) {
        const r = Array.from(buf.subarray(py * g.pw, (py + 1) * g.pw));
        expect(r, `${b.kind}: halo row ${py}`).toEqual(b.kind === 'fixed' ? new Array(8).fill(-7) : line);
      }
    }
  });
  it('1d geometry has no y halo', () => {
    const g = makeGeometry(4, 3, 2, 1);
    expect([g.pw, g.ph, g.haloY]).toEqual([8, 3, 0]);
  });
});
