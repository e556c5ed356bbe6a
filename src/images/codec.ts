// Entry points for bytes in memory: sniff the format from magic bytes, check the header limits, decode, encode.
// Pure (Uint8Array in and out); must not import fs or path — file handling lives in files.ts.

import { decodeJpeg, readJpegHeader } from './jpeg';
import { decodePfm, decodePgm, encodePfm, encodePfmColour, encodePgm, readPfmHeader, readPgmHeader } from './netpbm';
import { decodePng, encodePng, encodeRgbPng, readPngHeader } from './png';
import { decodeTiff, encodeFloatTiff, readTiffHeader } from './tiff';
import {
  DEFAULT_MAX_PIXELS,
  DecodeOptions,
  DecodedImage,
  GreyImage,
  ImageError,
  ImageFormat,
  WritableFormat,
} from './types';
import { RawSamples, toChannels } from './values';

const startsWith = (b: Uint8Array, sig: number[]): boolean => b.length >= sig.length && sig.every((x, i) => b[i] === x);

/** Identifies the format from its magic bytes alone; null when none matches. */
export function sniffFormat(bytes: Uint8Array): ImageFormat | null {
  if (startsWith(bytes, [0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a])) return 'png';
  if (startsWith(bytes, [0xff, 0xd8, 0xff])) return 'jpeg';
  if (startsWith(bytes, [0x49, 0x49, 0x2a, 0x00]) || startsWith(bytes, [0x4d, 0x4d, 0x00, 0x2a])) return 'tiff';
  if (startsWith(bytes, [0x49, 0x49, 0x2b, 0x00]) || startsWith(bytes, [0x4d, 0x4d, 0x00, 0x2b])) return 'tiff'; // BigTIFF, refused later
  const ws = bytes.length > 2 && [0x20, 0x09, 0x0a, 0x0d].includes(bytes[2]);
  if (ws && bytes[0] === 0x50 && (bytes[1] === 0x32 || bytes[1] === 0x35)) return 'pgm';
  if (ws && bytes[0] === 0x50 && (bytes[1] === 0x66 || bytes[1] === 0x46)) return 'pfm';
  return null;
}

/** Width, height and format from the header only; no pixel data is touched or allocated. */
export function readImageSize(bytes: Uint8Array): { format: ImageFormat; width: number; height: number } {
  const format = detect(bytes);
  const h = readHeader(format, bytes);
  return { format, width: h.width, height: h.height };
}

function detect(bytes: Uint8Array): ImageFormat {
  if (bytes.length === 0) throw new ImageError('empty', 'image file is empty (0 bytes)');
  const format = sniffFormat(bytes);
  if (format === null) {
    const head = Array.from(bytes.subarray(0, 4), (b) => b.toString(16).padStart(2, '0')).join(' ');
    throw new ImageError('unknown-format', `unknown image format (first bytes ${head}); expected PNG, JPEG, TIFF, PGM or PFM`);
  }
  return format;
}

type AnyHeader = { width: number; height: number };

function readHeader(format: ImageFormat, bytes: Uint8Array): AnyHeader {
  switch (format) {
    case 'png': return readPngHeader(bytes);
    case 'jpeg': return readJpegHeader(bytes);
    case 'tiff': return readTiffHeader(bytes);
    case 'pgm': return readPgmHeader(bytes);
    case 'pfm': return readPfmHeader(bytes);
  }
}

/**
 * Decodes an image file held in memory.
 * Integer samples map to [0,1] by sample / (2^bits - 1) (PGM: sample / maxval) or by the `range` option;
 * float samples (PFM, float TIFF) pass through unchanged. Colour becomes BT.709 luma unless channels = 'separate'.
 * Alpha is ignored. Throws ImageError for every problem with the data.
 */
