// The pictures' colour maps: the change map is zero-centred and neutral in the middle, its two halves have equal
// end lightness, and lightness moves monotonically away from the middle on both themes.

import { describe, expect, it } from 'vitest';
import { divergingIndex, divergingTable, greyByte, labToRgb, luminance, sequentialIndex, sequentialTable } from '../../../media/preview/colour';

const rgbAt = (t: Uint8Array, i: number): [number, number, number] => [t[i * 3], t[i * 3 + 1], t[i * 3 + 2]];

describe('CIELAB to sRGB', () => {
  it('maps white, black and mid grey', () => {
    expect(labToRgb([100, 0, 0])).toEqual([255, 255, 255]);
    expect(labToRgb([0, 0, 0])).toEqual([0, 0, 0]);
    const g = labToRgb([53.39, 0, 0]);
    for (const c of g) expect(Math.abs(c - 128)).toBeLessThanOrEqual(1);
  });
});

describe('diverging (change) map', () => {
  for (const dark of [false, true]) {
    const t = divergingTable(dark);
    it(`${dark ? 'dark' : 'light'}: the middle is neutral grey`, () => {
      const [r, g, b] = rgbAt(t, 128);
      expect(Math.max(r, g, b) - Math.min(r, g, b)).toBeLessThanOrEqual(3);
    });
    it(`${dark ? 'dark' : 'light'}: luminance moves monotonically from the middle to each end`, () => {
      const L = Array.from({ length: 256 }, (_, i) => luminance(rgbAt(t, i)));
      const sign = dark ? 1 : -1; // away from a light middle it darkens, from a dark middle it brightens
      for (let i = 128; i < 255; i++) expect(sign * (L[i + 1] - L[i])).toBeGreaterThanOrEqual(-1e-3);
      for (let i = 127; i > 0; i--) expect(sign * (L[i - 1] - L[i])).toBeGreaterThanOrEqual(-1e-3);
    });
    it(`${dark ? 'dark' : 'light'}: the ends are a blue (negative) and an orange-red (positive)`, () => {
      const [nr, , nb] = rgbAt(t, 0);
      const [pr, , pb] = rgbAt(t, 255);
      expect(nb).toBeGreaterThan(nr);
      expect(pr).toBeGreaterThan(pb);
    });
  }

  it('puts zero in the middle and clamps beyond the scale', () => {
    expect(divergingIndex(0, 1)).toBe(128);
    expect(divergingIndex(-5, 1)).toBe(0);
    expect(divergingIndex(5, 1)).toBe(255);
    expect(divergingIndex(NaN, 1)).toBe(128);
    expect(divergingIndex(1, 0)).toBe(128);
  });

  it('maps grey values through the window', () => {
    expect([greyByte(-1, 0, 1), greyByte(0.5, 0, 1), greyByte(2, 0, 1), greyByte(NaN, 0, 1)]).toEqual([0, 128, 255, 0]);
  });
});

describe('sequential (frequency map) map', () => {
  const t = sequentialTable();
  it('rises in luminance from its low to its high end, so larger |G| is always lighter', () => {
    const L = Array.from({ length: 256 }, (_, i) => luminance(rgbAt(t, i)));
    for (let i = 0; i < 255; i++) expect(L[i + 1] - L[i]).toBeGreaterThanOrEqual(-1e-3);
    expect(L[255] - L[0]).toBeGreaterThan(0.6);
  });
  it('indexes values over the colour-bar range, clamped', () => {
    expect(sequentialIndex(0, 0, 2)).toBe(0);
    expect(sequentialIndex(1, 0, 2)).toBe(128);
    expect(sequentialIndex(5, 0, 2)).toBe(255);
    expect(sequentialIndex(-1, 0, 2)).toBe(0);
    expect(sequentialIndex(NaN, 0, 2)).toBe(0);
  });
});
