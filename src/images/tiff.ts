// Reads TIFF (first image: 8/16-bit unsigned or 32-bit float, grey or RGB, strips) and writes 32-bit float grey TIFF.
// Pure: Uint8Array in and out; must not import fs or other codecs. We parse the first IFD ourselves and use
// utif2 only to decompress strips, because utif2 follows every IFD chain (a crafted loop would never end).

import * as UTIF from 'utif2';
import { GreyImage, ImageError } from './types';
import { RawSamples, checkDimensions } from './values';

/** Tag numbers from TIFF 6.0 (Adobe, 1992), sections 8 and 19, plus SampleFormat (section 19). */
const TAG = {
  width: 256,
  height: 257,
  bitsPerSample: 258,
  compression: 259,
  photometric: 262,
  stripOffsets: 273,
  samplesPerPixel: 277,
  rowsPerStrip: 278,
  stripByteCounts: 279,
  xResolution: 282,
  yResolution: 283,
  planarConfig: 284,
  resolutionUnit: 296,
  predictor: 317,
  colorMap: 320,
  tileWidth: 322,
  sampleFormat: 339,
} as const;

/** Byte sizes of the field types (TIFF 6.0 section 2, "Types"). */
const TYPE_SIZE: Record<number, number> = { 1: 1, 2: 1, 3: 2, 4: 4, 5: 8, 6: 1, 7: 1, 8: 2, 9: 4, 10: 8, 11: 4, 12: 8, 13: 4 };

/** Compressions utif2 decodes that we allow: none, LZW, Deflate (new and old code), PackBits. */
const COMPRESSIONS = new Set([1, 5, 8, 32946, 32773]);

export interface TiffHeader {
  width: number;
  height: number;
  littleEndian: boolean;
  /** Numeric tags of the first IFD, as arrays of numbers (ASCII and unknown types are dropped). */
  tags: Map<number, number[]>;
}

export function readTiffHeader(bytes: Uint8Array): TiffHeader {
  const le = bytes[0] === 0x49;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (bytes.length < 8) throw new ImageError('broken', 'TIFF: file ends inside the 8-byte header (truncated file)');
  const magic = view.getUint16(2, le);
  if (magic === 43) throw new ImageError('unsupported', 'TIFF: BigTIFF is not supported');
  const ifd = view.getUint32(4, le);
  if (ifd < 8 || ifd + 2 > bytes.length) throw new ImageError('broken', 'TIFF: first IFD offset points outside the file (truncated file)');
  const count = view.getUint16(ifd, le);
  if (ifd + 2 + count * 12 > bytes.length) throw new ImageError('broken', 'TIFF: first IFD runs past the end of the file (truncated file)');
  const tags = new Map<number, number[]>();
  for (let k = 0; k < count; k++) {
    const e = ifd + 2 + k * 12;
    const tag = view.getUint16(e, le);
    const type = view.getUint16(e + 2, le);
    const n = view.getUint32(e + 4, le);
    const size = TYPE_SIZE[type];
    if (size === undefined || type === 2 || type === 7 || type === 5 || type === 10) continue; // not numeric arrays we need
    const bytesNeeded = size * n;
    const at = bytesNeeded <= 4 ? e + 8 : view.getUint32(e + 8, le);
    if (at + bytesNeeded > bytes.length) throw new ImageError('broken', `TIFF: values of tag ${tag} lie outside the file (truncated file)`);
    const vals: number[] = new Array(n);
    for (let j = 0; j < n; j++) {
      const p = at + j * size;
      switch (type) {
        case 1: vals[j] = view.getUint8(p); break;
        case 3: vals[j] = view.getUint16(p, le); break;
        case 4: case 13: vals[j] = view.getUint32(p, le); break;
        case 6: vals[j] = view.getInt8(p); break;
        case 8: vals[j] = view.getInt16(p, le); break;
        case 9: vals[j] = view.getInt32(p, le); break;
        case 11: vals[j] = view.getFloat32(p, le); break;
        default: vals[j] = view.getFloat64(p, le);
      }
    }
    tags.set(tag, vals);
  }
  const w = tags.get(TAG.width)?.[0];
  const h = tags.get(TAG.height)?.[0];
  if (w === undefined || h === undefined) throw new ImageError('broken', 'TIFF: first IFD has no ImageWidth/ImageLength');
  return { width: w, height: h, littleEndian: le, tags };
}

