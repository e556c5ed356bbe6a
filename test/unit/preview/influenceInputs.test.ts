// The live run's influence map for a scheme with a named input: the analysis thread replays the run with the
// pictures bound per field (the mask), as the engine run had them. Check: in examples/masked-smoothing.fluxel a
// masked pixel keeps its value exactly, so its influence map is exactly the unit impulse at itself (its weights are
// 1 on itself and 0 elsewhere at every step); an unmasked pixel far from the mask spreads like heat flow, its
// weights summing to 1 (mean preservation, common practice).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { computeInfluence } from '../../../src/extension/preview/analysisCompute';
import { makeMask } from '../../../src/images/inputs';
import { parseAndCheck } from '../../../src/notation';

const TEXT = readFileSync(join(__dirname, '../../../examples/masked-smoothing.fluxel'), 'utf8');

describe('influence map with a named input', () => {
  const scheme = parseAndCheck(TEXT).scheme!;
  const knobs = { values: {}, dt: scheme.dt };
  const size = 40;
  const mask = makeMask(size, size);
  const image = { width: size, height: size, data: Float32Array.from({ length: size * size }, (_, i) => ((i * 37) % 17) / 16) };
  const masked = Array.from(mask.data).findIndex((v) => v >= 1);
  const open = Array.from(mask.data).findIndex((v, i) => v === 0 && i % size > 3 && i % size < size - 4 && Math.floor(i / size) > 3);

  it('a masked pixel is influenced by itself only; an open pixel by neighbours, summing to 1', () => {
    expect(masked).toBeGreaterThanOrEqual(0);
    const at = (i: number) => computeInfluence({ text: TEXT, knobs, image, fieldImages: { u: image, m: mask }, width: size, height: size, steps: 6, x: i % size, y: Math.floor(i / size), field: 'u' });
    const m = at(masked);
    expect([m.width, m.height, Array.from(m.data)]).toEqual([1, 1, [1]]);
    const o = at(open);
    expect(o.sum).toBeCloseTo(1, 6);
    expect(o.width * o.height).toBeGreaterThan(1);
  });
});
