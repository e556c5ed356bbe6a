// blur(field, sigma) against scipy.ndimage.gaussian_filter, run by Debian's /usr/bin/python3 (contracts §7).
// Source: SciPy reference, scipy.ndimage.gaussian_filter (truncate=4.0, radius int(4σ + 0.5)) with mode
// 'reflect' (= Fluxel reflect), 'wrap' (= periodic) and 'constant' with cval (= fixed), per numerics.md.
import { execFileSync } from 'node:child_process';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, beforeEach, describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { maxDiff, randomImage, schemeOf } from '../../unit/engine/util';

const dir = mkdtempSync(join(tmpdir(), 'fluxel-blur-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const PY = `
import sys, numpy as np
from scipy.ndimage import gaussian_filter
src, dst, w, h, sigma, mode, cval = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), float(sys.argv[5]), sys.argv[6], float(sys.argv[7])
a = np.fromfile(src, dtype='<f8').reshape(h, w)
out = gaussian_filter(a, sigma, mode=mode, cval=cval, truncate=4.0)
out.astype('<f8').tofile(dst)
`;

function scipyBlur(img: { width: number; height: number; data: Float64Array }, sigma: number, mode: string, cval: number): Float64Array {
  const src = join(dir, 'in.f64'), dst = join(dir, 'out.f64');
  writeFileSync(src, Buffer.from(img.data.buffer, img.data.byteOffset, img.data.byteLength));
  execFileSync('/usr/bin/python3', ['-c', PY, src, dst, String(img.width), String(img.height), String(sigma), mode, String(cval)]);
  const b = readFileSync(dst);
  return new Float64Array(b.buffer.slice(b.byteOffset, b.byteOffset + b.byteLength));
}

describe('blur vs scipy.ndimage.gaussian_filter', () => {
  // Every case must assert something (a case that compared nothing would pass silently).
  beforeEach(() => {
    expect.hasAssertions();
  });
  // Tolerance 1e-12 absolute on data in [0, 1): same taps, sums in a different order (Float64).
  const cases: [string, string, number, number, number, number][] = [
    // [engine boundary, scipy mode, cval, sigma, width, height]
    ['reflect', 'reflect', 0, 1, 31, 23],
    ['reflect', 'reflect', 0, 2.3, 19, 26],
    ['reflect', 'reflect', 0, 0.5, 8, 7],
    // The kernel (radius 12) is wider than the 5×3 image: reflection keeps folding.
    ['reflect', 'reflect', 0, 3, 5, 3],
    ['periodic', 'wrap', 0, 1.7, 16, 11],
    ['periodic', 'wrap', 0, 3, 4, 6],
    ['fixed 0.25', 'constant', 0.25, 1.2, 13, 9],
  ];
  for (const [boundary, mode, cval, sigma, w, h] of cases) {
    it(`${boundary}, sigma ${sigma}, ${w}×${h}`, () => {
      const img = randomImage(w, h, w * 100 + h);
      const text = `grid 2d\nboundary ${boundary}\nparam sigma = 1 in [0, 3]\nstep dt = 1\nsteps 1\nfield u = image\nlet b = blur(u, sigma)\nu' = b\n`;
      const run = createRun(schemeOf(text), { image: img, dtype: 'float64', params: { sigma } });
      run.runSync();
      const { diff, at } = maxDiff(run.fieldData(0), scipyBlur(img, sigma, mode, cval));
      expect(diff, `blur ${boundary} sigma ${sigma} ${w}×${h} vs scipy: max |difference| at index ${at}`).toBeLessThanOrEqual(1e-12);
    });
  }
  it('sigma 0 is the identity', () => {
    const img = randomImage(6, 5, 9);
    const run = createRun(schemeOf(`grid 2d\nparam sigma = 1 in [0, 3]\nstep dt = 1\nsteps 1\nfield u = image\nlet b = blur(u, sigma)\nu' = b\n`), { image: img, dtype: 'float64', params: { sigma: 0 } });
    run.runSync();
    const { diff, at } = maxDiff(run.fieldData(0), img.data);
    expect(diff, `blur with sigma 0: max |difference| at index ${at}`).toBe(0);
  });
});
