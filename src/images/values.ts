// Turns stored samples (any codec's interleaved integers or floats) into [0,1] or pass-through Float32 channels.
// Owns the value rules of contracts.md section 3 and the BT.709 luma rule; must not import Node or codec libraries.

import { DecodeOptions, GreyImage, ImageError } from './types';

/**
 * ITU-R BT.709-6 (2015), item 3.2, luma coefficients.
 * Applied to the stored (gamma-encoded) values after scaling to [0,1]; we do not linearise first,
 * so the result is the gamma-encoded luma Y' of BT.709, not relative luminance.
 */
export const LUMA_709 = { r: 0.2126, g: 0.7152, b: 0.0722 } as const;

/** Samples as a codec hands them over, before any scaling. */
export interface RawSamples {
  width: number;
  height: number;
  /** Interleaved samples, `spp` per pixel; extra samples beyond colour (alpha) are ignored. */
  samples: ArrayLike<number>;
  spp: number;
  /** True: samples 0, 1, 2 of each pixel are R, G, B. False: sample 0 is grey. */
  colour: boolean;
  /** Largest integer sample (2^bits - 1, or PGM maxval); null for float samples, which pass through unchanged. */
  maxval: number | null;
  /** TIFF PhotometricInterpretation 0 (WhiteIsZero): integer value becomes maxval - sample before scaling. */
  whiteIsZero?: boolean;
  /** Index of the alpha sample within a pixel's samples, when the file stores one. */
  alpha?: number;
}

export interface ChannelResult {
  channels: GreyImage[];
  channelNames: string[];
  scaling: { lo: number; hi: number } | null;
}

/** Checks and resolves the `range` option against an integer format's maxval. */
export function resolveScaling(range: DecodeOptions['range'], maxval: number): { lo: number; hi: number } {
  if (range === undefined) return { lo: 0, hi: maxval };
  const { lo, hi } = range;
  if (!Number.isFinite(lo) || !Number.isFinite(hi) || !(hi > lo)) {
    throw new ImageError('bad-option', `range must have finite lo < hi, got lo=${lo}, hi=${hi}`);
  }
  return { lo, hi };
}

export function toChannels(raw: RawSamples, opts: DecodeOptions): ChannelResult {
  const { width, height, samples, spp, colour, maxval } = raw;
  const n = width * height;
  const scaling = maxval === null ? null : resolveScaling(opts.range, maxval);
  // Scaling is done in Float64 and rounded once to Float32, so 16-bit samples keep their full precision.
  const lo = scaling ? scaling.lo : 0;
  const inv = scaling ? 1 / (scaling.hi - scaling.lo) : 1;
  const flip = raw.whiteIsZero === true && maxval !== null;
  const value = (s: number): number => {
    const t = flip ? (maxval as number) - s : s;
    return scaling ? (t - lo) * inv : t;
  };
  if (opts.channels === 'all') {
    // Every picture as red, green, blue, alpha and luma: grey files give the grey value in the three colour
    // channels and as luma; alpha is sample / maxval by its own bit depth (never by `range`, which describes the
    // data), 1 where the file stores none. Luma is computed exactly as the 'luma' mode does (Float64, one rounding).
    const r = new Float32Array(n);
    const g = colour ? new Float32Array(n) : r;
    const b = colour ? new Float32Array(n) : r;
    const y = colour ? new Float32Array(n) : r;
    const a = new Float32Array(n);
    const ai = raw.alpha !== undefined && raw.alpha < spp ? raw.alpha : -1;
    const alphaScale = maxval === null ? 1 : 1 / maxval;
    for (let i = 0, j = 0; i < n; i++, j += spp) {
      const vr = value(samples[j]);
      r[i] = vr;
      if (colour) {
        const vg = value(samples[j + 1]);
        const vb = value(samples[j + 2]);
        g[i] = vg;
        b[i] = vb;
        y[i] = LUMA_709.r * vr + LUMA_709.g * vg + LUMA_709.b * vb;
      }
      a[i] = ai < 0 ? 1 : samples[j + ai] * alphaScale;
    }
    return {
      channels: [{ width, height, data: r }, { width, height, data: g }, { width, height, data: b }, { width, height, data: a }, { width, height, data: y }],
      channelNames: ['R', 'G', 'B', 'A', 'Y'],
      scaling,
    };
  }
  if (!colour) {
    const out = new Float32Array(n);
    for (let i = 0, j = 0; i < n; i++, j += spp) out[i] = value(samples[j]);
    return { channels: [{ width, height, data: out }], channelNames: ['grey'], scaling };
  }
  if (opts.channels === 'separate') {
    const r = new Float32Array(n);
    const g = new Float32Array(n);
    const b = new Float32Array(n);
    for (let i = 0, j = 0; i < n; i++, j += spp) {
      r[i] = value(samples[j]);
      g[i] = value(samples[j + 1]);
      b[i] = value(samples[j + 2]);
    }
    return {
      channels: [
        { width, height, data: r },
        { width, height, data: g },
        { width, height, data: b },
      ],
      channelNames: ['R', 'G', 'B'],
      scaling,
    };
  }
  const out = new Float32Array(n);
  for (let i = 0, j = 0; i < n; i++, j += spp) {
    out[i] = LUMA_709.r * value(samples[j]) + LUMA_709.g * value(samples[j + 1]) + LUMA_709.b * value(samples[j + 2]);
  }
  return { channels: [{ width, height, data: out }], channelNames: ['luma'], scaling };
}

/** Refuses zero or oversized dimensions; called on header values before any pixel buffer is allocated. */
export function checkDimensions(width: number, height: number, maxPixels: number, what: string): void {
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 0 || height < 0) {
    throw new ImageError('broken', `${what}: invalid size ${width}x${height} in header`);
  }
  if (width === 0 || height === 0) {
    throw new ImageError('empty', `${what}: image has zero size (${width}x${height})`);
  }
  if (width * height > maxPixels) {
    throw new ImageError(
      'too-large',
      `${what}: ${width}x${height} = ${width * height} pixels exceeds the limit of ${maxPixels} pixels (maxPixels option)`,
    );
  }
}

/** Integer sample for an encoder: clamp to [0,1], NaN to 0, round half up to the nearest of 0..maxval. */
export function quantise(v: number, maxval: number): number {
  if (!(v > 0)) return 0; // also catches NaN
  if (v >= 1) return maxval;
  return Math.floor(v * maxval + 0.5);
}
