// Named inputs, channels, --range and --replay as users run them: the built bundle dist/cli.js (issue 12).
// Needs `npm run build` first (the test command does it). Input hashes are SHA-256 of the file bytes (node:crypto).
import { spawnSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, readFileSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { decodeImage, encodeImage } from '../../src/images/codec';
import { makeMask } from '../../src/images/inputs';
import { makeScene } from '../../src/images/scenes';

const ROOT = join(__dirname, '../..');
const CLI = join(ROOT, 'dist/cli.js');
const dir = mkdtempSync(join(tmpdir(), 'fluxel-cli-inputs-'));
afterAll(() => rmSync(dir, { recursive: true, force: true }));
const MASKED = join(ROOT, 'examples/masked-smoothing.fluxel');
const COLOUR = join(ROOT, 'examples/colour-edge-preserving.fluxel');

function fluxel(...args: string[]) {
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd: dir, encoding: 'utf8' });
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}
const lineOf = (file: string, text: string) => readFileSync(file, 'utf8').split('\n').findIndex(l => l.startsWith(text)) + 1;
const write = (name: string, bytes: Uint8Array) => {
  writeFileSync(join(dir, name), bytes);
  return join(dir, name);
};

describe('named inputs on the command line', () => {
  const main = write('main.png', encodeImage(makeScene('survey', { width: 40, height: 30, noise: 0.05, seed: 2 }).noisy, 'png'));
  const mask = write('mask.png', encodeImage(makeMask(40, 30), 'png'));
  const small = write('small.png', encodeImage(makeMask(30, 30), 'png'));

  it('a missing mask is an error at the field line, saying how to give it (exit 1)', () => {
    const r = fluxel('run', MASKED, '--input', main, '--output', 'o.png');
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`${MASKED}:${lineOf(MASKED, 'field m')}:1 error input-missing \`field m = image "mask"\` reads the input "mask", which was not given (give --input mask=PATH, or --input mask=scene:mask for the generated mask).\n`);
  });

  it('a mask of another size is an error at the field line with both sizes (exit 1)', () => {
    const r = fluxel('run', MASKED, '--input', main, '--input', `mask=${small}`, '--output', 'o.png');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`:${lineOf(MASKED, 'field m')}:1 error input-size`);
    expect(r.stderr).toContain('is 30×30 pixels but the main input is 40×30');
  });

  it('an input no field reads is refused (exit 1)', () => {
    const r = fluxel('run', MASKED, '--input', main, '--input', `mask=${mask}`, '--input', `maks=${mask}`, '--output', 'o.png');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain('"maks" was given, but no field reads it');
  });

  it('with the mask, masked pixels come out as they went in (8-bit PNG in and out)', () => {
    const r = fluxel('run', MASKED, '--input', main, '--input', `mask=${mask}`, '--output', 'masked.png');
    expect(r.code, r.stderr).toBe(0);
    const before = decodeImage(new Uint8Array(readFileSync(main))).channels[0].data;
    const after = decodeImage(new Uint8Array(readFileSync(join(dir, 'masked.png')))).channels[0].data;
    const m = makeMask(40, 30).data;
    let kept = 0, moved = 0;
    for (let i = 0; i < m.length; i++) {
      if (m[i] === 1) { expect(after[i]).toBe(before[i]); kept++; } else if (after[i] !== before[i]) moved++;
    }
    expect(kept).toBeGreaterThan(100);
    expect(moved).toBeGreaterThan(100);
  });
});

describe('colour', () => {
  it('a scheme binding .red, .green and .blue writes an RGB PNG; PGM is refused with a way out (exit 2)', () => {
    const r = fluxel('run', COLOUR, '--scene', 'palette', '--size', '48x32', '--output', 'c.png');
    expect(r.code, r.stderr).toBe(0);
    const d = decodeImage(new Uint8Array(readFileSync(join(dir, 'c.png'))), { channels: 'separate' });
    expect([d.colour, d.width, d.height, d.channelNames.join()]).toEqual([true, 48, 32, 'R,G,B']);
    const bad = fluxel('run', COLOUR, '--scene', 'palette', '--size', '48x32', '--output', 'c.pgm');
    expect(bad.code).toBe(2);
    expect(bad.stderr).toContain('write it as .png or .pfm, or pick one channel with --field NAME');
    expect(fluxel('run', COLOUR, '--scene', 'palette', '--size', '48x32', '--field', 'g', '--output', 'g.pgm').code).toBe(0);
  });
});

