// Reads baseline and progressive 8-bit JPEG through jpeg-js, after checking the SOF header ourselves.
// Pure: Uint8Array in; must not import fs or other codecs. There is no JPEG writer (lossy output is not wanted).

import { decode as decodeJpegJs } from 'jpeg-js';
import { ImageError } from './types';
import { RawSamples, checkDimensions } from './values';

export interface JpegHeader {
  width: number;
  height: number;
  precision: number;
  components: number;
  /** Offset of the first byte after the SOF segment; the EOI marker must come after it. */
  afterSof: number;
}

/** Walks the marker segments (ITU-T T.81, annex B) up to the first SOFn and reads its frame header. */
export function readJpegHeader(bytes: Uint8Array): JpegHeader {
  let i = 2;
  for (;;) {
    if (i + 4 > bytes.length) throw new ImageError('broken', 'JPEG: no frame header (SOF) before the end of the file (truncated file)');
    if (bytes[i] !== 0xff) throw new ImageError('broken', `JPEG: expected a marker at byte ${i}`);
    const m = bytes[i + 1];
    if (m === 0xff) {
      i++; // fill byte before a marker
      continue;
    }
    if (m === 0x01 || (m >= 0xd0 && m <= 0xd7)) {
      i += 2; // markers without a length field
      continue;
    }
    if (m === 0xda || m === 0xd9) throw new ImageError('broken', 'JPEG: scan data or end of image before any frame header (SOF)');
    const len = (bytes[i + 2] << 8) | bytes[i + 3];
    if (len < 2) throw new ImageError('broken', `JPEG: invalid segment length at byte ${i}`);
    // SOF0..SOF15 except DHT (C4), JPG (C8) and DAC (CC), per T.81 table B.1.
    if (m >= 0xc0 && m <= 0xcf && m !== 0xc4 && m !== 0xc8 && m !== 0xcc) {
      if (i + 10 > bytes.length) throw new ImageError('broken', 'JPEG: file ends inside the frame header (truncated file)');
      const precision = bytes[i + 4];
      const height = (bytes[i + 5] << 8) | bytes[i + 6];
      const width = (bytes[i + 7] << 8) | bytes[i + 8];
      const components = bytes[i + 9];
      if (m === 0xc3 || m === 0xc7 || m === 0xcb || m === 0xcf) throw new ImageError('unsupported', 'JPEG: lossless JPEG is not supported');
      if (m >= 0xc9) throw new ImageError('unsupported', 'JPEG: arithmetic-coded JPEG is not supported');
      return { width, height, precision, components, afterSof: i + 2 + len };
    }
    i += 2 + len;
  }
}

/** True when an EOI marker (FF D9) follows the frame header; FF in entropy-coded data is always stuffed, so this finds the real end. */
function hasEoi(bytes: Uint8Array, from: number): boolean {
  for (let i = bytes.length - 2; i >= from; i--) if (bytes[i] === 0xff && bytes[i + 1] === 0xd9) return true;
  return false;
}

export function decodeJpeg(bytes: Uint8Array, h: JpegHeader, maxPixels: number): RawSamples {
  // A zero height in SOF means "defined later by a DNL marker"; we treat it like any other zero size.
  checkDimensions(h.width, h.height, maxPixels, 'JPEG');
  if (h.precision !== 8) throw new ImageError('unsupported', `JPEG: ${h.precision}-bit samples are not supported (8-bit only)`);
  if (h.components !== 1 && h.components !== 3) {
    throw new ImageError('unsupported', `JPEG: ${h.components} colour components are not supported (grey or RGB only)`);
  }
  if (!hasEoi(bytes, h.afterSof)) throw new ImageError('broken', 'JPEG: no end-of-image marker (truncated file)');
  // Every 8x8 block's DC coefficient takes a Huffman code of at least one bit in some scan (T.81, F.1.2.1 and G.1.2.1),
  // so fewer bits after the frame header than blocks means a header claiming more pixels than the file holds;
  // refused here, before jpeg-js allocates buffers for the claimed size.
  const blocks = Math.ceil(h.width / 8) * Math.ceil(h.height / 8);
  const bits = (bytes.length - h.afterSof) * 8;
  if (bits < blocks) {
    throw new ImageError('broken', `JPEG: ${bytes.length - h.afterSof} bytes of image data cannot hold the ${h.width}x${h.height} pixels the header claims (truncated file)`);
  }
  let img: { width: number; height: number; data: Uint8Array };
  try {
    img = decodeJpegJs(bytes, {
      useTArray: true,
      formatAsRGBA: false,
      tolerantDecoding: false,
      maxResolutionInMP: Math.max(1, Math.ceil(maxPixels / 1e6)),
      maxMemoryUsageInMB: 4096,
    });
  } catch (e) {
    throw new ImageError('broken', `JPEG: cannot decode (${(e as Error).message})`);
  }
  if (img.width !== h.width || img.height !== h.height) throw new ImageError('broken', 'JPEG: decoded size does not match the header');
  // jpeg-js returns 3 samples per pixel even for one-component files (all three equal); take the first then.
  return { width: h.width, height: h.height, samples: img.data, spp: 3, colour: h.components === 3, maxval: 255 };
}