export function decodeImage(bytes: Uint8Array, opts: DecodeOptions = {}): DecodedImage {
  const maxPixels = opts.maxPixels ?? DEFAULT_MAX_PIXELS;
  if (!(maxPixels > 0)) throw new ImageError('bad-option', `maxPixels must be positive, got ${maxPixels}`);
  const format = detect(bytes);
  let raw: RawSamples;
  let bitDepth: number;
  // Each reader checks the header size against maxPixels before it allocates anything for pixels.
  switch (format) {
    case 'png': {
      const h = readPngHeader(bytes);
      raw = decodePng(bytes, h, maxPixels);
      bitDepth = h.bitDepth;
      break;
    }
    case 'jpeg': {
      const h = readJpegHeader(bytes);
      raw = decodeJpeg(bytes, h, maxPixels);
      bitDepth = h.precision;
      break;
    }
    case 'tiff': {
      const h = readTiffHeader(bytes);
      raw = decodeTiff(bytes, h, maxPixels);
      bitDepth = h.tags.get(258)?.[0] ?? 1;
      break;
    }
    case 'pgm': {
      const h = readPgmHeader(bytes);
      raw = decodePgm(bytes, h, maxPixels);
      bitDepth = Math.ceil(Math.log2(h.maxval + 1));
      break;
    }
    case 'pfm': {
      const h = readPfmHeader(bytes);
      raw = decodePfm(bytes, h, maxPixels);
      bitDepth = 32;
      break;
    }
  }
  const res = toChannels(raw, opts);
  return {
    format,
    width: raw.width,
    height: raw.height,
    bitDepth,
    sampleFormat: raw.maxval === null ? 'float' : 'uint',
    colour: raw.colour,
    scaling: res.scaling,
    channelNames: res.channelNames,
    channels: res.channels,
  };
}

/** Decodes to one grey channel (BT.709 luma for colour files). */
export function decodeGrey(bytes: Uint8Array, opts: Omit<DecodeOptions, 'channels'> = {}): GreyImage {
  return decodeImage(bytes, { ...opts, channels: 'luma' }).channels[0];
}

export interface EncodeOptions {
  /** PNG and PGM only: 8 (default) or 16 bits per sample. PFM and TIFF are always 32-bit float. */
  bitDepth?: 8 | 16;
}

/**
 * Encodes one grey channel. PNG/PGM clamp to [0,1] (NaN becomes 0) and round to the nearest sample;
 * PFM and TIFF (32-bit float) keep the values unchanged.
 */
export function encodeImage(image: GreyImage, format: WritableFormat, opts: EncodeOptions = {}): Uint8Array {
  const { width, height, data } = image;
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1 || data.length !== width * height) {
    throw new ImageError('bad-option', `cannot encode a ${width}x${height} image with ${data.length} values`);
  }
  const bitDepth = opts.bitDepth ?? 8;
  if (bitDepth !== 8 && bitDepth !== 16) throw new ImageError('bad-option', `bitDepth must be 8 or 16, got ${bitDepth}`);
  switch (format) {
    case 'png': return encodePng(image, bitDepth);
    case 'pgm': return encodePgm(image, bitDepth);
    case 'pfm': return encodePfm(image);
    case 'tiff': return encodeFloatTiff(image);
  }
}

/**
 * Encodes three channels as one colour picture: RGB PNG (8 or 16 bits, clamped and rounded as for grey) or colour
 * PFM (PF, values unchanged). PGM holds grey only and our TIFF writer one float channel: both are refused.
 */
export function encodeColourImage(r: GreyImage, g: GreyImage, b: GreyImage, format: WritableFormat, opts: EncodeOptions = {}): Uint8Array {
  const { width, height } = r;
  for (const c of [r, g, b]) {
    if (c.width !== width || c.height !== height || c.data.length !== width * height || width < 1 || height < 1) {
      throw new ImageError('bad-option', `cannot encode colour channels of sizes ${r.width}x${r.height}, ${g.width}x${g.height}, ${b.width}x${b.height}`);
    }
  }
  const bitDepth = opts.bitDepth ?? 8;
  if (bitDepth !== 8 && bitDepth !== 16) throw new ImageError('bad-option', `bitDepth must be 8 or 16, got ${bitDepth}`);
  if (format === 'png') return encodeRgbPng(r, g, b, bitDepth);
  if (format === 'pfm') return encodePfmColour(r, g, b);
  throw new ImageError('bad-option', `a colour result is written as .png or .pfm; ${format === 'pgm' ? 'PGM' : 'the TIFF writer'} holds one grey channel (pick one channel with --field NAME)`);
}

/** Output format from a file name's extension (.png, .pgm, .pfm, .tif, .tiff; case-insensitive); null if none. */
export function formatFromExtension(fileName: string): WritableFormat | null {
  const m = /\.([a-z]+)$/i.exec(fileName);
  if (!m) return null;
  const ext = m[1].toLowerCase();
  if (ext === 'png' || ext === 'pgm' || ext === 'pfm') return ext;
  if (ext === 'tif' || ext === 'tiff') return 'tiff';
  return null;
}
