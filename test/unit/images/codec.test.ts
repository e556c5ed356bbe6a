// Unit tests for src/images codecs: round trips per format and depth, value rules, orientation, limits and errors.
// Sources are named beside each check; bytes built by hand follow the cited format documents.

import { describe, expect, it } from 'vitest';
import { PNG } from 'pngjs';
import { encode as encodeJpeg } from 'jpeg-js';
import { decodeGrey, decodeImage, encodeImage, formatFromExtension, readImageSize, sniffFormat } from '../../../src/images/codec';
import { GreyImage, toNdarray } from '../../../src/images/types';
import { LUMA_709 } from '../../../src/images/values';
import { PNG_SIGNATURE, concat, errorCode, expectClose, handPng, ihdr } from './helpers';

const ascii = (s: string): Uint8Array => new TextEncoder().encode(s);

/** A deterministic test picture with values spread over [0,1] (simple arithmetic, no PRNG needed). */
function testImage(width: number, height: number): GreyImage {
  const data = new Float32Array(width * height);
  for (let i = 0; i < data.length; i++) data[i] = ((i * 37) % 101) / 100;
  return { width, height, data };
}

function encodePngWith(width: number, height: number, colorType: 0 | 2 | 4 | 6, bitDepth: 8 | 16, rgba: number[]): Uint8Array {
  // pngjs takes RGBA input (inputColorType 6) and writes the requested colour type and depth.
  const png = new PNG({ width, height, colorType, bitDepth, inputColorType: 6, inputHasAlpha: true });
  const data = bitDepth === 16 ? new Uint16Array(rgba) : Uint8Array.from(rgba);
  png.data = Buffer.from(data.buffer);
  const out = PNG.sync.write(png, { colorType, bitDepth, inputColorType: 6, inputHasAlpha: true });
  return new Uint8Array(out.buffer, out.byteOffset, out.byteLength);
}

describe('round trips', () => {
  // Integer formats: value = sample / (2^bits - 1) (contracts.md section 3); writing rounds to the nearest sample,
  // so a round trip is within half a quantisation step.
  for (const [format, bitDepth] of [['png', 8], ['png', 16], ['pgm', 8], ['pgm', 16]] as const) {
    it(`${format} ${bitDepth}-bit grey keeps values within half a step`, () => {
      const img = testImage(13, 7);
      const back = decodeImage(encodeImage(img, format, { bitDepth }));
      expect(back.format).toBe(format);
      expect(back.bitDepth).toBe(bitDepth);
      expect([back.width, back.height]).toEqual([13, 7]);
      const step = 1 / (2 ** bitDepth - 1);
      expectClose(back.channels[0].data, img.data, 0.5 * step + 1e-7, `${format}${bitDepth}`);
    });
  }

  // Float formats pass values through unchanged, including negatives and values above 1 (contracts.md section 3).
  for (const format of ['pfm', 'tiff'] as const) {
    it(`${format} float keeps values bit for bit, outside [0,1] too`, () => {
      const img = testImage(9, 5);
      img.data[0] = -3.25;
      img.data[1] = 1e6;
      img.data[2] = 1.5;
      img.data[3] = -0;
      const back = decodeImage(encodeImage(img, format));
      expect(back.sampleFormat).toBe('float');
      expect(back.scaling).toBeNull();
      expect(Array.from(back.channels[0].data)).toEqual(Array.from(img.data));
    });
  }

  it('float TIFF with many strips (taller than one 64 KiB strip) keeps every row in place', () => {
    const img = testImage(300, 200); // 1200 bytes a row -> 54 rows a strip -> 4 strips
    const back = decodeGrey(encodeImage(img, 'tiff'));
    expect(Array.from(back.data)).toEqual(Array.from(img.data));
  });

  it('16-bit PNG and PGM distinguish all 65536 levels (16-bit precision)', () => {
    const data = new Float32Array(65536);
    for (let k = 0; k < 65536; k++) data[k] = k / 65535;
    const img = { width: 256, height: 256, data };
    for (const format of ['png', 'pgm'] as const) {
      const back = decodeGrey(encodeImage(img, format, { bitDepth: 16 }));
      // Decoding computes k / 65535 in double precision and rounds once to float32, as the input was made.
      expect(Array.from(back.data), `${format} 16-bit`).toEqual(Array.from(data));
    }
  });

  it('encoding clamps to [0,1], maps NaN to 0 and rounds to the nearest sample (contracts.md section 3)', () => {
    const img = { width: 6, height: 1, data: Float32Array.from([-0.3, 1.7, NaN, 0.2, 0.5 / 255 + 1e-6, 0.5 / 255 - 1e-6]) };
    const back = decodeGrey(encodeImage(img, 'png'));
    const want = [0, 1, 0, Math.round(0.2 * 255) / 255, 1 / 255, 0];
    expectClose(back.data, want, 1e-7, 'clamp and round');
  });

  it('refuses to encode an image whose data length does not match its size', () => {
    expect(errorCode(() => encodeImage({ width: 3, height: 3, data: new Float32Array(8) }, 'png'))).toBe('bad-option');
  });
});

