// Unit tests for the heat-map renderer: the colour map's lightness against Oklab's published reference colours,
// the font's glyph table, the layout (cells, ring, colour bar) and that Debian's Pillow reads the PNG we write.
import { execFileSync } from 'node:child_process';
import { createHash } from 'node:crypto';
import { mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ANCHORS, colourAt, decodeSrgb, linearSrgbToOklab, oklabToLinearSrgb } from '../../../src/tune/colour';
import { glyph, hasGlyph, textWidth } from '../../../src/tune/font';
import { encodeRgbPng, formatTick, renderHeatmap, tickIndices } from '../../../src/tune/heatmap';

describe('colour map', () => {
  it('converts sRGB primaries to the Oklab values published with the space', () => {
    // B. Ottosson, "A perceptual color space for image processing", 2020, table of sRGB primaries in Oklab
    // (from memory): red (0.627955, 0.224863, 0.125846), green (0.866440, −0.233888, 0.179498),
    // blue (0.452014, −0.032457, −0.311528); white (1, 0, 0). Tolerance 1e-5 (the table has six digits).
    const cases: [number[], number[]][] = [
      [[1, 0, 0], [0.627955, 0.224863, 0.125846]],
      [[0, 1, 0], [0.86644, -0.233888, 0.179498]],
      [[0, 0, 1], [0.452014, -0.032457, -0.311528]],
      [[1, 1, 1], [1, 0, 0]],
    ];
    for (const [rgb, lab] of cases) {
      const got = linearSrgbToOklab(rgb[0], rgb[1], rgb[2]);
      got.forEach((v, i) => expect(Math.abs(v - lab[i]), `${rgb} → ${got}, expected ${lab}`).toBeLessThan(1e-5));
      const back = oklabToLinearSrgb(lab[0], lab[1], lab[2]);
      back.forEach((v, i) => expect(Math.abs(v - rgb[i]), `round trip of ${rgb}: ${back}`).toBeLessThan(1e-4));
    }
  });

  it('rises in Oklab lightness from end to end and every anchor lies inside the sRGB gamut', () => {
    let last = -1;
    for (let k = 0; k <= 64; k++) {
      const c = colourAt(k / 64) as number[];
      const L = linearSrgbToOklab(decodeSrgb(c[0] / 255), decodeSrgb(c[1] / 255), decodeSrgb(c[2] / 255))[0];
      // 8-bit rounding moves L by well under 0.005; the map rises by 0.64 / 64 = 0.01 per step.
      expect(L, `lightness at ${k}/64 is ${L}, previous ${last}`).toBeGreaterThan(last);
      last = L;
    }
    for (const [L, a, b] of ANCHORS) {
      for (const v of oklabToLinearSrgb(L, a, b)) expect(v >= 0 && v <= 1, `anchor (${L}, ${a}, ${b}) → ${v}`).toBe(true);
    }
    expect(colourAt(Number.NaN)).toBeNull();
  });
});

describe('font and layout', () => {
  it('has a 5×7 glyph for every digit, letter and the punctuation the labels use', () => {
    for (const ch of '0123456789abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ .,:;-+=()[]/_×σ%') expect(hasGlyph(ch), ch).toBe(true);
    expect(glyph('0').length).toBe(35);
    // Distinct glyphs for look-alikes.
    expect(glyph('0')).not.toEqual(glyph('O'));
    expect(glyph('1')).not.toEqual(glyph('l'));
    expect(textWidth('ab', 2)).toBe(22);
  });

  it('formats ticks and thins them to a readable number', () => {
    expect(formatTick(0.060000000000000005)).toBe('0.06');
    expect(formatTick(40)).toBe('40');
    expect(tickIndices(101)).toEqual([0, 20, 40, 60, 80, 100]);
    expect(tickIndices(20)).toEqual([0, 5, 10, 15]);
    expect(tickIndices(5)).toEqual([0, 1, 2, 3, 4]);
  });

  it('draws cells by value, the ring on the best cell and a colour bar from minimum (bottom) to maximum (top)', () => {
    const spec = {
      title: 'test', xLabel: 'step', yLabel: 'K', barLabel: 'PSNR (dB)',
      xValues: [0, 1, 2, 3], yValues: [0.1, 0.2],
      cells: [1, 2, 3, 4, 5, 6, 7, Number.NaN], mark: { col: 2, row: 1 },
    };
    const c = renderHeatmap(spec);
    const at = (x: number, y: number) => Array.from(c.rgb.subarray((y * c.width + x) * 3, (y * c.width + x) * 3 + 3));
    // Layout constants of renderHeatmap: plot at (150, 64), 600×380; row 0 is the bottom half.
    expect(at(150 + 75, 64 + 285)).toEqual(colourAt(0));
    expect(at(150 + 525, 64 + 285)).toEqual(colourAt(3 / 6));
    expect(at(150 + 75, 64 + 95)).toEqual(colourAt(4 / 6));
    expect(at(150 + 525, 64 + 95)).toEqual([200, 200, 200]); // NaN: "no value" grey
    // The ring around cell (2, 1), centred at (150 + 375, 64 + 94): white at radius 5, dark at radius 7.
    expect(at(150 + 375 + 5, 64 + 94)).toEqual([255, 255, 255]);
    expect(at(150 + 375 + 7, 64 + 94)).toEqual([30, 30, 30]);
    // Colour bar at x = 150 + 600 + 34: top is the maximum colour, bottom the minimum.
    expect(at(784 + 10, 64)).toEqual(colourAt(1));
    expect(at(784 + 10, 64 + 379)).toEqual(colourAt(0));
    expect(() => renderHeatmap({ ...spec, cells: [1, 2] })).toThrow(/needs 4×2 = 8 cells/);
  });

  it('writes an RGB PNG that Debian\'s Pillow reads back pixel for pixel', () => {
    // Outside reader: Pillow (python3-pil) through /usr/bin/python3, not our decoder.
    const c = renderHeatmap({ title: 'sweep', xLabel: 'step', yLabel: 'K', barLabel: 'SSIM', xValues: [0, 1, 2], yValues: [1, 2], cells: [0.1, 0.5, 0.9, 0.2, 0.4, 0.6] });
    const dir = mkdtempSync(join(tmpdir(), 'fluxel-heatmap-'));
    const file = join(dir, 'h.png');
    writeFileSync(file, encodeRgbPng(c));
    const script = 'import sys, hashlib\nfrom PIL import Image\nim = Image.open(sys.argv[1])\nprint(im.mode, im.size[0], im.size[1], hashlib.sha256(im.tobytes()).hexdigest())';
    const out = execFileSync('/usr/bin/python3', ['-c', script, file], { encoding: 'utf8' }).trim().split(' ');
    expect(out).toEqual(['RGB', String(c.width), String(c.height), createHash('sha256').update(c.rgb).digest('hex')]);
  });
});
