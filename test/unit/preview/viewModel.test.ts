// The webview's view-model (DOM-free): frames of the current run, grey window and change scale, painting,
// zoom and pan, pixel mapping across downsampling, labels, knob sliders, the weights grid, chart series, keys.

import { describe, expect, it } from 'vitest';
import type { ToPreview, WireVerdict } from '../../../src/protocol/preview';
import { divergingTable, sequentialTable } from '../../../media/preview/colour';
import {
  changeScale, findingText, fitText, fitTransform, fmt, FrameStore, framePixelAt, framePixelOf, fullPixel, greyWindow, keyAction, knobSpan, paint, paintRgb, panBy,
  seriesOf, seriesSummary, sliderFromValue, SLIDER_STEPS, spaceTimeRepeat, stepLabel, valueFromSlider, verdictLabel, weightRows, zoomAt,
  betweenText, comparisonRows, fmtAngle, influenceText, isotropySeries, measureSeriesOf, paintInfluence, paintSpectrum, spectrumText, thetaToScreen,
} from '../../../media/preview/viewModel';

const src = 'file:///a.fluxel';
const started = (runId: number): ToPreview.RunStarted => ({
  type: 'runStarted', source: src, runId, width: 4, height: 4, frameWidth: 4, frameHeight: 4, steps: 10, every: 1, dt: 0.1, field: 'u', hasReference: true,
});
const frame = (runId: number, step: number, data = new Float32Array(16), psnr: number | null = null): ToPreview.Frame => ({
  type: 'frame', source: src, runId, field: 'u', step, t: step * 0.1, width: 4, height: 4, data, stats: { min: 0, max: step, mean: step / 2 }, psnr,
});

describe('frame store', () => {
  it('keeps frames of the current run sorted by step and refuses frames of other runs', () => {
    const s = new FrameStore();
    s.begin(started(2));
    expect(s.add(frame(2, 0))).toBe(0);
    expect(s.add(frame(2, 4))).toBe(1);
    expect(s.add(frame(2, 2))).toBe(1);
    expect(s.add(frame(1, 3))).toBe(-1);
    expect(s.frames.map((f) => f.step)).toEqual([0, 2, 4]);
    expect(s.indexAtOrBefore(3)).toBe(1);
    expect(s.indexAtOrBefore(99)).toBe(2);
  });

  it('replaces a frame sent again for the same step, and keeps findings when the same run restarts for another field', () => {
    const s = new FrameStore();
    s.begin(started(3));
    s.add(frame(3, 1));
    s.add(frame(3, 1, new Float32Array(16).fill(7)));
    expect(s.frames.length).toBe(1);
    expect(s.frames[0].data[0]).toBe(7);
    const range = { start: { line: 1, column: 1 }, end: { line: 1, column: 2 } };
    expect(s.addFinding({ type: 'finding', source: src, runId: 3, finding: { kind: 'growth', step: 1, x: 0, y: 0, field: 'u', message: 'm', range } })).toBe(true);
    expect(s.addFinding({ type: 'finding', source: src, runId: 9, finding: { kind: 'growth', step: 1, x: 0, y: 0, field: 'u', message: 'm', range } })).toBe(false);
    s.begin(started(3));
    expect(s.findings.length).toBe(1);
    s.begin(started(4));
    expect(s.findings.length).toBe(0);
  });
});

