// Reference checks of src/images against outside readers and writers: PIL, tifffile and numpy in Debian's Python.
// Files we write are read by them; files they write are read by us. Each check names the standard involved.

import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { decodeImage, encodeImage } from '../../../src/images/codec';
import { makeScene } from '../../../src/images/scenes';
import { WritableFormat } from '../../../src/images/types';
import { expectClose } from '../../unit/images/helpers';

// Debian's interpreter by path (contracts.md section 7): the python3 first on PATH lacks these packages.
const PYTHON = '/usr/bin/python3';
const here = path.dirname(new URL(import.meta.url).pathname);
const dir = mkdtempSync(path.join(tmpdir(), 'fluxel-imgref-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

function python(script: string, args: string[]): unknown {
  const out = execFileSync(PYTHON, [path.join(here, script), ...args], { encoding: 'utf8', maxBuffer: 64 << 20 });
  return JSON.parse(out);
}

/** Our rounding rule restated: clamp to [0,1], NaN to 0, nearest integer sample (contracts.md section 3). */
const sample = (v: number, max: number): number => (Number.isNaN(v) ? 0 : Math.round(Math.min(1, Math.max(0, v)) * max));

describe('files written by Fluxel, read by outside readers', () => {
  // A 23x17 card crop with Gaussian noise: values outside [0,1] exercise clamping (integer) and pass-through (float).
  const scene = makeScene('card', { width: 23, height: 17, noise: 0.2, seed: 4 });
  const img = scene.noisy;
  const files: [string, WritableFormat, 8 | 16][] = [
    ['ours8.png', 'png', 8],
    ['ours16.png', 'png', 16],
    ['ours8.pgm', 'pgm', 8],
    ['ours16.pgm', 'pgm', 16],
    ['ours.pfm', 'pfm', 8],
    ['ours.tif', 'tiff', 8],
  ];
  for (const [name, format, bitDepth] of files) writeFileSync(path.join(dir, name), encodeImage(img, format, { bitDepth }));
  const seen = python('outside_reader.py', files.map(([n]) => path.join(dir, n))) as Record<string, Record<string, unknown>>;
  const get = (name: string) => seen[path.join(dir, name)];

  it('8-bit and 16-bit grey PNG read by PIL give our clamped, rounded samples (PNG spec W3C / ISO/IEC 15948, 11.2.2)', () => {
    for (const [name, max, modes] of [['ours8.png', 255, ['L']], ['ours16.png', 65535, ['I;16', 'I']]] as const) {
      const r = get(name);
      expect(r.pil_format).toBe('PNG');
      expect((modes as readonly string[]).includes(r.pil_mode as string), `${name} mode ${r.pil_mode}`).toBe(true);
      expect(r.shape).toEqual([17, 23]);
      expectClose(r.values as number[], Array.from(img.data, (v) => sample(v, max)), 0, name);
    }
  });

  it('P5 PGM at maxval 255 and 65535 read by PIL give the same samples (Netpbm pgm(5))', () => {
    for (const [name, max] of [['ours8.pgm', 255], ['ours16.pgm', 65535]] as const) {
      const r = get(name);
      expect(r.pil_format).toBe('PPM'); // PIL's plugin for the whole Netpbm family
      expectClose(r.values as number[], Array.from(img.data, (v) => sample(v, max)), 0, name);
    }
  });

  it('float TIFF read by tifffile and PIL gives our values bit for bit (TIFF 6.0, SampleFormat 3)', () => {
    const r = get('ours.tif');
    expect(r.tifffile_dtype).toBe('float32');
    expect(r.pil_mode).toBe('F');
    expect(r.shape).toEqual([17, 23]);
    expectClose(r.values as number[], img.data, 0, 'tifffile');
    expectClose(r.pil_values as number[], img.data, 0, 'PIL');
  });

  it('PFM parsed with numpy per the Netpbm PFM description: Pf, scale -1 (little-endian), bottom row first', () => {
    const r = get('ours.pfm');
    expect([r.magic, r.scale]).toEqual(['Pf', -1]);
    expect(r.shape).toEqual([17, 23]);
    expectClose(r.values as number[], img.data, 0, 'PFM');
  });
});

describe('files written by PIL and tifffile, read by Fluxel', () => {
  const manifest = python('outside_writer.py', [dir]) as {
    width: number;
    height: number;
    cases: Record<string, { values: number[]; tol: number; note: string; channels?: number[][] }>;
  };
  const names = Object.keys(manifest.cases);

  it('the outside writer produced every case', () => {
    expect(names.length).toBeGreaterThanOrEqual(23);
  });

  // Value rules (contracts.md section 3): integer sample / (2^bits - 1), float unchanged, colour -> BT.709 luma
  // (ITU-R BT.709-6 item 3.2) on the stored values. Expected values come from numpy; tolerances are float32
  // rounding (1e-7), luma summation (1e-6) or, for lossy JPEG, two 8-bit levels (plus float32 rounding) of IDCT difference versus libjpeg.
  for (const name of names) {
    it(`${name}: ${manifest.cases[name].note}`, () => {
      const c = manifest.cases[name];
      const d = decodeImage(new Uint8Array(readFileSync(path.join(dir, name))));
      expect([d.width, d.height], name).toEqual([manifest.width, manifest.height]);
      expectClose(d.channels[0].data, c.values, c.tol, name);
      if (c.channels) {
        const sep = decodeImage(new Uint8Array(readFileSync(path.join(dir, name))), { channels: 'separate' });
        c.channels.forEach((want, k) => expectClose(sep.channels[k].data, want, c.tol, `${name} channel ${k}`));
      }
    });
  }
});
