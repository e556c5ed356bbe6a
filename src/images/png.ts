// Reads PNG (all bit depths and colour types) through pngjs and writes 8/16-bit grey or RGB PNG.
// Pure: Uint8Array in and out; must not import fs or other codecs. pngjs itself uses Node's zlib.

import { inflateSync } from 'node:zlib';
import { PNG } from 'pngjs';
import { GreyImage, ImageError } from './types';
import { RawSamples, checkDimensions, quantise } from './values';

export interface PngHeader {
  width: number;
  height: number;
  bitDepth: number;
  colorType: number;
  /** Interlace method: 0 none, 1 Adam7. */
  interlace: number;
}

/** Samples per pixel of each colour type (PNG spec, section 11.2.2, table 11.1). */
const CHANNELS: Record<number, number> = { 0: 1, 2: 3, 3: 1, 4: 2, 6: 4 };

const PNG_COLOUR_TYPES = new Set([0, 2, 3, 4, 6]);

/** Reads IHDR, which the PNG spec (W3C / ISO/IEC 15948, section 11.2.2) requires to be the first chunk. */
export function readPngHeader(bytes: Uint8Array): PngHeader {
  if (bytes.length < 8 + 8 + 13) throw new ImageError('broken', 'PNG: file ends inside the IHDR header (truncated file)');
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const type = String.fromCharCode(bytes[12], bytes[13], bytes[14], bytes[15]);
  if (type !== 'IHDR' || view.getUint32(8) !== 13) throw new ImageError('broken', 'PNG: first chunk is not a 13-byte IHDR');
  const width = view.getUint32(16);
  const height = view.getUint32(20);
  const bitDepth = bytes[24];
  const colorType = bytes[25];
  if (!PNG_COLOUR_TYPES.has(colorType) || ![1, 2, 4, 8, 16].includes(bitDepth)) {
    throw new ImageError('broken', `PNG: invalid colour type ${colorType} / bit depth ${bitDepth} in IHDR`);
  }
  return { width, height, bitDepth, colorType, interlace: bytes[28] };
}

/** Bytes of filtered scanlines the header implies (PNG spec sections 7.2 and 8.2: one filter byte per row, Adam7 passes). */
function rawLength(h: PngHeader): number {
  const bits = CHANNELS[h.colorType] * h.bitDepth;
  const rows = (w: number, n: number): number => (w > 0 && n > 0 ? n * (1 + Math.ceil((w * bits) / 8)) : 0);
  if (h.interlace !== 1) return rows(h.width, h.height);
  // Adam7 passes: [x start, x step, y start, y step].
  const passes = [[0, 8, 0, 8], [4, 8, 0, 8], [0, 4, 4, 8], [2, 4, 0, 4], [0, 2, 2, 4], [1, 2, 0, 2], [0, 1, 1, 2]];
  return passes.reduce((sum, [x0, dx, y0, dy]) => sum + rows(Math.ceil((h.width - x0) / dx), Math.ceil((h.height - y0) / dy)), 0);
}

/**
 * Inflates the IDAT stream once with the header's size as the output limit, before pngjs allocates the image: a stream
 * that holds less than the header's pixels (pngjs would fill the rest with zeros) or more (pngjs inflates interlaced
 * files without any limit, so a small file could expand to gigabytes) is refused as broken.
 */
function checkImageData(bytes: Uint8Array, h: PngHeader): void {
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const parts: Uint8Array[] = [];
  for (let i = 8; i + 8 <= bytes.length;) {
    const len = view.getUint32(i);
    const type = String.fromCharCode(bytes[i + 4], bytes[i + 5], bytes[i + 6], bytes[i + 7]);
    if (i + 12 + len > bytes.length) throw new ImageError('broken', `PNG: chunk ${JSON.stringify(type)} runs past the end of the file (truncated file)`);
    if (type === 'IDAT') parts.push(bytes.subarray(i + 8, i + 8 + len));
    if (type === 'IEND') break;
    i += 12 + len;
  }
  if (!parts.length) throw new ImageError('broken', 'PNG: no image data (IDAT chunk)');
  const expected = rawLength(h);
  let raw: Buffer;
  try {
    raw = inflateSync(Buffer.concat(parts), { maxOutputLength: expected });
  } catch (e) {
    if ((e as { code?: string }).code === 'ERR_BUFFER_TOO_LARGE') {
      throw new ImageError('broken', `PNG: image data decompresses to more than the ${expected} bytes a ${h.width}x${h.height} image needs`);
    }
    throw new ImageError('broken', `PNG: image data cannot be decompressed (${(e as Error).message})`);
  }
  if (raw.length < expected) {
    throw new ImageError('broken', `PNG: image data holds ${raw.length} of the ${expected} bytes a ${h.width}x${h.height} image needs (truncated file)`);
  }
}