describe('pictures', () => {
  it('takes the grey window from quantiles, so single outliers do not set it', () => {
    const d = new Float32Array(1000).map((_, i) => i / 999);
    d[0] = -50;
    d[999] = 50;
    const w = greyWindow(d);
    expect(w.lo).toBeGreaterThan(-0.01);
    expect(w.hi).toBeLessThan(1.01);
  });

  it('widens a flat picture so it still has a window', () => {
    expect(greyWindow(new Float32Array(10).fill(0.3))).toEqual({ lo: expect.closeTo(-0.2, 6), hi: expect.closeTo(0.8, 6) });
  });

  it('scales change by the largest finite |now − start|', () => {
    expect(changeScale(new Float32Array([1, 2, NaN]), new Float32Array([0.5, 4, 0]))).toBe(2);
  });

  it('paints grey, change (zero in the middle) and non-finite values', () => {
    const table = divergingTable(false);
    const out = new Uint8ClampedArray(3 * 4);
    const start = new Float32Array([0, 0.5, 1]);
    paint(out, 'now', new Float32Array([0, 0.5, Infinity]), start, { lo: 0, hi: 1 }, table, 0);
    expect(Array.from(out.slice(0, 4))).toEqual([0, 0, 0, 255]);
    expect(out[4]).toBe(128);
    expect(Array.from(out.slice(8, 12))).toEqual([255, 0, 255, 255]);
    paint(out, 'change', new Float32Array([-1, 0.5, 2]), start, { lo: 0, hi: 1 }, table, 1);
    expect(Array.from(out.slice(0, 3))).toEqual(Array.from(table.slice(0, 3)));
    expect(Array.from(out.slice(4, 7))).toEqual(Array.from(table.slice(128 * 3, 128 * 3 + 3)));
    expect(Array.from(out.slice(8, 11))).toEqual(Array.from(table.slice(255 * 3, 255 * 3 + 3)));
    paint(out, 'start', new Float32Array([9, 9, 9]), start, { lo: 0, hi: 1 }, table, 0);
    expect([out[0], out[4], out[8]]).toEqual([0, 128, 255]);
  });
});

describe('zoom and pan', () => {
  it('fits the frame centred', () => {
    expect(fitTransform(100, 50, 400, 400)).toEqual({ scale: 4, offsetX: 0, offsetY: 100 });
  });

  it('keeps the image point under the cursor in place when zooming', () => {
    const t = fitTransform(100, 100, 200, 200);
    const z = zoomAt(t, 4, 37, 91, 0.5);
    expect((37 - z.offsetX) / z.scale).toBeCloseTo((37 - t.offsetX) / t.scale, 12);
    expect((91 - z.offsetY) / z.scale).toBeCloseTo((91 - t.offsetY) / t.scale, 12);
    expect(zoomAt(t, 1e6, 0, 0, 0.5).scale).toBe(64);
    expect(zoomAt(t, 1e-6, 0, 0, 0.5).scale).toBe(0.5);
  });

  it('finds the frame pixel under a screen point, nearest-neighbour, and none outside', () => {
    const t = panBy({ scale: 8, offsetX: 0, offsetY: 0 }, 10, 20);
    expect(framePixelAt(t, 10 + 8 * 3 + 7.9, 20 + 8 * 2, 16, 16)).toEqual({ fx: 3, fy: 2 });
    expect(framePixelAt(t, 5, 25, 16, 16)).toBeNull();
  });

  it('maps downsampled frame pixels to full-resolution pixels and back', () => {
    const s = { width: 1000, height: 600, frameWidth: 500, frameHeight: 300 };
    expect(fullPixel(10, 20, s)).toEqual({ x: 21, y: 41 });
    expect(framePixelOf(21, 41, s)).toEqual({ fx: 10, fy: 20 });
    expect(fullPixel(499, 299, s)).toEqual({ x: 999, y: 599 });
    const same = { width: 64, height: 64, frameWidth: 64, frameHeight: 64 };
    expect(fullPixel(5, 6, same)).toEqual({ x: 5, y: 6 });
  });
});

describe('1-D space–time picture', () => {
  it('repeats each step so the picture takes about the stage shape', () => {
    expect(spaceTimeRepeat(240, 260, 256, 51)).toBe(5);
    expect(spaceTimeRepeat(400, 100, 256, 500)).toBe(1);
    expect(spaceTimeRepeat(100, 4000, 256, 2)).toBe(64);
    expect(spaceTimeRepeat(0, 100, 256, 10)).toBe(1);
  });
});