describe('--range on the command line (hand-worked)', () => {
  it('12-bit samples in a 16-bit PNG read as sample / 4095 with --range 0:4095 (--steps 0 writes the input as read)', () => {
    const samples = [0, 100, 2048, 4095];
    const file = write('twelve.png', encodeImage({ width: 4, height: 1, data: Float32Array.from(samples, s => s / 65535) }, 'png', { bitDepth: 16 }));
    const r = fluxel('run', join(ROOT, 'examples/heat-2d.fluxel'), '--input', file, '--range', '0:4095', '--steps', '0', '--output', 'twelve.pfm');
    expect(r.code, r.stderr).toBe(0);
    const got = decodeImage(new Uint8Array(readFileSync(join(dir, 'twelve.pfm')))).channels[0].data;
    // 0, 100/4095 = 0.02442002…, 2048/4095 = 0.50012210…, 1.
    [0, 0.0244200244, 0.5001221001, 1].forEach((w, i) => expect(got[i]).toBeCloseTo(w, 6));
  });
});

describe('provenance and --replay', () => {
  const main = write('rp-main.png', encodeImage(makeScene('cells', { width: 32, height: 24, noise: 0.05, seed: 5 }).noisy, 'png'));
  const mask = write('rp-mask.png', encodeImage(makeMask(32, 24), 'png'));

  it('--stats records source hash, params, inputs with SHA-256 of their bytes, backend, dtype and the output hash', () => {
    const r = fluxel('run', MASKED, '--input', main, '--input', `mask=${mask}`, '--output', 'rp.png', '--stats', 'rp.json');
    expect(r.code, r.stderr).toBe(0);
    const s = JSON.parse(readFileSync(join(dir, 'rp.json'), 'utf8'));
    const sha = (f: string) => createHash('sha256').update(readFileSync(f)).digest('hex');
    expect(s.sourceHash).toBe(sha(MASKED));
    expect(s.inputs).toEqual([
      { name: null, source: main, sha256: sha(main), format: 'png', width: 32, height: 24 },
      { name: 'mask', source: mask, sha256: sha(mask), format: 'png', width: 32, height: 24 },
    ]);
    expect(s.outputHash).toMatch(/^[0-9a-f]{64}$/);
    expect([typeof s.backend, s.dtype, s.backendChoice]).toEqual(['string', 'float32', 'auto']);
  });

  it('replays to the same output hash (exit 0), and says so', () => {
    const r = fluxel('run', '--replay', 'rp.json');
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/^replay of rp\.json matches: output hash [0-9a-f]{64}\n$/);
  });

  it('a different recorded output hash fails the replay (exit 1) with both hashes', () => {
    const s = JSON.parse(readFileSync(join(dir, 'rp.json'), 'utf8'));
    writeFileSync(join(dir, 'rp-bad.json'), JSON.stringify({ ...s, outputHash: '0'.repeat(64) }));
    const r = fluxel('run', '--replay', 'rp-bad.json');
    expect(r.code).toBe(1);
    expect(r.stderr).toBe(`fluxel run: replay of rp-bad.json differs: output hash ${s.outputHash}, recorded ${'0'.repeat(64)}.\n`);
  });

  it('a changed input file fails the replay before running (exit 1)', () => {
    const s = JSON.parse(readFileSync(join(dir, 'rp.json'), 'utf8'));
    const other = write('rp-mask2.png', encodeImage(makeMask(32, 24), 'png', { bitDepth: 16 }));
    s.inputs[1].source = other;
    writeFileSync(join(dir, 'rp-changed.json'), JSON.stringify(s));
    const r = fluxel('run', '--replay', 'rp-changed.json');
    expect(r.code).toBe(1);
    expect(r.stderr).toContain(`the input "mask" ${other} has changed since the run`);
  });

  it('a scene run replays too (scene, size, noise and seed recorded)', () => {
    expect(fluxel('run', COLOUR, '--scene', 'palette', '--size', '24x20', '--noise', '0.08', '--seed', '9', '--output', 'sc.pfm', '--stats', 'sc.json').code).toBe(0);
    const s = JSON.parse(readFileSync(join(dir, 'sc.json'), 'utf8'));
    expect(s.inputs).toEqual([{ name: null, source: 'scene:palette', width: 24, height: 20, noise: 0.08, seed: 9 }]);
    expect(fluxel('run', '--replay', 'sc.json').code).toBe(0);
  });
});