export function decodePng(bytes: Uint8Array, h: PngHeader, maxPixels: number): RawSamples {
  checkDimensions(h.width, h.height, maxPixels, 'PNG');
  checkImageData(bytes, h);
  let png: { width: number; height: number; data: ArrayLike<number> };
  try {
    // skipRescale keeps samples at their stored depth (0..2^bits-1) instead of rescaling to 8 bits;
    // pngjs always hands back 4 samples per pixel (palette entries expanded to RGBA).
    png = PNG.sync.read(Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength), { skipRescale: true } as never);
  } catch (e) {
    throw new ImageError('broken', `PNG: cannot decode (${(e as Error).message})`);
  }
  if (png.width !== h.width || png.height !== h.height || png.data.length < h.width * h.height * 4) {
    throw new ImageError('broken', 'PNG: decoded size does not match the header');
  }
  const palette = h.colorType === 3;
  const colour = h.colorType === 2 || h.colorType === 6 || palette;
  // Palette entries are always 8-bit RGB, whatever the index bit depth.
  const maxval = palette ? 255 : 2 ** h.bitDepth - 1;
  // pngjs fills alpha (sample 3) from the file's alpha or tRNS, and with maxval where the file has none.
  return { width: h.width, height: h.height, samples: png.data, spp: 4, colour, maxval: maxval, alpha: 3 };
}

/** Grey PNG (colour type 0); values clamped to [0,1] and rounded to the nearest of 0..2^bitDepth-1. */
export function encodePng(image: GreyImage, bitDepth: 8 | 16): Uint8Array {
  const { width, height, data } = image;
  const png = new PNG({ width, height, colorType: 0, inputColorType: 0, bitDepth, inputHasAlpha: false });
  if (bitDepth === 8) {
    const buf = Buffer.alloc(width * height);
    for (let i = 0; i < data.length; i++) buf[i] = quantise(data[i], 255);
    png.data = buf;
  } else {
    // pngjs reads 16-bit input as native Uint16 values from the buffer and writes them big-endian.
    const u16 = new Uint16Array(width * height);
    for (let i = 0; i < data.length; i++) u16[i] = quantise(data[i], 65535);
    png.data = Buffer.from(u16.buffer);
  }
  const out = PNG.sync.write(png, { colorType: 0, inputColorType: 0, bitDepth, inputHasAlpha: false });
  return new Uint8Array(out.buffer, out.byteOffset, out.byteLength);
}

/** RGB PNG (colour type 2); each channel clamped to [0,1] and rounded to the nearest of 0..2^bitDepth-1. */
export function encodeRgbPng(r: GreyImage, g: GreyImage, b: GreyImage, bitDepth: 8 | 16): Uint8Array {
  const { width, height } = r;
  const n = width * height;
  const png = new PNG({ width, height, colorType: 2, inputColorType: 2, bitDepth, inputHasAlpha: false });
  const max = bitDepth === 8 ? 255 : 65535;
  const vals = bitDepth === 8 ? new Uint8Array(3 * n) : new Uint16Array(3 * n);
  for (let i = 0; i < n; i++) {
    vals[3 * i] = quantise(r.data[i], max);
    vals[3 * i + 1] = quantise(g.data[i], max);
    vals[3 * i + 2] = quantise(b.data[i], max);
  }
  png.data = Buffer.from(vals.buffer, vals.byteOffset, vals.byteLength);
  const out = PNG.sync.write(png, { colorType: 2, inputColorType: 2, bitDepth, inputHasAlpha: false });
  return new Uint8Array(out.buffer, out.byteOffset, out.byteLength);
}