describe('labels', () => {
  it('formats numbers compactly', () => {
    expect(fmt(0.200000001)).toBe('0.2');
    expect(fmt(-1.5)).toBe('−1.5');
    expect(fmt(1e-9, 3)).toBe('1.0e−9');
    expect(fmt(NaN)).toBe('NaN');
    expect(fmt(Infinity)).toBe('∞');
    expect(stepLabel(37, 60, 7.4)).toBe('step 37 of 60 · t = 7.4');
  });

  const v = (p: Partial<WireVerdict>): WireVerdict => ({ method: 'positivity', limit: 0.25, dt: 0.2, stable: true, reason: 'r', estimate: false, unconditional: false, positivityLimit: null, diffusionLimit: null, ...p });
  const cases: [string, Partial<WireVerdict>, string, string][] = [
    ['stable', {}, 'within limit', 'ok'],
    ['over', { dt: 0.3, stable: false }, 'over the limit', 'error'],
    ['linearised', { method: 'linearised', estimate: true }, 'estimate only', 'info'],
    ['none', { method: 'none', limit: null, stable: false }, 'no bound known', 'info'],
    ['no stable dt', { method: 'von-neumann', limit: null, stable: false }, 'no bound known', 'error'],
    ['unconditional', { method: 'von-neumann', limit: null, stable: true, unconditional: true }, 'within limit', 'ok'],
  ];
  for (const [name, p, text, tone] of cases) {
    it(`verdict: ${name} → ${text}`, () => {
      const l = verdictLabel(v(p));
      expect([l.text, l.tone]).toEqual([text, tone]);
    });
  }
  it('says the method and limit in the detail', () => expect(verdictLabel(v({})).detail).toBe('dt 0.2 / 0.25 · positivity'));

  it('writes a finding as what, when and where', () => {
    const f = { kind: 'new-extremum' as const, step: 41, x: 203, y: 17, field: 'u', message: 'new maximum 1.003', range: { start: { line: 14, column: 1 }, end: { line: 14, column: 9 } } };
    expect(findingText(f)).toBe('new extremum · step 41 at (203, 17): new maximum 1.003');
  });
});

describe('knob fit line', () => {
  const base: ToPreview.Fit = { type: 'fit', source: src, fitId: 1, status: 'running', evaluations: 1, metric: 'psnr', values: null, step: null, best: null, noisy: null, message: null };
  it.each([
    [base, 'fitting… 1 run so far'],
    [{ ...base, evaluations: 7 }, 'fitting… 7 runs so far'],
    [{ ...base, status: 'cancelled' as const }, 'fit cancelled'],
    [{ ...base, status: 'failed' as const, message: 'no scene' }, 'fit failed: no scene'],
    [{ ...base, status: 'done' as const, evaluations: 21, values: { K: 0.0712345, sigma: 1.5 }, step: 18, best: 28.456, noisy: 20.1 },
      'fit: K = 0.07123, sigma = 1.5 · best step 18 · PSNR 28.46 dB (noisy input 20.1 dB) · 21 runs'],
  ])('case %#', (msg, text) => expect(fitText(msg)).toBe(text));
});

describe('knob sliders', () => {
  const k = { name: 'K', value: 0.06, lo: 0.005, hi: 0.5 };
  it('uses a log scale over two decades and maps the ends exactly', () => {
    expect(knobSpan(k).log).toBe(true);
    expect(valueFromSlider(k, 0)).toBe(0.005);
    expect(valueFromSlider(k, SLIDER_STEPS)).toBe(0.5);
    expect(valueFromSlider(k, sliderFromValue(k, 0.06))).toBeCloseTo(0.06, 3);
  });
  it('uses a linear scale otherwise and invents a span when none is declared', () => {
    const dt = { name: 'dt', value: 0.2, lo: 0.02, hi: 0.3 };
    expect(knobSpan(dt).log).toBe(false);
    expect(sliderFromValue(dt, 0.16)).toBe(500);
    expect(knobSpan({ name: 'a', value: 2, lo: null, hi: null })).toEqual({ lo: 0.2, hi: 20, log: true });
    expect(knobSpan({ name: 'b', value: 0, lo: null, hi: null })).toEqual({ lo: -10, hi: 10, log: false });
    expect(sliderFromValue(dt, 99)).toBe(SLIDER_STEPS);
  });
});

describe('weights grid', () => {
  it('lays the grid out with dy rows, marks the centre and colours by sign', () => {
    const rows = weightRows({ grid: [0, 0.25, 0, 0.25, -0.5, 0.25, 0, 0.25, 0], radius: 1, dims: 2 });
    expect(rows.length).toBe(3);
    expect(rows[1][1]).toMatchObject({ dx: 0, dy: 0, centre: true, text: '−0.5', colour: 64 });
    expect(weightRows({ grid: [0, 1, 0, 1, -4, 1, 0, 1, 0], radius: 1, dims: 2 })[1][1].colour).toBe(0);
    expect(rows[0][1]).toMatchObject({ dx: 0, dy: -1, text: '0.25' });
    expect(rows[0][0].text).toBe('·');
    expect(rows[0][1].colour).toBeGreaterThan(128);
  });
  it('has one row in 1d', () => {
    expect(weightRows({ grid: [0.4, 0.2, 0.4], radius: 1, dims: 1 }).map((r) => r.length)).toEqual([3]);
  });
});

