// Minimised cases the image-fuzz campaign (test/hardening/images.test.ts) found, kept as regular unit tests:
// a PNG whose image data is shorter than its header's size (pngjs filled the rest with zeros and allocated the whole
// image), an interlaced PNG whose data inflates far beyond its size (pngjs inflates interlaced files without a limit),
// a JPEG and a 16-bit PGM whose headers claim millions of pixels over a few bytes (allocated before the refusal),
// and an uncompressed TIFF whose Compression tag was flipped to LZW (utif2's LZW decoder looped forever on it).
// Formats: PNG (W3C/ISO 15948 sections 7.2, 8.2, 11.2.2), JPEG (ITU-T T.81), Netpbm pgm(5).

import { deflateSync } from 'node:zlib';
import { describe, expect, it } from 'vitest';
import { decodeImage } from '../../../src/images/codec';
import { ImageError } from '../../../src/images/types';
import { claimingFiles, seedFiles } from '../../hardening/imageSeeds';
import { chunk, concat, PNG_SIGNATURE } from './helpers';

function refusal(bytes: Uint8Array): ImageError {
  try {
    decodeImage(bytes);
  } catch (e) {
    if (e instanceof ImageError) return e;
    throw e;
  }
  throw new Error('decoded without an error');
}

function pngWith(width: number, height: number, interlace: number, raw: Uint8Array): Uint8Array {
  const ihdr = new Uint8Array(13);
  const v = new DataView(ihdr.buffer);
  v.setUint32(0, width);
  v.setUint32(4, height);
  ihdr.set([8, 0, 0, 0, interlace], 8); // 8-bit grey, deflate, adaptive filtering, interlace method
  return concat([PNG_SIGNATURE, chunk('IHDR', ihdr), chunk('IDAT', new Uint8Array(deflateSync(raw))), chunk('IEND', new Uint8Array(0))]);
}

describe('hostile image files', () => {
  it('a PNG whose data holds fewer bytes than its header needs is refused as truncated', () => {
    const e = refusal(pngWith(4096, 4096, 0, new Uint8Array(0)));
    expect(e.code).toBe('broken');
    expect(e.message).toMatch(/holds 0 of the 16781312 bytes a 4096x4096 image needs/);
    // One row short of 3 rows of 5 pixels (1 filter byte + 5 samples each).
    expect(refusal(pngWith(5, 3, 0, new Uint8Array(12))).message).toMatch(/holds 12 of the 18 bytes/);
    expect(decodeImage(pngWith(5, 3, 0, new Uint8Array(18))).width).toBe(5);
  });

  it('an interlaced PNG whose data inflates beyond its size is refused before it is inflated in full', () => {
    const e = refusal(pngWith(16, 16, 1, new Uint8Array(8 << 20)));
    expect(e.code).toBe('broken');
    expect(e.message).toMatch(/decompresses to more than/);
    // The exact Adam7 size of 16x16 8-bit grey: passes of 2x2, 2x2, 4x2, 4x4, 8x4, 8x8, 16x8 pixels, one filter byte per row.
    const adam7 = 2 * 3 + 2 * 3 + 2 * 5 + 4 * 5 + 4 * 9 + 8 * 9 + 8 * 17;
    expect(decodeImage(pngWith(16, 16, 1, new Uint8Array(adam7))).height).toBe(16);
  });

  it('JPEG and PGM headers claiming 4096x4096 over a few bytes are refused as truncated', () => {
    const files = new Map(claimingFiles(4096, 4096).map((f) => [f.name, f.bytes]));
    const jpeg = refusal(files.get('jpeg') as Uint8Array);
    expect(jpeg.code).toBe('broken');
    expect(jpeg.message).toMatch(/cannot hold the 4096x4096 pixels/);
    const pgm = refusal(files.get('pgm-p5-16') as Uint8Array);
    expect(pgm.message).toMatch(/needs 33554432 sample bytes, file has 4/);
    const plain = refusal(files.get('pgm-p2') as Uint8Array);
    expect(plain.message).toMatch(/needs at least 33554431 sample bytes/);
  });

  it('a TIFF whose strip is not a valid LZW stream is refused instead of hanging the decoder', () => {
    // The 8-bit RGB seed (uncompressed strips) with its Compression tag (259) set to 5, LZW (TIFF 6.0 section 13).
    const tiff = (seedFiles().find((f) => f.name === 'tiff-rgb8') as { bytes: Uint8Array }).bytes.slice();
    const v = new DataView(tiff.buffer);
    const le = tiff[0] === 0x49;
    const ifd = v.getUint32(4, le);
    for (let k = 0; k < v.getUint16(ifd, le); k++) if (v.getUint16(ifd + 2 + 12 * k, le) === 259) v.setUint16(ifd + 2 + 12 * k + 8, 5, le);
    const e = refusal(tiff);
    expect(e.code).toBe('broken');
    expect(e.message).toMatch(/TIFF: strip 0 is not a valid LZW stream \(code \d+ near byte \d+: only codes up to \d+ are defined\)/);
  });
});
