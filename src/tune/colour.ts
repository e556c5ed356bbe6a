// The heat map's colour map, of our own definition ("pine to sand"): five anchor colours in the Oklab space with
// lightness rising evenly from a dark pine green through moss and olive to sand and a pale cream, interpolated
// linearly in Oklab and converted to sRGB.
// Pure; no Node, no DOM.
//
// Why Oklab: equal steps in its lightness L look like equal steps in brightness, so a map whose L rises
// linearly reads correctly in grey print and for most colour-vision deficiencies, and interpolating in Oklab
// avoids the muddy midpoints of sRGB mixing. The conversion is from B. Ottosson, "A perceptual color space for
// image processing" (2020, published on his web site), matrices as given there (from memory, checked by a
// round-trip test against a few sRGB colours).

export type Rgb = [number, number, number];

/** Anchors (L, a, b) in Oklab; L rises by equal steps, hue turns from pine green through moss and olive to sand. */
export const ANCHORS: readonly (readonly [number, number, number])[] = [
  [0.27, -0.04, 0.0],
  [0.43, -0.06, 0.04],
  [0.59, -0.03, 0.09],
  [0.75, 0.02, 0.1],
  [0.91, 0.01, 0.06],
];

/** Oklab to linear-light sRGB (Ottosson 2020). */
export function oklabToLinearSrgb(L: number, a: number, b: number): [number, number, number] {
  const l_ = L + 0.3963377774 * a + 0.2158037573 * b;
  const m_ = L - 0.1055613458 * a - 0.0638541728 * b;
  const s_ = L - 0.0894841775 * a - 1.291485548 * b;
  const l = l_ ** 3, m = m_ ** 3, s = s_ ** 3;
  return [
    4.0767416621 * l - 3.3077115913 * m + 0.2309699292 * s,
    -1.2684380046 * l + 2.6097574011 * m - 0.3413193965 * s,
    -0.0041960863 * l - 0.7034186147 * m + 1.707614701 * s,
  ];
}

/** Linear-light sRGB to Oklab (Ottosson 2020), used by the tests to read lightness back. */
export function linearSrgbToOklab(r: number, g: number, b: number): [number, number, number] {
  const l = Math.cbrt(0.4122214708 * r + 0.5363325363 * g + 0.0514459929 * b);
  const m = Math.cbrt(0.2119034982 * r + 0.6806995451 * g + 0.1073969566 * b);
  const s = Math.cbrt(0.0883024619 * r + 0.2817188376 * g + 0.6299787005 * b);
  return [
    0.2104542553 * l + 0.793617785 * m - 0.0040720468 * s,
    1.9779984951 * l - 2.428592205 * m + 0.4505937099 * s,
    0.0259040371 * l + 0.7827717662 * m - 0.808675766 * s,
  ];
}

/** sRGB transfer function (IEC 61966-2-1): linear light in [0, 1] to an encoded value in [0, 1]. */
export function encodeSrgb(v: number): number {
  const c = Math.min(1, Math.max(0, v));
  return c <= 0.0031308 ? 12.92 * c : 1.055 * c ** (1 / 2.4) - 0.055;
}

export function decodeSrgb(v: number): number {
  return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4;
}

/** The colour for t in [0, 1] (clamped) as 8-bit sRGB; NaN gives null (the caller draws "no value"). */
export function colourAt(t: number): Rgb | null {
  if (Number.isNaN(t)) return null;
  const x = Math.min(1, Math.max(0, t)) * (ANCHORS.length - 1);
  const i = Math.min(ANCHORS.length - 2, Math.floor(x));
  const f = x - i;
  const p = ANCHORS[i], q = ANCHORS[i + 1];
  const lin = oklabToLinearSrgb(p[0] + f * (q[0] - p[0]), p[1] + f * (q[1] - p[1]), p[2] + f * (q[2] - p[2]));
  return lin.map((v) => Math.round(255 * encodeSrgb(v))) as Rgb;
}
