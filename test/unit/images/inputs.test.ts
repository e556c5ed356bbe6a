// Named inputs and channels: the checker's bindings, images/inputs.ts bindInputs (missing and mis-sized inputs
// with the field's range), the engine taking one picture per field, and the two bundled examples' defining
// properties (masked pixels keep their values exactly; on a grey picture the colour scheme is grey Perona–Malik).
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine';
import { jsBackend } from '../../../src/engine/jsBackend';
import {
  bindInputs, colourFields, InputBindingError, makeInput, makeMask, namedInputs, pictureFromGrey, pictureFromRgb,
} from '../../../src/images/inputs';
import { makeScene } from '../../../src/images/scenes';
import { parseAndCheck } from '../../../src/notation';

const ROOT = join(__dirname, '../../..');
const schemeOf = (text: string) => {
  const r = parseAndCheck(text);
  if (!r.scheme) throw new Error(r.diagnostics.map(d => d.message).join('; '));
  return r.scheme;
};
const HEAD = 'grid 2d\nstep dt = 0.1\nsteps 3\n';

describe('bindings in the checked scheme', () => {
  it('records input and channel per image field; plain image is the main input, grey', () => {
    const s = schemeOf(HEAD + 'field u = image\nfield m = image "mask"\nfield r = image.red\nfield a = image "guide".alpha\nu\' = u * m + r * a');
    expect(s.fields.map(f => f.init)).toEqual([
      { kind: 'image', input: null, channel: null },
      { kind: 'image', input: 'mask', channel: null },
      { kind: 'image', input: null, channel: 'red' },
      { kind: 'image', input: 'guide', channel: 'alpha' },
    ]);
    expect(namedInputs(s)).toEqual(['mask', 'guide']);
  });
});

describe('bindInputs', () => {
  const s = schemeOf(HEAD + 'field u = image\nfield m = image "mask"\nu\' = u * (1 - m)');
  const grey = (w: number, h: number, v = 0.5) => pictureFromGrey({ width: w, height: h, data: new Float32Array(w * h).fill(v) });

  it('gives each field its picture', () => {
    const main = grey(4, 3, 0.25), mask = grey(4, 3, 1);
    const b = bindInputs(s, { main, named: new Map([['mask', mask]]) });
    expect(b.u.data).toBe(main.channels.luma);
    expect(b.m.data).toBe(mask.channels.luma);
  });

  it('a missing named input names the field, its line and how to give it', () => {
    let err: unknown;
    try {
      bindInputs(s, { main: grey(4, 3), named: new Map() }, n => ` (give --input ${n}=PATH)`);
    } catch (e) { err = e; }
    expect(err).toBeInstanceOf(InputBindingError);
    const e = err as InputBindingError;
    expect(e.code).toBe('input-missing');
    expect(e.field).toBe('m');
    expect([e.range?.start.line, e.range?.start.column, e.range?.end.line, e.range?.end.column]).toEqual([5, 1, 5, 23]);
    expect(e.message).toBe('`field m = image "mask"` reads the input "mask", which was not given (give --input mask=PATH).');
  });

  it('a mask of another size is refused with both sizes', () => {
    expect(() => bindInputs(s, { main: grey(4, 3), named: new Map([['mask', grey(5, 3)]]) })).toThrow(
      '`field m = image "mask"`: the input "mask" is 5×3 pixels but the main input is 4×3; all inputs of a run must have one size.');
  });

  it('an input no field reads is refused (a misspelt name does not pass silently)', () => {
    expect(() => bindInputs(s, { main: grey(4, 3), named: new Map([['mask', grey(4, 3)], ['maks', grey(4, 3)]]) })).toThrow(/"maks" was given, but no field reads it/);
  });

  it('channels of a colour picture; alpha 1 where none is stored', () => {
    const c = schemeOf(HEAD + 'field r = image.red\nfield g = image.green\nfield b = image.blue\nfield a = image.alpha\nfield l = image\nr\' = r + g + b + a + l');
    const p = pictureFromRgb(2, 1, Float32Array.of(1, 0), Float32Array.of(0, 1), Float32Array.of(0.5, 0.25));
    const b = bindInputs(c, { main: p, named: new Map() });
    expect([...b.r.data, ...b.g.data, ...b.b.data, ...b.a.data]).toEqual([1, 0, 0, 1, 0.5, 0.25, 1, 1]);
    // BT.709 luma (ITU-R BT.709-6 item 3.2): 0.2126 R + 0.7152 G + 0.0722 B.
    expect(b.l.data[0]).toBeCloseTo(0.2126 + 0.0722 * 0.5, 6);
    expect(colourFields(c)).toEqual({ red: 'r', green: 'g', blue: 'b' });
  });
});

