// Campaign "image-fuzz": truncated, bit-flipped, overwritten, spliced and shortened files of every format we read
// (PNG, JPEG, TIFF with and without LZW/PackBits/Deflate, PGM, PFM), and headers claiming enormous sizes. Every file either decodes to a consistent image
// or throws the project's ImageError with a message; any other exception (a TypeError or RangeError from inside a
// codec library) is a failure. Memory: the growth of external memory (ArrayBuffers) during one decode is measured and
// must stay under a bound proportional to the pixel limit; headers over the limit must be refused before any pixel
// buffer exists. Formats: PNG (W3C/ISO 15948), JPEG (ITU-T T.81), TIFF 6.0 (Adobe 1992), Netpbm pgm(5) and PFM.

import { appendFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { decodeImage, readImageSize } from '../../src/images/codec';
import { DEFAULT_MAX_PIXELS, ImageError } from '../../src/images/types';
import { campaignSeed, report, rng, scaled } from './campaign';
import { claimingFiles, pillowSeeds, seedFiles } from './imageSeeds';

const HANG_MS = 5000;
/** The campaign's pixel limit, and the external memory one decode may add: 64 bytes per allowed pixel. */
const MAX_PIXELS = 1 << 20;
const ALLOC_BOUND = 64 * MAX_PIXELS;

type Outcome = { kind: 'ok' } | { kind: 'refused'; code: string } | { kind: 'defect'; what: string };

/** Decodes with the campaign limit, classifying the result; measures external memory growth and time. */
function tryDecode(bytes: Uint8Array, maxPixels: number): { outcome: Outcome; grew: number; ms: number } {
  const before = process.memoryUsage().arrayBuffers;
  const t0 = performance.now();
  let outcome: Outcome;
  try {
    const size = (() => { try { return readImageSize(bytes); } catch (e) { if (e instanceof ImageError) return null; throw e; } })();
    const img = decodeImage(bytes, { maxPixels, channels: 'separate' });
    const consistent = img.width >= 1 && img.height >= 1 && img.width * img.height <= maxPixels &&
      img.channels.every((c) => c.width === img.width && c.height === img.height && c.data.length === img.width * img.height) &&
      (size === null || (size.width === img.width && size.height === img.height));
    outcome = consistent ? { kind: 'ok' } : { kind: 'defect', what: `inconsistent result ${img.width}x${img.height}` };
  } catch (e) {
    if (e instanceof ImageError && e.message.length > 10 && e.code) outcome = { kind: 'refused', code: e.code };
    else outcome = { kind: 'defect', what: `${(e as Error)?.name}: ${(e as Error)?.message}` };
  }
  const ms = performance.now() - t0;
  return { outcome, grew: process.memoryUsage().arrayBuffers - before, ms };
}

function mutateBytes(src: Uint8Array, r: () => number): { bytes: Uint8Array; how: string } {
  const n = src.length;
  const at = Math.floor(r() * n);
  const headerAt = Math.floor(r() * Math.min(n, 96));
  switch (Math.floor(r() * 7)) {
    case 0: return { bytes: src.slice(0, at), how: `truncated to ${at}` };
    case 1: {
      const b = src.slice();
      const flips = 1 + Math.floor(r() * 8);
      for (let k = 0; k < flips; k++) { const i = Math.floor(r() * n); b[i] ^= 1 << Math.floor(r() * 8); }
      return { bytes: b, how: `${flips} bit flips` };
    }
    case 2: {
      const b = src.slice();
      b[headerAt] ^= 1 << Math.floor(r() * 8);
      return { bytes: b, how: `header bit flip at ${headerAt}` };
    }
    case 3: {
      const b = src.slice();
      const len = 1 + Math.floor(r() * 8);
      b.fill(r() < 0.5 ? 0x00 : 0xff, headerAt, headerAt + len);
      return { bytes: b, how: `header bytes ${headerAt}+${len} overwritten` };
    }
    case 4: {
      const len = 1 + Math.floor(r() * 16);
      return { bytes: new Uint8Array([...src.subarray(0, at), ...src.subarray(Math.min(n, at + len))]), how: `${len} bytes deleted at ${at}` };
    }
    case 5: {
      const ins = Uint8Array.from({ length: 1 + Math.floor(r() * 16) }, () => Math.floor(r() * 256));
      return { bytes: new Uint8Array([...src.subarray(0, at), ...ins, ...src.subarray(at)]), how: `${ins.length} bytes inserted at ${at}` };
    }
    default: {
      const from = Math.floor(r() * n);
      const len = Math.min(n - from, 1 + Math.floor(r() * 64));
      const b = src.slice();
      b.set(src.subarray(from, from + len), Math.min(at, n - len));
      return { bytes: b, how: `${len} bytes copied from ${from} to ${at}` };
    }
  }
}

describe('campaign image-fuzz', () => {
  const seeds = [...seedFiles(), ...pillowSeeds()];

  it('every seed file decodes (the mutations start from valid files of every format)', () => {
    expect(seeds.map((s) => s.name)).toEqual(expect.arrayContaining(['tiff-tiff_lzw', 'tiff-packbits', 'tiff-tiff_adobe_deflate']));
    for (const s of seeds) expect(tryDecode(s.bytes, MAX_PIXELS).outcome, s.name).toEqual({ kind: 'ok' });
  });

  it('mutated files decode or give an ImageError, within the time guard and the memory bound', () => {
    const r = rng(campaignSeed(20261204));
    const perSeed = scaled(500);
    const defects: string[] = [];
    const codes = new Map<string, number>();
    let cases = 0, ok = 0, maxGrew = 0, slowest = 0;
    for (const s of seeds) {
      for (let k = 0; k < perSeed; k++) {
        const { bytes, how } = mutateBytes(s.bytes, r);
        if (process.env.FLUXEL_CAMPAIGN_TRACE) appendFileSync(process.env.FLUXEL_CAMPAIGN_TRACE, `${s.name} ${k} ${how}\n`);
        const { outcome, grew, ms } = tryDecode(bytes, MAX_PIXELS);
        cases++;
        maxGrew = Math.max(maxGrew, grew);
        slowest = Math.max(slowest, ms);
        if (outcome.kind === 'defect') defects.push(`${s.name}, ${how}: ${outcome.what}`);
        else if (outcome.kind === 'ok') ok++;
        else codes.set(outcome.code, (codes.get(outcome.code) ?? 0) + 1);
        if (ms > HANG_MS) defects.push(`${s.name}, ${how}: took ${ms.toFixed(0)} ms`);
        if (grew > ALLOC_BOUND) defects.push(`${s.name}, ${how}: external memory grew by ${grew} bytes (bound ${ALLOC_BOUND})`);
      }
    }
    const refusals = [...codes].map(([c, n]) => `${c} ${n}`).join(', ');
    report('image-fuzz', cases, defects.length, `${ok} decoded, refused: ${refusals}; largest memory growth ${(maxGrew / 1e6).toFixed(1)} MB (bound ${ALLOC_BOUND / 1e6} MB), slowest ${slowest.toFixed(1)} ms`);
    expect(defects.slice(0, 10)).toEqual([]);
  });

  it('headers claiming enormous sizes are refused as too large before any pixel buffer exists', () => {
    const claims: [number, number][] = [[2 ** 31 - 1, 2 ** 31 - 1], [65535, 65535], [1e6, 1e6], [100000, 100000], [8193, 8192], [4294967295, 1], [1, 67108865]];
    const failures: string[] = [];
    let cases = 0, maxGrew = 0;
    for (const [w, h] of claims) {
      for (const f of claimingFiles(w, h)) {
        const { outcome, grew } = tryDecode(f.bytes, DEFAULT_MAX_PIXELS);
        cases++;
        maxGrew = Math.max(maxGrew, grew);
        // A JPEG header holds 16-bit sizes, so its claims are capped at 65535 per side: 65535 × 1 is within the limit and
        // must then be refused for its missing data instead.
        const over = f.name !== 'jpeg' || Math.min(w, 65535) * Math.min(h, 65535) > DEFAULT_MAX_PIXELS;
        if (outcome.kind !== 'refused' || (over && outcome.code !== 'too-large')) failures.push(`${f.name} ${w}x${h}: ${JSON.stringify(outcome)}`);
        if (grew > 1 << 20) failures.push(`${f.name} ${w}x${h}: external memory grew by ${grew} bytes before the refusal`);
      }
    }
    report('image-huge-headers', cases, failures.length, `largest memory growth ${(maxGrew / 1e3).toFixed(1)} kB`);
    expect(failures).toEqual([]);
  });

  it('headers claiming sizes within the limit but carrying no pixel data are refused as broken without allocating the image', () => {
    // 4096 × 4096 = 16 Mpx is within the default limit; even an 8-bit copy of it (16 MB) must not be made.
    const failures: string[] = [];
    let cases = 0, maxGrew = 0;
    for (const f of claimingFiles(4096, 4096)) {
      const { outcome, grew } = tryDecode(f.bytes, DEFAULT_MAX_PIXELS);
      cases++;
      maxGrew = Math.max(maxGrew, grew);
      if (outcome.kind !== 'refused') failures.push(`${f.name}: ${JSON.stringify(outcome)}`);
      if (grew > 4096 * 4096) failures.push(`${f.name}: external memory grew by ${(grew / 1e6).toFixed(1)} MB for a ${f.bytes.length}-byte file`);
    }
    report('image-empty-bodies', cases, failures.length, `largest memory growth ${(maxGrew / 1e6).toFixed(1)} MB`);
    expect(failures).toEqual([]);
  });
});