export function decodeTiff(bytes: Uint8Array, h: TiffHeader, maxPixels: number): RawSamples {
  checkDimensions(h.width, h.height, maxPixels, 'TIFF');
  const t = (tag: number, dflt: number): number => h.tags.get(tag)?.[0] ?? dflt;
  const spp = t(TAG.samplesPerPixel, 1);
  const bpsAll = h.tags.get(TAG.bitsPerSample) ?? [1];
  const bps = bpsAll[0];
  const fmt = t(TAG.sampleFormat, 1);
  const photometric = t(TAG.photometric, -1);
  const compression = t(TAG.compression, 1);
  if (h.tags.has(TAG.tileWidth)) throw new ImageError('unsupported', 'TIFF: tiled images are not supported (strips only)');
  if (t(TAG.planarConfig, 1) !== 1) throw new ImageError('unsupported', 'TIFF: separate colour planes (PlanarConfiguration 2) are not supported');
  if (!COMPRESSIONS.has(compression)) throw new ImageError('unsupported', `TIFF: compression ${compression} is not supported`);
  if (bpsAll.some((b) => b !== bps)) throw new ImageError('unsupported', 'TIFF: samples of different bit depths are not supported');
  const intOk = fmt === 1 && (bps === 8 || bps === 16);
  const floatOk = fmt === 3 && bps === 32;
  if (!intOk && !floatOk) {
    throw new ImageError('unsupported', `TIFF: ${bps}-bit samples of SampleFormat ${fmt} are not supported (8/16-bit unsigned or 32-bit float)`);
  }
  const predictor = t(TAG.predictor, 1);
  if (predictor !== 1 && !(predictor === 2 && intOk)) throw new ImageError('unsupported', `TIFF: predictor ${predictor} is not supported`);
  let colour: boolean;
  if (photometric === 0 || photometric === 1) colour = false;
  else if (photometric === 2) colour = true;
  else throw new ImageError('unsupported', `TIFF: PhotometricInterpretation ${photometric} is not supported (grey or RGB only)`);
  if (spp < (colour ? 3 : 1)) throw new ImageError('broken', `TIFF: ${spp} samples per pixel is too few for ${colour ? 'RGB' : 'grey'}`);

  const offsets = h.tags.get(TAG.stripOffsets);
  const counts = h.tags.get(TAG.stripByteCounts);
  if (!offsets || !counts || offsets.length !== counts.length) throw new ImageError('broken', 'TIFF: missing or inconsistent StripOffsets/StripByteCounts');
  for (let i = 0; i < offsets.length; i++) {
    if (offsets[i] + counts[i] > bytes.length) throw new ImageError('broken', `TIFF: strip ${i} lies outside the file (truncated file)`);
  }
  const rowBytes = Math.ceil((h.width * spp * bps) / 8);
  const needed = rowBytes * h.height;
  if (compression === 1 && counts.reduce((a, b) => a + b, 0) < needed) {
    throw new ImageError('broken', `TIFF: strips hold fewer bytes than ${h.width}x${h.height} pixels need (truncated file)`);
  }

  if (compression === 5) offsets.forEach((off, i) => checkLzwStrip(bytes, off, counts[i], i));

  // utif2 wants the IFD as {tNNN: [values]} and reads strips from a whole-file ArrayBuffer (it uses absolute offsets).
  const ifd: Record<string, unknown> = {};
  for (const [tag, vals] of h.tags) ifd[`t${tag}`] = vals;
  const buffer = bytes.slice().buffer;
  let data: Uint8Array;
  try {
    // The third argument (the IFD list) is in utif2's code but missing from its type declarations.
    (UTIF.decodeImage as (b: ArrayBuffer, i: unknown, all: unknown[]) => void)(buffer, ifd, [ifd]);
    data = (ifd as unknown as UTIF.IFD).data;
  } catch (e) {
    throw new ImageError('broken', `TIFF: cannot decompress strips (${(e as Error).message})`);
  }
  if (!data || data.length < needed) throw new ImageError('broken', 'TIFF: decompressed data is shorter than the image (broken file)');

  const n = h.width * h.height * spp;
  let samples: ArrayLike<number>;
  if (bps === 8) samples = data;
  else {
    const dv = new DataView(data.buffer, data.byteOffset, data.byteLength);
    if (bps === 16) {
      // utif2 has already turned 16-bit samples little-endian (its own byte swap for big-endian files).
      const s = new Uint16Array(n);
      for (let i = 0; i < n; i++) s[i] = dv.getUint16(2 * i, true);
      samples = s;
    } else {
      const s = new Float32Array(n);
      for (let i = 0; i < n; i++) s[i] = dv.getFloat32(4 * i, h.littleEndian);
      samples = s;
    }
  }
  return {
    width: h.width,
    height: h.height,
    samples,
    spp,
    colour,
    maxval: fmt === 3 ? null : 2 ** bps - 1,
    whiteIsZero: photometric === 0,
    // The first extra sample (ExtraSamples) is taken as alpha, as TIFF writers use it (common practice).
    ...(spp > (colour ? 3 : 1) ? { alpha: colour ? 3 : 1 } : {}),
  };
}

/**
 * Walks one LZW strip's codes the way utif2's decoder reads them (TIFF 6.0 section 13: 9- to 12-bit codes, most
 * significant bit first, Clear 256, EndOfInformation 257, the code width growing one code early) without decoding,
 * and refuses a stream utif2 would loop on forever: its table entries must only point to earlier entries, so after a
 * Clear the next code must be a literal, and every other code must be defined already or be the next one to define.
 */
