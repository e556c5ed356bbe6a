// The analysis's initial states (src/analysis/stabilityState.ts) against the engine's: a 1d scheme on a 2d
// image sees the same single row in both (contracts.md §2: "an image input contributes its middle row, or a
// one-pixel-tall image is used as is"), and ghost indices fold like scipy.ndimage's modes (numerics.md table).
import { describe, expect, it } from 'vitest';
import { ghostIndex, initialState } from '../../../src/analysis/stabilityState';
import { createRun, middleRow } from '../../../src/engine';
import { parseAndCheck } from '../../../src/notation/index';
import type { CheckedScheme } from '../../../src/notation/scheme';

function scheme(text: string): CheckedScheme {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error(r.diagnostics.map((d) => `${d.code}: ${d.message}`).join('; '));
  return r.scheme;
}

const heat1d = scheme('grid 1d\nspacing 1\nboundary reflect\nstep dt = 0.4\nsteps 3\nfield u = image\nu\' = u + dt * sum n in N2: u[n] - u\n');

function picture(width: number, height: number): { width: number; height: number; data: Float64Array } {
  const data = new Float64Array(width * height);
  for (let k = 0; k < data.length; k++) data[k] = ((k * 7919) % 101) / 100;
  return { width, height, data };
}

describe('1d convention shared by the analysis and the engine', () => {
  it('a 2d image contributes row ⌊height/2⌋ to both, for odd and even heights', () => {
    for (const [w, h] of [[9, 5], [12, 8], [7, 2]]) {
      const img = picture(w, h);
      const state = initialState(heat1d, img);
      expect(state.height).toBe(1);
      expect(state.width).toBe(w);
      const row = Math.floor(h / 2);
      const run = createRun(heat1d, { image: img, steps: 0, dtype: 'float64' });
      expect(run.geometry.height, 'engine grid is one row').toBe(1);
      const engineRow = run.fieldData(0);
      const engineMiddle = middleRow(img).data;
      for (let x = 0; x < w; x++) {
        const want = img.data[row * w + x];
        expect(state.fields[0][x], `analysis, x = ${x}, ${w}×${h}`).toBe(want);
        expect(engineRow[x], `engine run, x = ${x}, ${w}×${h}`).toBe(want);
        expect(engineMiddle[x], `engine middleRow, x = ${x}, ${w}×${h}`).toBe(want);
      }
    }
  });

  it('a one-pixel-tall image is used as is', () => {
    const img = picture(10, 1);
    const state = initialState(heat1d, img);
    expect(Array.from(state.fields[0])).toEqual(Array.from(img.data));
  });
});

describe('ghostIndex', () => {
  // numerics.md: reflect is scipy.ndimage 'reflect' (d c b a | a b c d | d c b a), repeated folding beyond the
  // image (numpy.pad 'symmetric' gives the same indices for 0..3 padded by 12); periodic is 'wrap'; fixed reads the
  // constant (index −1).
  it('reflect folds repeatedly, periodic wraps, fixed reads the constant', () => {
    const reflect = { kind: 'reflect' } as const;
    expect([-1, -2, -4, -5, -9, 4, 5, 8, 9].map((i) => ghostIndex(i, 4, reflect))).toEqual([0, 1, 3, 3, 0, 3, 2, 0, 1]);
    expect([-1, -5, 4, 9].map((i) => ghostIndex(i, 4, { kind: 'periodic' }))).toEqual([3, 3, 0, 1]);
    expect(ghostIndex(-1, 4, { kind: 'fixed', value: 0.5 })).toBe(-1);
  });
});
