// Host-side pure helpers: recording stride, box downsampling, rows, and the knob edits written into a scheme.

import { describe, expect, it } from 'vitest';
import { parse, parseAndCheck } from '../../../src/notation';
import { downsample, frameStride, knobEdits, knobText, rowOf, shrinkFactor } from '../../../src/extension/preview/frames';

describe('frame stride', () => {
  const cases: [number, number, number, number, number, number][] = [
    // steps, pixels, fields, maxFrames, budget, expected stride
    [60, 65536, 1, 120, 1e9, 1],
    [1000, 65536, 1, 101, 1e9, 10],
    [50, 65536, 1, 120, 65536 * 11, 5], // the budget allows 11 frames: 0, 5, ..., 50
    [0, 10, 1, 120, 1e9, 1],
    [7, 10, 2, 2, 1e9, 7],
  ];
  for (const [steps, px, f, maxF, budget, want] of cases) {
    it(`${steps} steps, ${px} px × ${f} fields, at most ${maxF} frames → every ${want}`, () => expect(frameStride(steps, px, f, maxF, budget)).toBe(want));
  }
});

describe('downsampling', () => {
  it('keeps sizes that fit and shrinks by the smallest integer factor otherwise', () => {
    expect(shrinkFactor(256, 256, 512)).toBe(1);
    expect(shrinkFactor(1024, 300, 512)).toBe(2);
    expect(shrinkFactor(1025, 10, 512)).toBe(3);
  });

  it('averages each block, with smaller blocks at the right and bottom edges', () => {
    // 3×3 image, factor 2: blocks {0,1,3,4}, {2,5}, {6,7}, {8}
    const d = downsample({ width: 3, height: 3, data: [0, 1, 2, 3, 4, 5, 6, 7, 8] }, 2);
    expect(d.width).toBe(2);
    expect(d.height).toBe(2);
    expect(Array.from(d.data)).toEqual([2, 3.5, 6.5, 8]);
  });

  it('copies at factor 1 and lets a NaN show in its block', () => {
    const src = new Float32Array([1, NaN, 3, 4]);
    const same = downsample({ width: 2, height: 2, data: src }, 1);
    expect(same.data).not.toBe(src);
    expect(Array.from(same.data)).toEqual([1, NaN, 3, 4]);
    expect(Number.isNaN(downsample({ width: 2, height: 2, data: src }, 2).data[0])).toBe(true);
  });

  it('extracts a row and clamps the row index', () => {
    const p = { width: 2, height: 2, data: [1, 2, 3, 4] };
    expect(Array.from(rowOf(p, 1))).toEqual([3, 4]);
    expect(Array.from(rowOf(p, 9))).toEqual([3, 4]);
  });
});

describe('writing knobs into the file', () => {
  const text = [
    'grid 2d',
    'param K = 0.06 in [0.005, 0.5]',
    'param sigma = 1 in [0, 3]',
    'step dt = 0.2 in [0.02, 0.3]',
    'steps 10',
    'field u = image',
    "u' = u + dt * K * sigma * sum n in N4: u[n] - u",
  ].join('\n');

  function apply(src: string, edits: { start: number; end: number; newText: string }[]): string {
    let out = src;
    for (const e of [...edits].sort((a, b) => b.start - a.start)) out = out.slice(0, e.start) + e.newText + out.slice(e.end);
    return out;
  }

  it('replaces exactly the numbers of the moved knobs and dt', () => {
    const edits = knobEdits(parse(text).program, { K: 0.125, sigma: 1 }, 0.1);
    expect(edits.map((e) => e.newText)).toEqual(['0.125', '0.1']);
    const next = apply(text, edits);
    const s = parseAndCheck(next).scheme;
    expect(s?.params.map((p) => [p.name, p.value, p.lo, p.hi])).toEqual([['K', 0.125, 0.005, 0.5], ['sigma', 1, 0, 3]]);
    expect(s?.dt).toBe(0.1);
  });

  it('writes nothing when the values equal the file', () => {
    expect(knobEdits(parse(text).program, { K: 0.06, sigma: 1 }, 0.2)).toEqual([]);
  });

  it('prints six significant digits at most, in a form the notation reads back', () => {
    expect(knobText(0.1 + 0.2)).toBe('0.3');
    expect(knobText(1 / 3)).toBe('0.333333');
    expect(knobText(1e-7)).toBe('1e-7');
    const next = apply(text, knobEdits(parse(text).program, { K: 1e-7 }, null));
    const decl = parse(next).program.decls.find((d) => d.kind === 'param');
    expect(decl?.kind === 'param' && decl.value.value).toBe(1e-7);
  });
});
