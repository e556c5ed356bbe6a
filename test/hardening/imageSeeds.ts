// Valid seed files of every format we read, made by code (no photographs): PNG grey 8/16-bit, RGB, RGBA and palette,
// baseline JPEG (jpeg-js' encoder), TIFF 32-bit float (our writer) and 8-bit RGB (utif2's writer), PGM P5 8/16-bit
// and P2, PFM grey and colour; and files whose headers claim enormous sizes, one per format.

import { spawnSync } from 'node:child_process';
import { encode as encodeJpeg } from 'jpeg-js';
import { PNG } from 'pngjs';
import * as UTIF from 'utif2';
import { encodeImage } from '../../src/images/codec';
import type { GreyImage } from '../../src/images/types';
import { chunk, concat, handPng, ihdr, PNG_SIGNATURE } from '../unit/images/helpers';

/** A smooth ramp with a disc, width × height, values in [0, 1]. */
export function picture(width: number, height: number): GreyImage {
  const data = new Float32Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const disc = (x - width / 2) ** 2 + (y - height / 2) ** 2 < (Math.min(width, height) / 3) ** 2 ? 0.4 : 0;
      data[y * width + x] = Math.min(1, 0.1 + 0.5 * (x / width) + disc);
    }
  }
  return { width, height, data };
}

function rgba(img: GreyImage): Uint8Array {
  const out = new Uint8Array(img.width * img.height * 4);
  for (let i = 0; i < img.data.length; i++) {
    const v = Math.round(img.data[i] * 255);
    out.set([v, 255 - v, (v * 7) & 255, 255], 4 * i);
  }
  return out;
}

const ascii = (s: string): Uint8Array => new TextEncoder().encode(s);

export function seedFiles(): { name: string; bytes: Uint8Array }[] {
  const img = picture(24, 16);
  const { width: w, height: h } = img;
  const px = rgba(img);
  const pngRgba = new PNG({ width: w, height: h });
  pngRgba.data = Buffer.from(px);
  const pngRgb = PNG.sync.write(pngRgba, { colorType: 2 });
  const pal = handPng(w, h, 4, 3, Array.from({ length: h }, (_, y) => new Uint8Array(w / 2).fill(((y & 15) << 4) | (15 - (y & 15)))),
    new Uint8Array(48).map((_, i) => (i * 5) & 255));
  const jpeg = encodeJpeg({ data: Buffer.from(px), width: w, height: h }, 90).data;
  const tiffRgb = new Uint8Array(UTIF.encodeImage(px, w, h));
  const p2 = ascii(`P2\n# plain grey map\n${w} ${h}\n255\n${Array.from(img.data, (v) => Math.round(v * 255)).join(' ')}\n`);
  const pfColour = (() => {
    const head = ascii(`PF\n${w} ${h}\n-1.0\n`);
    const body = new Float32Array(w * h * 3).map((_, i) => img.data[Math.floor(i / 3)] * (1 + (i % 3)));
    return concat([head, new Uint8Array(body.buffer)]);
  })();
  return [
    { name: 'png-grey8', bytes: encodeImage(img, 'png', { bitDepth: 8 }) },
    { name: 'png-grey16', bytes: encodeImage(img, 'png', { bitDepth: 16 }) },
    { name: 'png-rgb', bytes: new Uint8Array(pngRgb) },
    { name: 'png-rgba', bytes: new Uint8Array(PNG.sync.write(pngRgba)) },
    { name: 'png-palette', bytes: pal },
    { name: 'jpeg-rgb', bytes: new Uint8Array(jpeg) },
    { name: 'tiff-float', bytes: encodeImage(img, 'tiff') },
    { name: 'tiff-rgb8', bytes: tiffRgb },
    { name: 'pgm-p5-8', bytes: encodeImage(img, 'pgm', { bitDepth: 8 }) },
    { name: 'pgm-p5-16', bytes: encodeImage(img, 'pgm', { bitDepth: 16 }) },
    { name: 'pgm-p2', bytes: p2 },
    { name: 'pfm-grey', bytes: encodeImage(img, 'pfm') },
    { name: 'pfm-colour', bytes: pfColour },
  ];
}