describe('PNG colour types and depths', () => {
  // PNG spec (W3C / ISO/IEC 15948) section 11.2.2: colour types 0 grey, 2 RGB, 3 palette, 4 grey+alpha, 6 RGBA.
  // Opaque: when writing colour type 2 from RGBA input, pngjs composites non-opaque pixels over white.
  const rgba8 = [255, 0, 0, 255, 0, 255, 0, 255, 0, 0, 255, 255, 255, 255, 255, 255];

  it('RGB 8-bit becomes BT.709 luma (ITU-R BT.709-6 item 3.2: 0.2126 R + 0.7152 G + 0.0722 B)', () => {
    const bytes = encodePngWith(4, 1, 2, 8, rgba8);
    const d = decodeImage(bytes);
    expect(d.colour).toBe(true);
    expect(d.channelNames).toEqual(['luma']);
    expectClose(d.channels[0].data, [LUMA_709.r, LUMA_709.g, LUMA_709.b, 1], 1e-7, 'pure red, green, blue, white');
    const sep = decodeImage(bytes, { channels: 'separate' });
    expect(sep.channelNames).toEqual(['R', 'G', 'B']);
    expectClose(sep.channels[0].data, [1, 0, 0, 1], 0, 'R');
    expectClose(sep.channels[1].data, [0, 1, 0, 1], 0, 'G');
    expectClose(sep.channels[2].data, [0, 0, 1, 1], 0, 'B');
  });

  it('RGBA 16-bit: alpha ignored, samples / 65535', () => {
    const rgba16 = [65535, 0, 0, 0, 0, 1, 0, 65535, 300, 300, 300, 7];
    const d = decodeImage(encodePngWith(3, 1, 6, 16, rgba16), { channels: 'separate' });
    expect(d.bitDepth).toBe(16);
    expectClose(d.channels[0].data, [1, 0, 300 / 65535], 6e-8 /* float32 rounding */, 'R');
    expectClose(d.channels[1].data, [0, 1 / 65535, 300 / 65535], 6e-8 /* float32 rounding */, 'G');
  });

  it('grey+alpha 8-bit and 16-bit: grey sample kept, alpha ignored', () => {
    const d8 = decodeGrey(encodePngWith(2, 1, 4, 8, [10, 10, 10, 0, 200, 200, 200, 255]));
    expectClose(d8.data, [10 / 255, 200 / 255], 1e-7, 'grey+alpha 8');
    const d16 = decodeGrey(encodePngWith(2, 1, 4, 16, [1000, 1000, 1000, 0, 65000, 65000, 65000, 1]));
    expectClose(d16.data, [1000 / 65535, 65000 / 65535], 6e-8 /* float32 rounding */, 'grey+alpha 16');
  });

  it('grey at 1, 2 and 4 bits scales by 2^bits - 1 (hand-built PNG, spec sections 7.2 and 11.2.2)', () => {
    // One row of 4 pixels; samples packed most significant bits first (spec section 7.2).
    const cases: [number, number[], Uint8Array][] = [
      [1, [1, 0, 1, 1], new Uint8Array([0b10110000])],
      [2, [3, 0, 2, 1], new Uint8Array([0b11001001])],
      [4, [15, 0, 9, 4], new Uint8Array([0xf0, 0x94])],
    ];
    for (const [bits, samples, row] of cases) {
      const d = decodeImage(handPng(4, 1, bits, 0, [row]));
      expect(d.bitDepth).toBe(bits);
      expectClose(d.channels[0].data, samples.map((s) => s / (2 ** bits - 1)), 1e-7, `${bits}-bit grey`);
    }
  });

  it('palette PNG looks colours up in PLTE, then takes luma (spec section 11.2.3)', () => {
    const plte = new Uint8Array([255, 0, 0, 0, 0, 255, 128, 128, 128]);
    const bytes = handPng(3, 1, 8, 3, [new Uint8Array([2, 0, 1])], plte);
    const d = decodeImage(bytes);
    expect(d.colour).toBe(true);
    expectClose(d.channels[0].data, [128 / 255, LUMA_709.r, LUMA_709.b], 1e-7, 'palette luma');
  });

  it('range option maps 12-bit data stored in 16-bit samples: (sample - lo) / (hi - lo)', () => {
    const d = decodeGrey(encodePngWith(3, 1, 0, 16, [0, 0, 0, 65535, 4095, 4095, 4095, 65535, 2048, 2048, 2048, 65535]), {
      range: { lo: 0, hi: 4095 },
    });
    expectClose(d.data, [0, 1, 2048 / 4095], 1e-7, '12-bit range');
    expect(errorCode(() => decodeGrey(encodeImage(testImage(2, 2), 'png'), { range: { lo: 5, hi: 5 } }))).toBe('bad-option');
  });

  it('range option is ignored for float formats (values pass through)', () => {
    const img = testImage(3, 2);
    const d = decodeImage(encodeImage(img, 'pfm'), { range: { lo: 0, hi: 10 } });
    expect(d.scaling).toBeNull();
    expect(Array.from(d.channels[0].data)).toEqual(Array.from(img.data));
  });
});

