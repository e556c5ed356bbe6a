// The pinned result's stored form: a round trip through JSON (the per-file memory) keeps every value bit for bit,
// the values are little-endian Float32 in base64, and anything malformed or too large is refused.

import { describe, expect, it } from 'vitest';
import { MAX_STORED_PIXELS, restorePinned, storePinned, type PinnedResult } from '../../../src/extension/preview/baseline';

const pinned = (width: number, height: number): PinnedResult => ({
  label: 'step 3 · K = 0.5, dt = 0.2 · survey tile, noise 0.1, seed 7', step: 3, t: 0.6, field: 'u', width, height,
  data: Float32Array.from({ length: width * height }, (_, i) => Math.fround(Math.sin(i) * 1e3) / 7),
  metrics: { psnr: 27.25, ssim: 0.8125, tv: 1234.5 }, pinnedAt: '2026-12-02T03:00:00.000Z',
});

describe('stored pinned result', () => {
  it('survives JSON bit for bit', () => {
    const p = pinned(7, 5);
    const back = restorePinned(JSON.parse(JSON.stringify(storePinned(p))));
    expect(back).toEqual(p);
  });

  it('stores little-endian Float32 values in base64', () => {
    const p = { ...pinned(1, 1), data: new Float32Array([1]) };
    // 1.0f is 0x3f800000: bytes 00 00 80 3f little-endian (IEEE 754 binary32; common practice).
    expect(storePinned(p)?.values).toBe(Buffer.from([0, 0, 0x80, 0x3f]).toString('base64'));
  });

  it('keeps metrics JSON cannot hold as null, and refuses malformed or oversized entries', () => {
    const p = { ...pinned(2, 2), metrics: { psnr: Infinity, ssim: null, tv: 4 } };
    expect(restorePinned(JSON.parse(JSON.stringify(storePinned(p))))?.metrics).toEqual({ psnr: null, ssim: null, tv: 4 });
    const stored = storePinned(pinned(2, 2)) as NonNullable<ReturnType<typeof storePinned>>;
    expect(restorePinned({ ...stored, values: Buffer.from([1, 2, 3]).toString('base64') })).toBeNull();
    expect(restorePinned({ ...stored, version: 2 })).toBeNull();
    expect(restorePinned({ ...stored, width: 0 })).toBeNull();
    expect(restorePinned({ ...stored, metrics: { psnr: '1', ssim: null, tv: null } })).toBeNull();
    expect(restorePinned(null)).toBeNull();
    expect(storePinned({ ...pinned(1, 1), width: MAX_STORED_PIXELS + 1, data: new Float32Array(MAX_STORED_PIXELS + 1) })).toBeNull();
  });
});
