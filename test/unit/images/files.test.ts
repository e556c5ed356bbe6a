// Unit tests for src/images/files.ts: extension-driven writing, atomic replacement, decode errors carry the path.
// Uses a fresh temporary folder per test.

import { mkdtemp, readFile, readdir, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import * as path from 'node:path';
import { afterEach, beforeEach, describe, expect, it } from 'vitest';
import { readImageFile, writeImageFile } from '../../../src/images/files';
import { ImageError } from '../../../src/images/types';
import { expectClose } from './helpers';

let dir = '';
beforeEach(async () => {
  dir = await mkdtemp(path.join(tmpdir(), 'fluxel-images-'));
});
afterEach(async () => {
  await rm(dir, { recursive: true, force: true });
});

const img = { width: 4, height: 2, data: Float32Array.from([0, 0.25, 0.5, 1, -0.5, 2, 0.125, 0.75]) };

describe('writeImageFile / readImageFile', () => {
  it('the extension picks the format; reading sniffs it back (contracts.md section 2)', async () => {
    for (const name of ['a.png', 'b.pgm', 'c.pfm', 'd.tif', 'e.TIFF']) {
      const file = path.join(dir, name);
      await writeImageFile(file, img, { bitDepth: 16 });
      const back = await readImageFile(file);
      const float = back.sampleFormat === 'float';
      // Integer formats clamp to [0,1] (contracts.md section 3); float formats keep values.
      const want = Array.from(img.data, (v) => (float ? v : Math.min(1, Math.max(0, v))));
      expectClose(back.channels[0].data, want, float ? 0 : 0.5 / 65535 + 1e-7, name);
    }
    expect((await readImageFile(path.join(dir, 'd.tif'))).format).toBe('tiff');
  });

  it('an unknown extension is refused and the existing file stays untouched', async () => {
    const file = path.join(dir, 'keep.jpg');
    await writeFile(file, 'old');
    await expect(writeImageFile(file, img)).rejects.toBeInstanceOf(ImageError);
    expect(await readFile(file, 'utf8')).toBe('old');
  });

  it('a failed encode leaves the existing file and no temporary file behind', async () => {
    const file = path.join(dir, 'keep.png');
    await writeFile(file, 'old');
    await expect(writeImageFile(file, { width: 3, height: 3, data: new Float32Array(2) })).rejects.toBeInstanceOf(ImageError);
    expect(await readFile(file, 'utf8')).toBe('old');
    expect(await readdir(dir)).toEqual(['keep.png']);
  });

  it('a successful write replaces an existing file and leaves no temporary file', async () => {
    const file = path.join(dir, 'out.pfm');
    await writeFile(file, 'old');
    await writeImageFile(file, img);
    expect((await readImageFile(file)).width).toBe(4);
    expect(await readdir(dir)).toEqual(['out.pfm']);
  });

  it('decode errors name the file and keep their code', async () => {
    const file = path.join(dir, 'bad.png');
    await writeFile(file, 'not an image at all');
    const err = await readImageFile(file).then(
      () => null,
      (e: unknown) => e,
    );
    expect(err).toBeInstanceOf(ImageError);
    expect((err as ImageError).code).toBe('unknown-format');
    expect((err as ImageError).message).toContain(file);
  });
});