describe('Netpbm PGM and PFM', () => {
  it('P2 plain PGM: the "feep" example of the Netpbm pgm(5) manual (from memory) reads as sample / maxval', () => {
    const rows = [
      '0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0',
      '0  3  3  3  3  0  0  7  7  7  7  0  0 11 11 11 11  0  0 15 15 15 15  0',
      '0  3  0  0  0  0  0  7  0  0  0  0  0 11  0  0  0  0  0 15  0  0 15  0',
      '0  3  3  3  0  0  0  7  7  7  0  0  0 11 11 11  0  0  0 15 15 15 15  0',
      '0  3  0  0  0  0  0  7  0  0  0  0  0 11  0  0  0  0  0 15  0  0  0  0',
      '0  3  0  0  0  0  0  7  7  7  7  0  0 11 11 11 11  0  0 15  0  0  0  0',
      '0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0  0',
    ];
    const text = `P2\n# feep.pgm\n24 7\n15\n${rows.join('\n')}\n`;
    const d = decodeImage(ascii(text));
    expect([d.format, d.width, d.height, d.bitDepth]).toEqual(['pgm', 24, 7, 4]);
    const want = rows.flatMap((r) => r.trim().split(/\s+/).map((s) => Number(s) / 15));
    expectClose(d.channels[0].data, want, 1e-7, 'feep');
  });

  it('P5 with maxval 1000 uses two big-endian bytes per sample and divides by maxval (pgm(5))', () => {
    const head = ascii('P5 3 1 1000\n');
    const d = decodeGrey(concat([head, new Uint8Array([0x03, 0xe8, 0x00, 0x01, 0x01, 0xf4])]));
    expectClose(d.data, [1, 1 / 1000, 500 / 1000], 1e-7, 'maxval 1000');
  });

  it('P5 header comments are skipped', () => {
    const d = decodeGrey(concat([ascii('P5\n# made by a test\n2 1 # width height\n255\n'), new Uint8Array([0, 255])]));
    expectClose(d.data, [0, 1], 0, 'comments');
  });

  it('a sample above maxval is a broken file', () => {
    expect(errorCode(() => decodeGrey(concat([ascii('P5 2 1 100\n'), new Uint8Array([50, 101])])))).toBe('broken');
  });

  it('PFM rows are stored bottom to top (Netpbm PFM format description); both byte orders', () => {
    // Stored order: bottom row (1, 2), then top row (3, 4). On screen (y down) the first row is (3, 4).
    for (const littleEndian of [true, false]) {
      const body = new Uint8Array(16);
      const v = new DataView(body.buffer);
      [1, 2, 3, 4].forEach((x, i) => v.setFloat32(4 * i, x, littleEndian));
      const bytes = concat([ascii(`Pf\n2 2\n${littleEndian ? '-1.0' : '1.0'}\n`), body]);
      expectClose(decodeGrey(bytes).data, [3, 4, 1, 2], 0, `PFM ${littleEndian ? 'little' : 'big'}-endian`);
    }
  });

  it('PFM writer puts the bottom row first, little-endian with scale -1.0', () => {
    const bytes = encodeImage({ width: 2, height: 2, data: Float32Array.from([3, 4, 1, 2]) }, 'pfm');
    const head = 'Pf\n2 2\n-1.0\n';
    expect(new TextDecoder().decode(bytes.subarray(0, head.length))).toBe(head);
    const v = new DataView(bytes.buffer, bytes.byteOffset + head.length);
    expect([0, 1, 2, 3].map((i) => v.getFloat32(4 * i, true))).toEqual([1, 2, 3, 4]);
  });

  it('PF colour PFM gives luma or separate channels, values unscaled', () => {
    const body = new Uint8Array(12);
    const v = new DataView(body.buffer);
    [2, 0, -1].forEach((x, i) => v.setFloat32(4 * i, x, true));
    const bytes = concat([ascii('PF\n1 1\n-1\n'), body]);
    expectClose(decodeGrey(bytes).data, [2 * LUMA_709.r - LUMA_709.b], 1e-6, 'PF luma');
    expectClose(decodeImage(bytes, { channels: 'separate' }).channels[2].data, [-1], 0, 'PF blue');
  });
});

