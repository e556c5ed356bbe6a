// Reference checks of the scenes' Gaussian noise with scipy.stats in Debian's Python.
// The residual (noisy - clean) / sigma must look like N(0,1) draws to standard goodness-of-fit tests.

import { execFileSync } from 'node:child_process';
import { mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { encodeImage } from '../../../src/images/codec';
import { makeScene } from '../../../src/images/scenes';

const PYTHON = '/usr/bin/python3'; // Debian's interpreter by path (contracts.md section 7)
const here = path.dirname(new URL(import.meta.url).pathname);
const dir = mkdtempSync(path.join(tmpdir(), 'fluxel-scenenoise-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));

describe('scene noise against scipy.stats', () => {
  for (const [name, sigma, seed] of [['survey', 0.05, 1], ['cells', 0.1, 2], ['card', 0.02, 3]] as const) {
    it(`${name}, sigma ${sigma}, seed ${seed}: Kolmogorov-Smirnov and D'Agostino-Pearson do not reject N(0,1)`, () => {
      const s = makeScene(name, { noise: sigma, seed });
      const z = new Float32Array(s.noisy.data.length);
      for (let i = 0; i < z.length; i++) z[i] = (s.noisy.data[i] - s.clean.data[i]) / sigma;
      const file = path.join(dir, `${name}.pfm`);
      writeFileSync(file, encodeImage({ width: s.clean.width, height: s.clean.height, data: z }, 'pfm'));
      const r = JSON.parse(execFileSync(PYTHON, [path.join(here, 'scene_noise.py'), file], { encoding: 'utf8' }));
      // Kolmogorov (1933) / Smirnov (1948) one-sample test and D'Agostino & Pearson (1973) omnibus test, via scipy.
      // With a correct generator p-values are uniform on (0,1); we reject only below 0.001 (a 1-in-1000 false alarm).
      // float32 storage rounds residuals by about 1e-7 / sigma, far below the KS statistic's resolution at n = 65536.
      expect(r.n).toBe(65536);
      expect(r.ks_p > 1e-3, `KS statistic ${r.ks_stat}, p = ${r.ks_p}`).toBe(true);
      expect(r.normal_p > 1e-3, `normaltest p = ${r.normal_p}`).toBe(true);
    });
  }
});