function checkLzwStrip(bytes: Uint8Array, off: number, len: number, strip: number): void {
  const CLEAR = 256, EOI = 257;
  const end = (off + len) * 8;
  let bit = off * 8;
  let width = 9;
  let next = 258;
  const read = (): number => {
    const i = bit >>> 3;
    const word = ((bytes[i] ?? 0) << 16) | ((bytes[i + 1] ?? 0) << 8) | (bytes[i + 2] ?? 0);
    const code = (word >>> (24 - (bit & 7) - width)) & ((1 << width) - 1);
    bit += width;
    return code;
  };
  const broken = (code: number, why: string): never => {
    throw new ImageError('broken', `TIFF: strip ${strip} is not a valid LZW stream (code ${code} near byte ${bit >>> 3}: ${why})`);
  };
  while (bit < end) {
    const code = read();
    if (code === EOI) return;
    if (code === CLEAR) {
      width = 9;
      next = 258;
      const first = read();
      if (first === EOI) return;
      if (first > 255) broken(first, 'a Clear must be followed by a literal');
      continue;
    }
    // Defined already (a literal or an entry below `next`), or the entry about to be defined (the KwKwK case).
    if (code > next) broken(code, `only codes up to ${next} are defined`);
    // Every other code defines one entry; the width grows one code early, up to 12 bits.
    next++;
    if (next + 1 === 1 << width && width !== 12) width++;
    if (next > 4096) broken(code, 'the code table is full without a Clear');
  }
}

/**
 * Baseline TIFF 6.0 grey image with 32-bit IEEE float samples (SampleFormat 3), little-endian,
 * uncompressed strips of about 64 KiB; values are written unchanged.
 */
export function encodeFloatTiff(image: GreyImage): Uint8Array {
  const { width, height, data } = image;
  const rowBytes = width * 4;
  const rowsPerStrip = Math.max(1, Math.floor(65536 / rowBytes));
  const strips = Math.ceil(height / rowsPerStrip);
  type Entry = { tag: number; type: number; values: number[] };
  const entries: Entry[] = [
    { tag: TAG.width, type: 4, values: [width] },
    { tag: TAG.height, type: 4, values: [height] },
    { tag: TAG.bitsPerSample, type: 3, values: [32] },
    { tag: TAG.compression, type: 3, values: [1] },
    { tag: TAG.photometric, type: 3, values: [1] }, // BlackIsZero
    { tag: TAG.stripOffsets, type: 4, values: new Array(strips).fill(0) },
    { tag: TAG.samplesPerPixel, type: 3, values: [1] },
    { tag: TAG.rowsPerStrip, type: 4, values: [rowsPerStrip] },
    { tag: TAG.stripByteCounts, type: 4, values: [] },
    { tag: TAG.xResolution, type: 5, values: [72, 1] },
    { tag: TAG.yResolution, type: 5, values: [72, 1] },
    { tag: TAG.planarConfig, type: 3, values: [1] },
    { tag: TAG.resolutionUnit, type: 3, values: [2] },
    { tag: TAG.sampleFormat, type: 3, values: [3] }, // IEEE floating point
  ];
  for (let s = 0; s < strips; s++) entries[8].values.push(Math.min(rowsPerStrip, height - s * rowsPerStrip) * rowBytes);
  const size = (e: Entry): number => (e.type === 5 ? 8 * (e.values.length / 2) : TYPE_SIZE[e.type] * e.values.length);

  // Layout: header, IFD, out-of-line tag values, then pixel strips (each start kept word-aligned).
  const ifdAt = 8;
  let extra = ifdAt + 2 + entries.length * 12 + 4;
  const valueAt = new Map<Entry, number>();
  for (const e of entries) {
    if (size(e) > 4) {
      valueAt.set(e, extra);
      extra += size(e);
      extra += extra & 1; // TIFF 6.0 requires values to start on a word boundary
    }
  }
  const pixelsAt = (extra + 3) & ~3;
  for (let s = 0; s < strips; s++) entries[5].values[s] = pixelsAt + s * rowsPerStrip * rowBytes;

  const out = new Uint8Array(pixelsAt + width * height * 4);
  const v = new DataView(out.buffer);
  out[0] = out[1] = 0x49; // "II": little-endian
  v.setUint16(2, 42, true);
  v.setUint32(4, ifdAt, true);
  v.setUint16(ifdAt, entries.length, true);
  const put = (type: number, at: number, vals: number[]): void => {
    if (type === 3) vals.forEach((x, j) => v.setUint16(at + 2 * j, x, true));
    else vals.forEach((x, j) => v.setUint32(at + 4 * j, x, true)); // LONG, and RATIONAL as pairs of LONG
  };
  entries.forEach((e, k) => {
    const p = ifdAt + 2 + k * 12;
    v.setUint16(p, e.tag, true);
    v.setUint16(p + 2, e.type, true);
    v.setUint32(p + 4, e.type === 5 ? e.values.length / 2 : e.values.length, true);
    const at = valueAt.get(e);
    if (at === undefined) put(e.type, p + 8, e.values);
    else {
      v.setUint32(p + 8, at, true);
      put(e.type, at, e.values);
    }
  });
  v.setUint32(ifdAt + 2 + entries.length * 12, 0, true); // no further IFD
  for (let i = 0; i < data.length; i++) v.setFloat32(pixelsAt + 4 * i, data[i], true);
  return out;
}