describe('JPEG', () => {
  it('decodes a jpeg-js-encoded RGB image close to its source (quality 100; lossy, tolerance 3/255)', () => {
    const w = 16;
    const h = 8;
    const rgba = new Uint8Array(w * h * 4);
    for (let i = 0; i < w * h; i++) {
      // Smooth ramps survive JPEG well; the tolerance covers DCT quantisation and colour conversion rounding.
      rgba[4 * i] = Math.round(((i % w) / (w - 1)) * 255);
      rgba[4 * i + 1] = 128;
      rgba[4 * i + 2] = 255 - ((i * 3) % 256);
      rgba[4 * i + 3] = 255;
    }
    const bytes = new Uint8Array(encodeJpeg({ data: rgba, width: w, height: h }, 100).data);
    const d = decodeImage(bytes, { channels: 'separate' });
    expect([d.format, d.width, d.height]).toEqual(['jpeg', w, h]);
    const want = (c: number) => Array.from({ length: w * h }, (_, i) => rgba[4 * i + c] / 255);
    expectClose(d.channels[0].data, want(0), 3 / 255, 'JPEG R');
    expectClose(d.channels[1].data, want(1), 3 / 255, 'JPEG G');
    expectClose(d.channels[2].data, want(2), 3 / 255, 'JPEG B');
    expect(errorCode(() => decodeImage(bytes.subarray(0, Math.floor(bytes.length * 0.6))))).toBe('broken');
  });
});

