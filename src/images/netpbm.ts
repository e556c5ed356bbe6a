// Reads and writes the Netpbm grey map (PGM, P2 and P5) and the Portable Float Map (PFM, Pf and PF).
// Pure byte-level code (Uint8Array in and out); must not import Node modules or other codecs.

import { GreyImage, ImageError } from './types';
import { RawSamples, checkDimensions, quantise } from './values';

const isSpace = (c: number): boolean => c === 0x20 || c === 0x09 || c === 0x0a || c === 0x0d || c === 0x0b || c === 0x0c;

/** Header tokens of a Netpbm file, and the offset of the single whitespace byte that ends the header. */
interface HeaderScan {
  tokens: string[];
  end: number; // index of the whitespace byte after the last token
}

/** Reads `count` whitespace-separated tokens after the 2-byte magic, skipping '#' comments (Netpbm pgm(5)). */
function scanTokens(bytes: Uint8Array, count: number, what: string, comments: boolean): HeaderScan {
  const tokens: string[] = [];
  let i = 2;
  while (tokens.length < count) {
    while (i < bytes.length && (isSpace(bytes[i]) || (comments && bytes[i] === 0x23))) {
      if (bytes[i] === 0x23) {
        while (i < bytes.length && bytes[i] !== 0x0a && bytes[i] !== 0x0d) i++;
      } else i++;
    }
    if (i >= bytes.length) throw new ImageError('broken', `${what}: header ends early (truncated file)`);
    let s = '';
    // Header tokens are short; 32 characters is far beyond any valid number and stops a runaway scan.
    while (i < bytes.length && !isSpace(bytes[i]) && bytes[i] !== 0x23 && s.length < 32) s += String.fromCharCode(bytes[i++]);
    tokens.push(s);
  }
  if (i >= bytes.length) throw new ImageError('broken', `${what}: header ends early (truncated file)`);
  if (!isSpace(bytes[i])) throw new ImageError('broken', `${what}: malformed header near byte ${i}`);
  return { tokens, end: i };
}

function parseDim(tok: string, name: string, what: string): number {
  if (!/^[0-9]+$/.test(tok)) throw new ImageError('broken', `${what}: ${name} '${tok}' is not a non-negative integer`);
  return Number(tok);
}

export interface PgmHeader {
  width: number;
  height: number;
  maxval: number;
  plain: boolean; // P2 (ASCII samples) rather than P5 (binary)
  dataStart: number;
}

export function readPgmHeader(bytes: Uint8Array): PgmHeader {
  const plain = bytes[1] === 0x32;
  const what = plain ? 'PGM (P2)' : 'PGM (P5)';
  const { tokens, end } = scanTokens(bytes, 3, what, true);
  const width = parseDim(tokens[0], 'width', what);
  const height = parseDim(tokens[1], 'height', what);
  const maxval = parseDim(tokens[2], 'maxval', what);
  if (maxval < 1 || maxval > 65535) throw new ImageError('broken', `${what}: maxval ${maxval} outside 1..65535`);
  return { width, height, maxval, plain, dataStart: end + 1 };
}

export function decodePgm(bytes: Uint8Array, h: PgmHeader, maxPixels: number): RawSamples {
  const what = h.plain ? 'PGM (P2)' : 'PGM (P5)';
  checkDimensions(h.width, h.height, maxPixels, what);
  const n = h.width * h.height;
  // The sample bytes a file of this size can hold are checked before the samples are allocated: binary samples take
  // 1 or 2 bytes each, plain ones at least a digit and a separator (one digit for the last).
  const have = bytes.length - h.dataStart;
  const bps = h.maxval < 256 ? 1 : 2;
  const need = h.plain ? 2 * n - 1 : n * bps;
  if (have < need) {
    throw new ImageError('broken', `${what}: needs ${h.plain ? 'at least ' : ''}${need} sample bytes, file has ${have} (truncated file)`);
  }
  const samples = h.maxval < 256 ? new Uint8Array(n) : new Uint16Array(n);
  if (h.plain) {
    let i = h.dataStart;
    for (let k = 0; k < n; k++) {
      while (i < bytes.length && (isSpace(bytes[i]) || bytes[i] === 0x23)) {
        if (bytes[i] === 0x23) while (i < bytes.length && bytes[i] !== 0x0a) i++;
        else i++;
      }
      if (i >= bytes.length) throw new ImageError('broken', `${what}: only ${k} of ${n} samples present (truncated file)`);
      let v = 0;
      let digits = 0;
      while (i < bytes.length && bytes[i] >= 0x30 && bytes[i] <= 0x39) {
        v = v * 10 + (bytes[i++] - 0x30);
        digits++;
      }
      if (digits === 0) throw new ImageError('broken', `${what}: unexpected byte ${bytes[i]} in sample data`);
      if (v > h.maxval) throw new ImageError('broken', `${what}: sample ${v} exceeds maxval ${h.maxval}`);
      samples[k] = v;
    }
  } else {
    let p = h.dataStart;
    for (let k = 0; k < n; k++) {
      // Two-byte samples are big-endian (most significant byte first), per pgm(5).
      const v = bps === 1 ? bytes[p++] : (bytes[p++] << 8) | bytes[p++];
      if (v > h.maxval) throw new ImageError('broken', `${what}: sample ${v} exceeds maxval ${h.maxval}`);
      samples[k] = v;
    }
  }
  return { width: h.width, height: h.height, samples, spp: 1, colour: false, maxval: h.maxval };
}

