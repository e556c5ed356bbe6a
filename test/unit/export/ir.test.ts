// The shared lowering: the symbolic halo plan and the refusals. Expected halos are worked out by hand from
// numerics.md ("the halo needed is the sum of the radii along the chain"; blur radius ⌊4σ + 0.5⌋).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { evalHalo, lowerScheme } from '../../../src/export';
import { parseAndCheck } from '../../../src/notation/index';

const example = (f: string) => {
  const s = parseAndCheck(readFileSync(join(__dirname, '../../../examples', f), 'utf8')).scheme;
  if (!s) throw new Error(`${f} has errors`);
  return s;
};

describe('halo plan', () => {
  it('edge-preserving: w is read at radius 1 and blurs u with radius ⌊4σ+0.5⌋, so the halo is 1 + r', () => {
    const ir = lowerScheme(example('edge-preserving.fluxel'));
    expect(evalHalo(ir, [4])).toEqual({ extents: [1], halo: 5 }); // σ = 1 → r = 4
    expect(evalHalo(ir, [12])).toEqual({ extents: [1], halo: 13 }); // σ = 3 → r = 12
    expect(evalHalo(ir, [0])).toEqual({ extents: [1], halo: 1 }); // σ = 0: identity, the N4 reads remain
  });
  it('tv-flow: m[n] at radius 1, m reads u at radius 1, so the halo is 2', () => {
    expect(evalHalo(lowerScheme(example('tv-flow.fluxel')), [0])).toEqual({ extents: [1], halo: 2 });
  });
  it('heat-2d reads radius 1; the 1d heat equation too', () => {
    expect(evalHalo(lowerScheme(example('heat-2d.fluxel')), []).halo).toBe(1);
    expect(evalHalo(lowerScheme(example('heat-1d.fluxel')), []).halo).toBe(1);
  });
});

describe('lowering', () => {
  it('inlines functions and unrolls reductions: no user name survives in the graph', () => {
    const ir = lowerScheme(example('edge-preserving.fluxel'));
    expect(JSON.stringify(ir.graph.nodes)).not.toMatch(/"(g|K|sigma|u|w|n)"/);
  });
  it('records coordinate reads in updates with their line', () => {
    const s = parseAndCheck('grid 2d\nstep dt = 0.1\nsteps 1\nfield u = image\nu\' = u + dt * y\n').scheme;
    expect(lowerScheme(s!).coordinateReads).toEqual([{ what: '`y`', line: 5 }]);
  });
});
