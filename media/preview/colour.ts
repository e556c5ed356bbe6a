// Colour maps of the live run's pictures, computed once into 256-entry RGB lookup tables. DOM-free, so unit tests
// load it directly. Rendering only: values arrive already computed by the host; nothing here is numerics of a scheme.
//
// Grey: value v in a window [lo, hi] maps linearly to sRGB grey 0..255 (clamped).
// Change (diverging, zero in the middle): our own interpolation in CIELAB. The negative end is a blue
// Lab(48, 8, -52), the positive end an orange-red Lab(48, 50, 46): equal lightness, so neither sign looks stronger.
// The middle (zero) is a near-white Lab(96, 0, 0) on light themes and a near-black Lab(14, 0, 0) on dark ones.
// Each half is a straight line in Lab from the middle to its end, so lightness changes linearly with |v| and the
// colour difference per step is nearly constant (Lab is built to be roughly perceptually uniform); colours that
// fall outside sRGB are clipped per channel (only near the ends, by a few units).
// Sequential (the frequency map's |G|): our own straight line in Lab from a deep slate Lab(18, 6, -30) to a pale
// sand Lab(94, -4, 40), so lightness rises linearly with the value on either theme; values past the stable edge
// (|G| > 1) are told apart by the edge line drawn over the map, not by a second hue.

export type Rgb = readonly [number, number, number];
export type Lab = readonly [number, number, number];

export const NEGATIVE_END: Lab = [48, 8, -52];
export const POSITIVE_END: Lab = [48, 50, 46];
export const LIGHT_MIDDLE: Lab = [96, 0, 0];
export const DARK_MIDDLE: Lab = [14, 0, 0];

/** CIELAB (D65) to sRGB bytes, clipped to 0..255. */
export function labToRgb([L, a, b]: Lab): Rgb {
  const fy = (L + 16) / 116;
  const fx = fy + a / 500;
  const fz = fy - b / 200;
  const inv = (t: number) => (t > 6 / 29 ? t * t * t : 3 * (6 / 29) ** 2 * (t - 4 / 29));
  const X = 0.95047 * inv(fx);
  const Y = 1.0 * inv(fy);
  const Z = 1.08883 * inv(fz);
  const rl = 3.2404542 * X - 1.5371385 * Y - 0.4985314 * Z;
  const gl = -0.969266 * X + 1.8760108 * Y + 0.041556 * Z;
  const bl = 0.0556434 * X - 0.2040259 * Y + 1.0572252 * Z;
  const enc = (c: number) => {
    const v = c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
    return Math.max(0, Math.min(255, Math.round(v * 255)));
  };
  return [enc(rl), enc(gl), enc(bl)];
}

const mix = (p: Lab, q: Lab, t: number): Lab => [p[0] + (q[0] - p[0]) * t, p[1] + (q[1] - p[1]) * t, p[2] + (q[2] - p[2]) * t];

/** 256 RGB triples, entry 0 = most negative, 128 ≈ zero, 255 = most positive. */
export function divergingTable(dark: boolean): Uint8Array {
  const mid = dark ? DARK_MIDDLE : LIGHT_MIDDLE;
  const out = new Uint8Array(256 * 3);
  for (let i = 0; i < 256; i++) {
    const s = (i - 127.5) / 127.5; // -1 .. 1
    const lab = s < 0 ? mix(mid, NEGATIVE_END, -s) : mix(mid, POSITIVE_END, s);
    const [r, g, b] = labToRgb(lab);
    out[i * 3] = r;
    out[i * 3 + 1] = g;
    out[i * 3 + 2] = b;
  }
  return out;
}

/** The diverging colour of a signed value in [-scale, scale] as a CSS colour (weights grid, legends). */
export function divergingCss(table: Uint8Array, v: number, scale: number): string {
  const i = divergingIndex(v, scale);
  return `rgb(${table[i * 3]}, ${table[i * 3 + 1]}, ${table[i * 3 + 2]})`;
}

/** Table index of v in [-scale, scale]; 0 maps to the middle, NaN to the middle too (drawn separately). */
export function divergingIndex(v: number, scale: number): number {
  if (!(scale > 0) || !Number.isFinite(v)) return 128;
  const s = Math.max(-1, Math.min(1, v / scale));
  return Math.max(0, Math.min(255, Math.round(127.5 + s * 127.5)));
}

/** Grey byte of v in the window [lo, hi]. */
export function greyByte(v: number, lo: number, hi: number): number {
  if (!Number.isFinite(v)) return 0;
  const span = hi - lo;
  const t = span > 0 ? (v - lo) / span : 0.5;
  return Math.max(0, Math.min(255, Math.round(t * 255)));
}

/** Relative luminance of an sRGB colour, for picking readable text over a cell. */
export function luminance([r, g, b]: Rgb): number {
  const lin = (c: number) => {
    const v = c / 255;
    return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4;
  };
  return 0.2126 * lin(r) + 0.7152 * lin(g) + 0.0722 * lin(b);
}

export const SEQUENTIAL_LOW: Lab = [18, 6, -30];
export const SEQUENTIAL_HIGH: Lab = [94, -4, 40];

/** 256 RGB triples from SEQUENTIAL_LOW (entry 0) to SEQUENTIAL_HIGH (entry 255), a straight line in Lab. */
export function sequentialTable(): Uint8Array {
  const out = new Uint8Array(256 * 3);
  for (let i = 0; i < 256; i++) {
    const [r, g, b] = labToRgb(mix(SEQUENTIAL_LOW, SEQUENTIAL_HIGH, i / 255));
    out[i * 3] = r;
    out[i * 3 + 1] = g;
    out[i * 3 + 2] = b;
  }
  return out;
}

/** Table index of v in [lo, hi] (clamped; NaN maps to 0). */
export function sequentialIndex(v: number, lo: number, hi: number): number {
  if (!(hi > lo) || Number.isNaN(v)) return 0;
  return Math.max(0, Math.min(255, Math.round(((v - lo) / (hi - lo)) * 255)));
}
