// Reference checks of channel binding (issue 12, real inputs): colour, grey+alpha and palette files written by PIL
// (Debian's /usr/bin/python3, numpy and PIL) are read by our decoders with every channel kept, and compared with
// the samples PIL wrote, scaled by sample / (2^bits − 1) (contracts.md §3), the BT.709 luma computed by numpy
// (ITU-R BT.709-6 (2015), item 3.2), and alpha; our RGB PNG writer is read back by PIL. `--range` is checked against
// a hand-worked example.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { decodeImage, encodeColourImage, encodeImage } from '../../../src/images/codec';
import { channelImage, pictureFromDecoded } from '../../../src/images/inputs';
import { IMAGE_CHANNELS } from '../../../src/notation/scheme';

const PYTHON = '/usr/bin/python3';
const here = path.dirname(new URL(import.meta.url).pathname);
const dir = mkdtempSync(path.join(tmpdir(), 'fluxel-channels-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

type Channels = Record<'red' | 'green' | 'blue' | 'luma' | 'alpha', number[]>;

describe('channels of files written by PIL', () => {
  // Our own RGB PNG, read back by PIL in the same Python call: 8-bit samples of a ramp in each channel.
  const W = 7, H = 5;
  const ramp = (k: number) => ({ width: W, height: H, data: Float32Array.from({ length: W * H }, (_, i) => ((i * (k + 3)) % 23) / 22) });
  const ours = path.join(dir, 'ours-rgb.png');
  writeFileSync(ours, encodeColourImage(ramp(0), ramp(1), ramp(2), 'png'));
  const out = JSON.parse(execFileSync(PYTHON, [path.join(here, 'channels_writer.py'), dir, ours], { encoding: 'utf8', maxBuffer: 64 << 20 })) as {
    cases: Record<string, Channels>;
    ours: { mode: string; size: number[]; samples: number[] };
  };

  for (const [name, want] of Object.entries(out.cases)) {
    it(`${name}: red, green, blue, alpha and luma as PIL wrote them`, () => {
      const p = pictureFromDecoded(decodeImage(new Uint8Array(readFileSync(path.join(dir, name))), { channels: 'all' }));
      expect([p.width, p.height]).toEqual([19, 13]);
      for (const c of IMAGE_CHANNELS) {
        const got = p.channels[c];
        let worst = 0;
        for (let i = 0; i < got.length; i++) worst = Math.max(worst, Math.abs(got[i] - want[c][i]));
        // Float32 storage of values in [0, 1]: one rounding, below 1e-7.
        expect(worst, `${name} ${c}`).toBeLessThan(1e-7);
      }
    });
  }

  it('plain `image` is the luma the grey decoder gives (the meaning of `field u = image` is unchanged)', () => {
    for (const name of Object.keys(out.cases)) {
      const bytes = new Uint8Array(readFileSync(path.join(dir, name)));
      const grey = decodeImage(bytes).channels[0].data;
      const bound = channelImage(pictureFromDecoded(decodeImage(bytes, { channels: 'all' })), null).data;
      expect(Array.from(bound), name).toEqual(Array.from(grey));
    }
  });

  it('our RGB PNG reads back in PIL as mode RGB with the samples we meant (round(v · 255))', () => {
    expect(out.ours.mode).toBe('RGB');
    expect(out.ours.size).toEqual([W, H]);
    const want: number[] = [];
    for (let i = 0; i < W * H; i++) for (let k = 0; k < 3; k++) want.push(Math.round(ramp(k).data[i] * 255));
    expect(out.ours.samples).toEqual(want);
  });
});

describe('--range LO:HI on a hand-worked example', () => {
  it('a 16-bit grey PNG holding 12-bit data: value = (sample − LO) / (HI − LO)', () => {
    // Samples chosen by hand: 0, 100, 2048, 4095 and 65535 (a stray full-scale sample), written as 16-bit PNG.
    // With --range 0:4095 they must read as 0, 100/4095 = 0.0244200…, 2048/4095 = 0.5001221…, 1 and
    // 65535/4095 = 16.0036630… (not clamped: the range describes the data, it does not censor it).
    // With --range 100:4095: (0−100)/3995 = −0.0250313…, 0, 1948/3995 = 0.4876095…, 1, 65435/3995 = 16.3791…
    const samples = [0, 100, 2048, 4095, 65535];
    const img = { width: 5, height: 1, data: Float32Array.from(samples, s => s / 65535) };
    const bytes = encodeImage(img, 'png', { bitDepth: 16 });
    const a = decodeImage(bytes, { range: { lo: 0, hi: 4095 } }).channels[0].data;
    const wantA = [0, 0.0244200244, 0.5001221001, 1, 16.0036630037];
    // Float32 storage: relative error below 2^-24 (about 1e-6 absolute at 16).
    wantA.forEach((w, i) => expect(Math.abs(a[i] - w)).toBeLessThan(1e-7 * Math.max(1, Math.abs(w)) * 10));
    const b = decodeImage(bytes, { range: { lo: 100, hi: 4095 } }).channels[0].data;
    const wantB = [-0.0250312891, 0, 0.4876095119, 1, 16.3792240300];
    wantB.forEach((w, i) => expect(Math.abs(b[i] - w)).toBeLessThan(1e-7 * Math.max(1, Math.abs(w)) * 10));
    // Alpha is not data: a range leaves it at sample / maxval (1 here, the file has none).
    const all = decodeImage(bytes, { range: { lo: 0, hi: 4095 }, channels: 'all' });
    expect(Array.from(all.channels[3].data)).toEqual([1, 1, 1, 1, 1]);
    expect(Array.from(all.channels[4].data)).toEqual(Array.from(a));
  });
});
