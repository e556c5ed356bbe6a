// Test helpers for image codecs: tolerance comparison with messages and small hand-made byte builders.
// Test-only; imports nothing from src besides types.

import { deflateSync } from 'node:zlib';
import { expect } from 'vitest';
import { ImageError, ImageErrorCode } from '../../../src/images/types';

/** Asserts |a[i] - b[i]| <= tol for all i, reporting the worst index, error and tolerance. */
export function expectClose(a: ArrayLike<number>, b: ArrayLike<number>, tol: number, what: string): void {
  expect(a.length, `${what}: lengths`).toBe(b.length);
  let worst = 0;
  let at = -1;
  for (let i = 0; i < a.length; i++) {
    const e = Math.abs(a[i] - b[i]);
    if (!(e <= worst)) {
      worst = e;
      at = i;
    }
  }
  expect(worst <= tol, `${what}: max error ${worst} at index ${at} (got ${a[at]}, want ${b[at]}) exceeds tolerance ${tol}`).toBe(true);
}

/** Runs fn and returns the ImageError code it throws (fails the test if it throws something else or nothing). */
export function errorCode(fn: () => unknown): ImageErrorCode {
  try {
    fn();
  } catch (e) {
    expect(e, `expected an ImageError, got ${String(e)}`).toBeInstanceOf(ImageError);
    return (e as ImageError).code;
  }
  throw new Error('expected an ImageError, but nothing was thrown');
}

// CRC-32 as in the PNG spec (W3C / ISO/IEC 15948, annex D sample code; reflected polynomial 0xEDB88320).
const CRC_TABLE = (() => {
  const t = new Uint32Array(256);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c >>> 0;
  }
  return t;
})();

function crc32(bytes: Uint8Array): number {
  let c = 0xffffffff;
  for (const b of bytes) c = CRC_TABLE[(c ^ b) & 0xff] ^ (c >>> 8);
  return (c ^ 0xffffffff) >>> 0;
}

function chunk(type: string, body: Uint8Array): Uint8Array {
  const out = new Uint8Array(12 + body.length);
  const v = new DataView(out.buffer);
  v.setUint32(0, body.length);
  for (let i = 0; i < 4; i++) out[4 + i] = type.charCodeAt(i);
  out.set(body, 8);
  v.setUint32(8 + body.length, crc32(out.subarray(4, 8 + body.length)));
  return out;
}

const concat = (parts: Uint8Array[]): Uint8Array => {
  const out = new Uint8Array(parts.reduce((n, p) => n + p.length, 0));
  let o = 0;
  for (const p of parts) {
    out.set(p, o);
    o += p.length;
  }
  return out;
};

export const PNG_SIGNATURE = new Uint8Array([0x89, 0x50, 0x4e, 0x47, 0x0d, 0x0a, 0x1a, 0x0a]);

export function ihdr(width: number, height: number, bitDepth: number, colorType: number): Uint8Array {
  const body = new Uint8Array(13);
  const v = new DataView(body.buffer);
  v.setUint32(0, width);
  v.setUint32(4, height);
  body[8] = bitDepth;
  body[9] = colorType;
  return chunk('IHDR', body);
}

/**
 * A PNG built by hand from raw scanlines (filter byte 0 on each row), per the PNG spec sections 11.2 and 7-9;
 * optional PLTE body for palette images. Lets tests cover colour types and depths pngjs cannot write.
 */
export function handPng(width: number, height: number, bitDepth: number, colorType: number, rows: Uint8Array[], plte?: Uint8Array): Uint8Array {
  const raw = concat(rows.map((r) => concat([new Uint8Array([0]), r])));
  const parts = [PNG_SIGNATURE, ihdr(width, height, bitDepth, colorType)];
  if (plte) parts.push(chunk('PLTE', plte));
  parts.push(chunk('IDAT', new Uint8Array(deflateSync(raw))), chunk('IEND', new Uint8Array(0)));
  return concat(parts);
}

export { chunk, concat };