describe('the engine with a picture per field', () => {
  it('a named input without a picture is an engine error naming the field and the input', () => {
    const s = schemeOf(HEAD + 'field u = image\nfield m = image "mask"\nu\' = u * m');
    const image = makeScene('card', { width: 8, height: 8 }).noisy;
    expect(() => createRun(s, { image })).toThrow(`field 'm' reads the input "mask", but no picture was given for it`);
  });

  it('masked-smoothing.fluxel: masked pixels keep their values exactly, unmasked ones are smoothed', () => {
    const s = schemeOf(readFileSync(join(ROOT, 'examples/masked-smoothing.fluxel'), 'utf8'));
    const scene = makeScene('survey', { width: 64, height: 48, noise: 0.1, seed: 3 });
    const mask = makeMask(64, 48);
    const run = createRun(s, { image: scene.noisy, fieldImages: { m: mask }, dtype: 'float64', backend: jsBackend });
    run.runSync();
    const u = run.fieldData(0);
    let inside = 0, changedOutside = 0;
    for (let i = 0; i < u.length; i++) {
      if (mask.data[i] === 1) {
        inside++;
        expect(u[i]).toBe(scene.noisy.data[i]);
      } else if (Math.abs(u[i] - scene.noisy.data[i]) > 1e-3) changedOutside++;
    }
    expect(inside).toBeGreaterThan(200);
    expect(changedOutside).toBeGreaterThan((u.length - inside) / 2);
  });

  it('colour-edge-preserving.fluxel on a grey picture equals grey Perona–Malik (the luma of equal channels is the grey value)', () => {
    const s = schemeOf(readFileSync(join(ROOT, 'examples/colour-edge-preserving.fluxel'), 'utf8'));
    // The same diffusivity and update on one grey field, written out here (Perona, Malik 1990, eq. 10 with g = 1/(1+(s/K)^2)).
    const grey = schemeOf('grid 2d\nspacing 1\nboundary reflect\nparam K = 0.02\nstep dt = 0.2\nsteps 40\nfield u = image\n'
      + 'diffusivity c(s) = 1 / (1 + (s / K)^2)\nu\' = u + dt * sum n in N4: c(u[n] - u) * (u[n] - u)');
    const scene = makeScene('cells', { width: 40, height: 30, noise: 0.05, seed: 2 });
    const colour = createRun(s, { image: scene.noisy, dtype: 'float64', backend: jsBackend });
    colour.runSync();
    const ref = createRun(grey, { image: scene.noisy, dtype: 'float64', backend: jsBackend });
    ref.runSync();
    const want = ref.fieldData(0);
    for (let k = 0; k < 3; k++) {
      const got = colour.fieldData(k);
      let worst = 0;
      for (let i = 0; i < got.length; i++) worst = Math.max(worst, Math.abs(got[i] - want[i]));
      // The luma weights sum to 1 up to Float64 rounding, so only rounding separates the two.
      expect(worst).toBeLessThan(1e-9);
    }
  });

  it('the generated palette is colour, its luma follows BT.709, and the mask is binary', () => {
    const p = makeInput('palette', { width: 50, height: 40, noise: 0 });
    expect(p.noisy.colour).toBe(true);
    const { red, green, blue, luma } = p.noisy.channels;
    for (let i = 0; i < luma.length; i += 97) expect(luma[i]).toBeCloseTo(0.2126 * red[i] + 0.7152 * green[i] + 0.0722 * blue[i], 6);
    expect(new Set(makeMask(30, 20).data)).toEqual(new Set([0, 1]));
  });
});