describe('chart series', () => {
  it('collects range, mean and PSNR, and marks the first best step', () => {
    const fs = [frame(1, 0, undefined, 20), frame(1, 1, undefined, 25), frame(1, 2, undefined, 25), frame(1, 3, undefined, 22)];
    const s = seriesOf(fs, true);
    expect(s.steps).toEqual([0, 1, 2, 3]);
    expect(s.max).toEqual([0, 1, 2, 3]);
    expect(s.best).toEqual({ step: 1, psnr: 25 });
    expect(seriesSummary(s)).toContain('best PSNR 25 dB at step 1');
    expect(seriesOf(fs, false).psnr).toBeNull();
  });
});

describe('keys', () => {
  it('puts start, now and change one key away', () => {
    expect(keyAction('s')).toEqual({ kind: 'view', mode: 'start' });
    expect(keyAction('n')).toEqual({ kind: 'view', mode: 'now' });
    expect(keyAction('c')).toEqual({ kind: 'view', mode: 'change' });
    expect(keyAction(' ')).toEqual({ kind: 'play' });
    expect(keyAction('ArrowLeft')).toEqual({ kind: 'step', by: -1 });
    expect(keyAction('q')).toBeNull();
  });
});

describe('paintRgb (the colour view of schemes binding image.red, .green, .blue)', () => {
  it('clamps to [0, 1], rounds to bytes, and marks non-finite pixels', () => {
    const out = new Uint8ClampedArray(12);
    paintRgb(out, Float32Array.of(1, -0.5, NaN), Float32Array.of(0.5, 2, 0), Float32Array.of(0, 0.25, 0));
    expect(Array.from(out)).toEqual([255, 128, 0, 255, 0, 255, 64, 255, 255, 0, 255, 255]);
  });
});