/** Binary PGM (P5); values are clamped to [0,1] and rounded to the nearest of 0..255 or 0..65535. */
export function encodePgm(image: GreyImage, bitDepth: 8 | 16): Uint8Array {
  const maxval = bitDepth === 8 ? 255 : 65535;
  const head = new TextEncoder().encode(`P5\n${image.width} ${image.height}\n${maxval}\n`);
  const bps = bitDepth / 8;
  const out = new Uint8Array(head.length + image.data.length * bps);
  out.set(head, 0);
  let p = head.length;
  for (let i = 0; i < image.data.length; i++) {
    const q = quantise(image.data[i], maxval);
    if (bps === 1) out[p++] = q;
    else {
      out[p++] = q >> 8;
      out[p++] = q & 0xff;
    }
  }
  return out;
}

export interface PfmHeader {
  width: number;
  height: number;
  colour: boolean;
  littleEndian: boolean;
  dataStart: number;
}

export function readPfmHeader(bytes: Uint8Array): PfmHeader {
  const colour = bytes[1] === 0x46; // 'F' colour, 'f' grey
  const what = colour ? 'PFM (PF)' : 'PFM (Pf)';
  // PFM has no comment syntax, so '#' is not special here.
  const { tokens, end } = scanTokens(bytes, 3, what, false);
  const width = parseDim(tokens[0], 'width', what);
  const height = parseDim(tokens[1], 'height', what);
  const scale = Number(tokens[2]);
  if (!Number.isFinite(scale) || scale === 0) throw new ImageError('broken', `${what}: scale '${tokens[2]}' must be a non-zero number`);
  // The sign of the scale gives the byte order: negative means little-endian.
  return { width, height, colour, littleEndian: scale < 0, dataStart: end + 1 };
}

/** Values pass through unchanged (the |scale| factor is not applied); rows are stored bottom to top. */
export function decodePfm(bytes: Uint8Array, h: PfmHeader, maxPixels: number): RawSamples {
  const what = h.colour ? 'PFM (PF)' : 'PFM (Pf)';
  checkDimensions(h.width, h.height, maxPixels, what);
  const spp = h.colour ? 3 : 1;
  const rowLen = h.width * spp;
  const need = rowLen * h.height * 4;
  if (bytes.length - h.dataStart < need) {
    throw new ImageError('broken', `${what}: needs ${need} sample bytes, file has ${bytes.length - h.dataStart} (truncated file)`);
  }
  const view = new DataView(bytes.buffer, bytes.byteOffset + h.dataStart, need);
  const samples = new Float32Array(rowLen * h.height);
  for (let fileRow = 0; fileRow < h.height; fileRow++) {
    const y = h.height - 1 - fileRow; // first stored row is the bottom of the picture
    for (let k = 0; k < rowLen; k++) {
      samples[y * rowLen + k] = view.getFloat32((fileRow * rowLen + k) * 4, h.littleEndian);
    }
  }
  return { width: h.width, height: h.height, samples, spp, colour: h.colour, maxval: null };
}

/** Grey PFM, little-endian (scale -1), rows bottom to top, values unchanged. */
export function encodePfm(image: GreyImage): Uint8Array {
  const head = new TextEncoder().encode(`Pf\n${image.width} ${image.height}\n-1.0\n`);
  const out = new Uint8Array(head.length + image.data.length * 4);
  out.set(head, 0);
  const view = new DataView(out.buffer, head.length);
  const { width, height, data } = image;
  for (let fileRow = 0; fileRow < height; fileRow++) {
    const y = height - 1 - fileRow;
    for (let x = 0; x < width; x++) view.setFloat32((fileRow * width + x) * 4, data[y * width + x], true);
  }
  return out;
}

/** Colour PFM (PF), little-endian (scale -1), rows bottom to top, R G B interleaved, values unchanged. */
export function encodePfmColour(r: GreyImage, g: GreyImage, b: GreyImage): Uint8Array {
  const { width, height } = r;
  const head = new TextEncoder().encode(`PF\n${width} ${height}\n-1.0\n`);
  const out = new Uint8Array(head.length + width * height * 12);
  out.set(head, 0);
  const view = new DataView(out.buffer, head.length);
  for (let fileRow = 0; fileRow < height; fileRow++) {
    const y = height - 1 - fileRow;
    for (let x = 0; x < width; x++) {
      const i = y * width + x, at = (fileRow * width + x) * 12;
      view.setFloat32(at, r.data[i], true);
      view.setFloat32(at + 4, g.data[i], true);
      view.setFloat32(at + 8, b.data[i], true);
    }
  }
  return out;
}