/**
 * Compressed TIFFs written by another library: Pillow (Debian's /usr/bin/python3, python3-pil) with LZW, PackBits and
 * Deflate, 8-bit grey. Empty when that interpreter or Pillow is missing (all-layers.sh installs both).
 */
export function pillowSeeds(): { name: string; bytes: Uint8Array }[] {
  const script = [
    'import io, sys, base64',
    'from PIL import Image',
    'im = Image.new("L", (24, 16))',
    'im.putdata([(x * 9 + y * 5 + (40 if (x - 12) ** 2 + (y - 8) ** 2 < 25 else 0)) % 256 for y in range(16) for x in range(24)])',
    'for c in ("tiff_lzw", "packbits", "tiff_adobe_deflate"):',
    '    b = io.BytesIO(); im.save(b, format="TIFF", compression=c); print(c, base64.b64encode(b.getvalue()).decode())',
  ].join('\n');
  const r = spawnSync('/usr/bin/python3', ['-c', script], { encoding: 'utf8' });
  if (r.status !== 0) return [];
  return r.stdout.trim().split('\n').map((l) => {
    const [name, b64] = l.split(' ');
    return { name: `tiff-${name}`, bytes: new Uint8Array(Buffer.from(b64, 'base64')) };
  });
}

/** Files (a few hundred bytes) whose headers claim `width` × `height` pixels, with little or no pixel data behind. */
export function claimingFiles(width: number, height: number): { name: string; bytes: Uint8Array }[] {
  const seeds = new Map(seedFiles().map((s) => [s.name, s.bytes]));
  const pngIhdr = concat([PNG_SIGNATURE, ihdr(width >>> 0, height >>> 0, 8, 0), chunk('IDAT', new Uint8Array([0x78, 0x9c, 0x03, 0x00, 0x00, 0x00, 0x00, 0x01])), chunk('IEND', new Uint8Array(0))]);
  // JPEG: the seed with its SOF0 height and width fields (16-bit each) overwritten.
  const jpeg = (seeds.get('jpeg-rgb') as Uint8Array).slice();
  for (let i = 2; i + 9 < jpeg.length; i++) {
    if (jpeg[i] === 0xff && jpeg[i + 1] === 0xc0) {
      const hh = Math.min(height, 65535);
      const ww = Math.min(width, 65535);
      jpeg.set([hh >> 8, hh & 255, ww >> 8, ww & 255], i + 5);
      break;
    }
  }
  // TIFF: the float seed with ImageWidth/ImageLength (LONG values in the IFD entries) overwritten.
  const tiff = (seeds.get('tiff-float') as Uint8Array).slice();
  const tv = new DataView(tiff.buffer);
  const ifd = tv.getUint32(4, true);
  for (let k = 0; k < tv.getUint16(ifd, true); k++) {
    const e = ifd + 2 + 12 * k;
    const tag = tv.getUint16(e, true);
    if (tag === 256) tv.setUint32(e + 8, width >>> 0, true);
    if (tag === 257) tv.setUint32(e + 8, height >>> 0, true);
  }
  return [
    { name: 'png', bytes: pngIhdr },
    { name: 'jpeg', bytes: jpeg },
    { name: 'tiff', bytes: tiff },
    { name: 'pgm-p5', bytes: ascii(`P5\n${width} ${height}\n255\n\0\0\0\0`) },
    { name: 'pgm-p5-16', bytes: ascii(`P5\n${width} ${height}\n65535\n\0\0\0\0`) },
    { name: 'pgm-p2', bytes: ascii(`P2\n${width} ${height}\n255\n0 1 2\n`) },
    { name: 'pfm', bytes: ascii(`Pf\n${width} ${height}\n-1.0\n\0\0\0\0`) },
    { name: 'pfm-colour', bytes: ascii(`PF\n${width} ${height}\n1.0\n\0\0\0\0`) },
  ];
}