describe('frequency map, influence map, per-step measures and A/B labels', () => {
  const seq = sequentialTable();
  it('paints |G| through the sequential map over the colour-bar range, θy upwards, non-finite values marked', () => {
    // 3 columns × 2 rows; row 0 of the grid is θy = −π, so it is painted as the bottom row.
    const amp = new Float32Array([0, 0.5, 1, 2, NaN, 0.25]);
    const out = new Uint8ClampedArray(6 * 4);
    paintSpectrum(out, amp, 3, 2, 0, 1, seq);
    const rgb = (i: number) => [out[i * 4], out[i * 4 + 1], out[i * 4 + 2]];
    // Top screen row = grid row 1: 2 (clamped to hi), NaN, 0.25.
    expect(rgb(0)).toEqual([seq[765], seq[766], seq[767]]);
    expect(rgb(1)).toEqual([255, 0, 255]);
    expect(rgb(2)).toEqual([seq[64 * 3], seq[64 * 3 + 1], seq[64 * 3 + 2]]);
    // Bottom screen row = grid row 0: lo, middle, hi.
    expect(rgb(3)).toEqual([seq[0], seq[1], seq[2]]);
    expect(rgb(4)).toEqual([seq[128 * 3], seq[128 * 3 + 1], seq[128 * 3 + 2]]);
    expect(rgb(5)).toEqual([seq[765], seq[766], seq[767]]);
    expect(Array.from({ length: 6 }, (_, i) => out[i * 4 + 3])).toEqual([255, 255, 255, 255, 255, 255]);
  });

  it('places frequencies at the centres of their cells, θy upwards when flipped', () => {
    // 5 samples over [−π, π] drawn 100 px wide: cells of 20 px, θ = −π at 10, 0 at 50, π at 90.
    expect(thetaToScreen(-Math.PI, 5, 100)).toBeCloseTo(10, 12);
    expect(thetaToScreen(0, 5, 100)).toBeCloseTo(50, 12);
    expect(thetaToScreen(Math.PI, 5, 100)).toBeCloseTo(90, 12);
    expect(thetaToScreen(Math.PI, 5, 100, true)).toBeCloseTo(10, 12);
    expect(thetaToScreen(-Math.PI / 2, 5, 100, true)).toBeCloseTo(70, 12);
  });

  it('names the peak of |G| with angles as multiples of π, and turns the isotropy curve into degrees and percent', () => {
    expect(spectrumText({ dims: 2, peak: { value: 1.6, theta: [Math.PI, -Math.PI] } })).toBe('largest |G| 1.6 at θ = (π, −π)');
    expect(spectrumText({ dims: 1, peak: { value: 1, theta: [0] } })).toBe('largest |G| 1 at θ = 0');
    expect(fmtAngle(1.2)).toBe('1.2');
    const iso = isotropySeries({ radius: Math.PI / 2, angles: [0, Math.PI / 4, Math.PI], error: [0.0123, -0.5, 0] });
    expect(iso.degrees.map((d) => Math.round(d * 1e9) / 1e9)).toEqual([0, 45, 180]);
    expect(iso.percent.map((p) => Math.round(p * 1e9) / 1e9)).toEqual([1.23, -50, 0]);
  });

  it('paints an influence map transparent where a pixel has no influence and opaque at the largest weight', () => {
    const table = divergingTable(true);
    const out = new Uint8ClampedArray(4 * 4);
    paintInfluence(out, new Float32Array([0, 0.25, -1, 1]), 1, table);
    expect([out[3], out[7], out[11], out[15]]).toEqual([0, 128, 255, 255]);
    expect([out[8], out[9], out[10]]).toEqual([table[0], table[1], table[2]]);
    expect([out[12], out[13], out[14]]).toEqual([table[765], table[766], table[767]]);
    expect(influenceText({ field: 'u', x: 3, y: 4, step: 10, steps: 10, sum: 1, peak: 0.0625 })).toBe('influence of the input on u at (3, 4), step 10 (10 steps): sum 1, largest 0.0625');
  });

  it('charts per-step measures only when frames carry them, with gaps for missing or non-finite values', () => {
    const f0 = frame(1, 0);
    expect(measureSeriesOf([f0])).toBeNull();
    const m = (changeRms: number | null, tv: number) => ({ drift: 0, tv, energy: tv / 2, changeRms, changeMax: changeRms });
    const s = measureSeriesOf([{ ...f0, measures: m(null, 10) }, { ...frame(1, 1), measures: m(0.01, 8) }, { ...frame(1, 2), measures: m(NaN, 7) }]);
    expect(s).toEqual({ steps: [0, 1, 2], drift: [0, 0, 0], tv: [10, 8, 7], energy: [5, 4, 3.5], changeRms: [null, 0.01, null], changeMax: [null, 0.01, null] });
  });

  it('lays out the A/B table with signed deltas, marking higher PSNR and SSIM as better and TV as neither', () => {
    const rows = comparisonRows({ pinned: { psnr: 27.5, ssim: 0.8, tv: 1200 }, current: { psnr: 28.25, ssim: 0.79, tv: 1100 }, delta: { psnr: 0.75, ssim: -0.01, tv: -100 } });
    expect(rows).toEqual([
      { metric: 'PSNR', pinned: '27.5 dB', now: '28.25 dB', delta: '+0.75 dB', better: true },
      { metric: 'SSIM', pinned: '0.8', now: '0.79', delta: '−0.01', better: false },
      { metric: 'TV', pinned: '1200', now: '1100', delta: '−100', better: null },
    ]);
    const none = comparisonRows({ pinned: { psnr: null, ssim: null, tv: 3 }, current: { psnr: null, ssim: null, tv: 3 }, delta: { psnr: null, ssim: null, tv: 0 } });
    expect(none.map((r) => [r.pinned, r.delta, r.better])).toEqual([['–', '–', null], ['–', '–', null], ['3', '0', null]]);
    expect(betweenText({ step: 5, note: null, between: { psnr: 41.5, ssim: 0.99 } })).toBe('now (step 5) against pinned: PSNR 41.5 dB, SSIM 0.99');
    expect(betweenText({ step: 5, note: null, between: { psnr: Infinity, ssim: NaN } })).toMatch(/PSNR ∞ dB, SSIM n\/a/);
    expect(betweenText({ step: 5, note: 'sizes differ', between: null })).toBe('sizes differ');
  });

  it('has a key for the influence view', () => expect(keyAction('i')).toEqual({ kind: 'view', mode: 'influence' }));
});