describe('limits and broken files', () => {
  const huge = 100000;

  it('a PNG header claiming 100000 x 100000 is refused from IHDR alone', () => {
    // The file is signature + IHDR only (33 bytes): were pixels decoded first, the error would be "broken".
    const bytes = concat([PNG_SIGNATURE, ihdr(huge, huge, 8, 0)]);
    expect(errorCode(() => decodeImage(bytes))).toBe('too-large');
    expect(readImageSize(bytes)).toEqual({ format: 'png', width: huge, height: huge });
  });

  it('a PGM and a PFM header claiming 100000 x 100000 are refused', () => {
    expect(errorCode(() => decodeImage(ascii(`P5\n${huge} ${huge}\n255\n`)))).toBe('too-large');
    expect(errorCode(() => decodeImage(ascii(`Pf\n${huge} ${huge}\n-1\n`)))).toBe('too-large');
  });

  it('a TIFF first IFD claiming 100000 x 100000 is refused (TIFF 6.0 section 2 layout)', () => {
    expect(errorCode(() => decodeImage(tinyTiff(huge, huge)))).toBe('too-large');
  });

  it('a JPEG frame header (SOF0) claiming 65535 x 65535 is refused (ITU-T T.81 B.2.2)', () => {
    const sof = [0xff, 0xc0, 0x00, 0x11, 8, 0xff, 0xff, 0xff, 0xff, 3, 1, 0x11, 0, 2, 0x11, 1, 3, 0x11, 1];
    expect(errorCode(() => decodeImage(new Uint8Array([0xff, 0xd8, ...sof])))).toBe('too-large');
  });

  it('maxPixels is a pixel count: equal passes, one less refuses', () => {
    const bytes = encodeImage(testImage(10, 10), 'png');
    expect(decodeGrey(bytes, { maxPixels: 100 }).width).toBe(10);
    expect(errorCode(() => decodeGrey(bytes, { maxPixels: 99 }))).toBe('too-large');
  });

  it('zero width or height and zero-byte files are "empty"', () => {
    expect(errorCode(() => decodeImage(new Uint8Array(0)))).toBe('empty');
    expect(errorCode(() => decodeImage(ascii('P5\n0 5\n255\n')))).toBe('empty');
    expect(errorCode(() => decodeImage(concat([PNG_SIGNATURE, ihdr(0, 4, 8, 0)])))).toBe('empty');
    expect(errorCode(() => decodeImage(tinyTiff(7, 0)))).toBe('empty');
  });

  it('unknown magic bytes are "unknown-format", whatever the content looks like', () => {
    expect(errorCode(() => decodeImage(ascii('GIF89a......')))).toBe('unknown-format');
    expect(errorCode(() => decodeImage(ascii('P6\n1 1\n255\nabc')))).toBe('unknown-format');
    expect(sniffFormat(ascii('hello'))).toBeNull();
  });

  it('every format cut in half is "broken"', () => {
    const img = testImage(20, 20);
    for (const [format, bitDepth] of [['png', 8], ['png', 16], ['pgm', 8], ['pgm', 16], ['pfm', 8], ['tiff', 8]] as const) {
      const bytes = encodeImage(img, format, { bitDepth });
      expect(errorCode(() => decodeImage(bytes.subarray(0, bytes.length >> 1))), `${format}${bitDepth}`).toBe('broken');
      expect(errorCode(() => decodeImage(bytes.subarray(0, 12))), `${format}${bitDepth} header only`).toBe('broken');
    }
    const plain = ascii('P2 3 1 255\n1 2');
    expect(errorCode(() => decodeImage(plain))).toBe('broken');
  });

  it('a PNG with a corrupted data byte is "broken" (CRC check, PNG spec section 5.3)', () => {
    const bytes = encodeImage(testImage(20, 20), 'png').slice();
    bytes[bytes.length - 20] ^= 0xff; // inside IDAT
    expect(errorCode(() => decodeImage(bytes))).toBe('broken');
  });

  it('a TIFF whose next-IFD offset loops back to itself still decodes (only the first IFD is read)', () => {
    const img = testImage(4, 3);
    const bytes = encodeImage(img, 'tiff').slice();
    const v = new DataView(bytes.buffer);
    const ifd = v.getUint32(4, true);
    const n = v.getUint16(ifd, true);
    v.setUint32(ifd + 2 + 12 * n, ifd, true);
    expect(Array.from(decodeGrey(bytes).data)).toEqual(Array.from(img.data));
  });
});

describe('helpers', () => {
  it('formatFromExtension follows the output extension, case-insensitive', () => {
    expect(['a.png', 'b.PGM', 'c.pfm', 'd.tif', 'e.TIFF', 'f.jpg', 'g'].map(formatFromExtension)).toEqual([
      'png', 'pgm', 'pfm', 'tiff', 'tiff', null, null,
    ]);
  });

  it('toNdarray views [height, width] with get(y, x) = data[y * width + x]', () => {
    const img = testImage(5, 3);
    const nd = toNdarray(img);
    expect(nd.shape).toEqual([3, 5]);
    expect(nd.get(2, 4)).toBe(img.data[2 * 5 + 4]);
    expect(nd.get(1, 0)).toBe(img.data[5]);
  });
});

/** Minimal little-endian TIFF with one 8-bit grey strip, for size-limit tests (TIFF 6.0 section 2). */
function tinyTiff(width: number, height: number): Uint8Array {
  const entries: [number, number, number][] = [
    [256, 4, width], [257, 4, height], [258, 3, 8], [259, 3, 1], [262, 3, 1], [273, 4, 8], [277, 3, 1], [279, 4, 0],
  ];
  const out = new Uint8Array(8 + 2 + 12 * entries.length + 4);
  const v = new DataView(out.buffer);
  out[0] = out[1] = 0x49;
  v.setUint16(2, 42, true);
  v.setUint32(4, 8, true);
  v.setUint16(8, entries.length, true);
  entries.forEach(([tag, type, value], k) => {
    const p = 10 + 12 * k;
    v.setUint16(p, tag, true);
    v.setUint16(p + 2, type, true);
    v.setUint32(p + 4, 1, true);
    if (type === 3) v.setUint16(p + 8, value, true);
    else v.setUint32(p + 8, value, true);
  });
  return out;
}
