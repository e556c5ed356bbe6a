// Message validation on receipt, both directions: well-formed messages pass (rebuilt without extra properties),
// malformed ones are refused; typed arrays and their list fallbacks.

import { describe, expect, it } from 'vitest';
import { validateFromPreview, validateToPreview, validInput } from '../../../src/protocol/preview';

const src = 'file:///w/a.fluxel';
const range = { start: { line: 3, column: 1 }, end: { line: 3, column: 9 } };

describe('messages from the webview', () => {
  const ok: [string, unknown][] = [
    ['ready', { type: 'ready', source: src }],
    ['setKnobs', { type: 'setKnobs', source: src, values: { K: 0.1, sigma: 1 }, dt: 0.2 }],
    ['writeKnobs', { type: 'writeKnobs', source: src, values: {}, dt: 0.05 }],
    ['setInput scene', { type: 'setInput', source: src, input: { kind: 'scene', scene: 'card', noise: 0, seed: 3 } }],
    ['setInput file', { type: 'setInput', source: src, input: { kind: 'file', uri: 'file:///w/x.png' } }],
    ['setInput file with a sample range', { type: 'setInput', source: src, input: { kind: 'file', uri: 'file:///w/x.png', range: { lo: 0, hi: 4095 } } }],
    ['setInput colour chart scene', { type: 'setInput', source: src, input: { kind: 'scene', scene: 'palette', noise: 0.05, seed: 1 } }],
    ['setNamedInput mask', { type: 'setNamedInput', source: src, name: 'mask', input: { kind: 'mask' } }],
    ['setNamedInput file', { type: 'setNamedInput', source: src, name: 'guide-2', input: { kind: 'file', uri: 'file:///w/g.png', range: { lo: 10, hi: 200 } } }],
    ['chooseNamedImage', { type: 'chooseNamedImage', source: src, name: 'mask' }],
    ['chooseImage', { type: 'chooseImage', source: src }],
    ['showField', { type: 'showField', source: src, field: 'v' }],
    ['pickPixel', { type: 'pickPixel', source: src, runId: 4, step: 10, x: 0, y: 255 }],
    ['requestProfile', { type: 'requestProfile', source: src, runId: 4, step: 10, row: 12 }],
    ['reveal', { type: 'reveal', source: src, range }],
    ['rerun', { type: 'rerun', source: src }],
    ['fitKnobs', { type: 'fitKnobs', source: src }],
    ['fitKnobs with names', { type: 'fitKnobs', source: src, names: ['K', 'sigma'] }],
    ['pin', { type: 'pin', source: src, runId: 3, step: 40 }],
    ['unpin', { type: 'unpin', source: src }],
    ['requestComparison', { type: 'requestComparison', source: src, runId: 3, step: 0 }],
    ['requestInfluence', { type: 'requestInfluence', source: src, runId: 3, step: 12, x: 5, y: 250 }],
  ];
  for (const [name, msg] of ok) {
    it(`accepts ${name}`, () => expect(validateFromPreview(msg)).toEqual(msg));
  }

  const bad: [string, unknown][] = [
    ['not an object', 'ready'],
    ['null', null],
    ['no source', { type: 'ready' }],
    ['unknown type', { type: 'format-disk', source: src }],
    ['dt zero', { type: 'setKnobs', source: src, values: {}, dt: 0 }],
    ['dt NaN', { type: 'setKnobs', source: src, values: {}, dt: NaN }],
    ['knob value a string', { type: 'setKnobs', source: src, values: { K: '1' }, dt: 0.1 }],
    ['knob name not a name', { type: 'setKnobs', source: src, values: { 'K; drop': 1 }, dt: 0.1 }],
    ['unknown scene', { type: 'setInput', source: src, input: { kind: 'scene', scene: 'moon', noise: 0, seed: 1 } }],
    ['negative noise', { type: 'setInput', source: src, input: { kind: 'scene', scene: 'card', noise: -1, seed: 1 } }],
    ['fractional seed', { type: 'setInput', source: src, input: { kind: 'scene', scene: 'card', noise: 0, seed: 1.5 } }],
    ['empty file uri', { type: 'setInput', source: src, input: { kind: 'file', uri: '' } }],
    ['an empty sample range', { type: 'setInput', source: src, input: { kind: 'file', uri: 'file:///w/x.png', range: { lo: 5, hi: 5 } } }],
    ['a named input with a bad name', { type: 'setNamedInput', source: src, name: 'my mask', input: { kind: 'mask' } }],
    ['a named input of an unknown kind', { type: 'setNamedInput', source: src, name: 'mask', input: { kind: 'scene' } }],
    ['choosing for a bad name', { type: 'chooseNamedImage', source: src, name: '1mask' }],
    ['negative pixel', { type: 'pickPixel', source: src, runId: 1, step: 0, x: -1, y: 0 }],
    ['fractional step', { type: 'pickPixel', source: src, runId: 1, step: 0.5, x: 1, y: 0 }],
    ['fitKnobs with no names', { type: 'fitKnobs', source: src, names: [] }],
    ['fitKnobs with a name that is not one', { type: 'fitKnobs', source: src, names: ['K', 'a b'] }],
    ['fitKnobs with names not a list', { type: 'fitKnobs', source: src, names: 'K' }],
    ['range line 0', { type: 'reveal', source: src, range: { start: { line: 0, column: 1 }, end: { line: 1, column: 1 } } }],
    ['pin without a step', { type: 'pin', source: src, runId: 3 }],
    ['pin of a fractional step', { type: 'pin', source: src, runId: 3, step: 2.5 }],
    ['requestComparison with a negative run', { type: 'requestComparison', source: src, runId: -1, step: 2 }],
    ['requestInfluence without y', { type: 'requestInfluence', source: src, runId: 3, step: 12, x: 5 }],
    ['requestInfluence at a negative pixel', { type: 'requestInfluence', source: src, runId: 3, step: 12, x: -5, y: 1 }],
    ['requestInfluence with a string step', { type: 'requestInfluence', source: src, runId: 3, step: '12', x: 5, y: 1 }],
  ];
  for (const [name, msg] of bad) {
    it(`refuses ${name}`, () => expect(validateFromPreview(msg)).toBeNull());
  }

  it('drops properties that are not part of the message', () => {
    expect(validateFromPreview({ type: 'ready', source: src, extra: 1 })).toEqual({ type: 'ready', source: src });
    expect(validateFromPreview({ type: 'unpin', source: src, runId: 4 })).toEqual({ type: 'unpin', source: src });
    expect(validateFromPreview({ type: 'pin', source: src, runId: 4, step: 1, data: [1, 2] })).toEqual({ type: 'pin', source: src, runId: 4, step: 1 });
  });
});

describe('messages from the host', () => {
  const frame = {
    type: 'frame', source: src, runId: 2, field: 'u', step: 1, t: 0.2, width: 2, height: 2,
    data: new Float32Array([0, 1, 2, 3]), stats: { min: 0, max: 3, mean: 1.5 }, psnr: null,
  };
  it('accepts a frame with a Float32Array', () => expect(validateToPreview(frame)).toEqual(frame));
  it('accepts a frame whose data arrive as a list, as a Float32Array', () => {
    const m = validateToPreview({ ...frame, data: [0, 1, 2, 3] });
    expect(m && m.type === 'frame' && m.data).toEqual(new Float32Array([0, 1, 2, 3]));
  });
  it('refuses a frame whose data do not match its size', () => expect(validateToPreview({ ...frame, data: new Float32Array(3) })).toBeNull());
  it('keeps NaN statistics (a blow-up is reported, not hidden)', () => {
    const m = validateToPreview({ ...frame, stats: { min: NaN, max: NaN, mean: NaN } });
    expect(m?.type).toBe('frame');
  });

  const scheme = {
    type: 'scheme', source: src, fileName: 'a.fluxel', dims: 2, fields: ['u'],
    knobs: [{ name: 'K', value: 0.06, lo: 0.005, hi: 0.5 }], dt: { name: 'dt', value: 0.2, lo: null, hi: null }, steps: 60,
    current: { values: { K: 0.06 }, dt: 0.2 }, input: { kind: 'scene', scene: 'survey', noise: 0.1, seed: 7 }, inputLabel: 'survey tile',
  };
  it('accepts a scheme message', () => expect(validateToPreview(scheme)).toEqual(scheme));
  it('refuses a scheme with 3 dimensions', () => expect(validateToPreview({ ...scheme, dims: 3 })).toBeNull());
  it('accepts a scheme message with the fit state, and refuses a malformed one', () => {
    const withFit = { ...scheme, fit: { ready: false, note: 'Fitting needs a scene as input.' } };
    expect(validateToPreview(withFit)).toEqual(withFit);
    expect(validateToPreview({ ...scheme, fit: { ready: 'yes', note: '' } })).toBeNull();
    expect(validateToPreview({ ...scheme, fit: { ready: true } })).toBeNull();
  });

  const fit = {
    type: 'fit', source: src, fitId: 2, status: 'done', evaluations: 23, metric: 'psnr',
    values: { K: 0.071 }, step: 18, best: 28.5, noisy: 20.1, message: null,
  };
  it('accepts knob fit messages while running and when done', () => {
    expect(validateToPreview(fit)).toEqual(fit);
    const running = { ...fit, status: 'running', evaluations: 3, values: null, step: null, best: null, noisy: null };
    expect(validateToPreview(running)).toEqual(running);
    const failed = { ...running, status: 'failed', message: 'no scene' };
    expect(validateToPreview({ ...failed, extra: 1 })).toEqual(failed);
  });
  it('refuses knob fit messages with an unknown status, a bad value or a fractional step', () => {
    expect(validateToPreview({ ...fit, status: 'maybe' })).toBeNull();
    expect(validateToPreview({ ...fit, values: { K: 'big' } })).toBeNull();
    expect(validateToPreview({ ...fit, step: 1.5 })).toBeNull();
    expect(validateToPreview({ ...fit, metric: 'mse' })).toBeNull();
    expect(validateToPreview({ ...fit, fitId: -1 })).toBeNull();
  });

  const verdict = {
    type: 'verdict', source: src, runId: 1,
    verdict: { method: 'positivity', limit: 0.25, dt: 0.2, stable: true, reason: 'r', estimate: false, unconditional: false, positivityLimit: null, diffusionLimit: null },
  };
  it('accepts a verdict', () => expect(validateToPreview(verdict)).toEqual(verdict));
  it('refuses a verdict with an unknown method', () => expect(validateToPreview({ ...verdict, verdict: { ...verdict.verdict, method: 'guess' } })).toBeNull());

  it('accepts weights whose grid matches the radius', () => {
    const w = { type: 'weights', source: src, runId: 1, step: 3, x: 1, y: 2, field: 'u', radius: 1, dims: 2, grid: [0, 1, 0, 1, -3, 1, 0, 1, 0], sum: 1, centre: -3, negativeCentre: true, value: 0.5, others: 0 };
    expect(validateToPreview(w)).toEqual(w);
    expect(validateToPreview({ ...w, grid: [1, 2, 3] })).toBeNull();
  });

  it('accepts findings, problems, run ends, profiles, impulses and notices', () => {
    const msgs = [
      { type: 'finding', source: src, runId: 1, finding: { kind: 'new-extremum', step: 4, x: 1, y: 2, field: 'u', message: 'm', range } },
      { type: 'problems', source: src, count: 2, first: { message: 'oops', code: 'unknown-name', range } },
      { type: 'problems', source: src, count: 0, first: null },
      { type: 'runEnded', source: src, runId: 1, status: 'done', stepsDone: 60, best: { step: 20, psnr: 30 }, message: null },
      { type: 'profile', source: src, runId: 1, row: 3, step: 5, before: new Float32Array(4), after: new Float32Array(4) },
      { type: 'impulse', source: src, runId: 1, steps: 10, t: 2, sigma: [2, 2], heatSigma: 2, sum: 1, truncated: false },
      { type: 'notice', source: src, level: 'error', text: 'x' },
    ];
    for (const m of msgs) expect(validateToPreview(m), m.type).toEqual(m);
  });

  it('refuses a profile whose rows differ in length, and an unknown finding kind', () => {
    expect(validateToPreview({ type: 'profile', source: src, runId: 1, row: 3, step: 5, before: new Float32Array(4), after: new Float32Array(3) })).toBeNull();
    expect(validateToPreview({ type: 'finding', source: src, runId: 1, finding: { kind: 'oops', step: 4, x: 1, y: 2, field: 'u', message: 'm', range } })).toBeNull();
  });
});

describe('messages of the frequency map, influence map, modified equation and A/B comparison', () => {
  const measures = { drift: 1e-7, tv: 1234.5, energy: 88.25, changeRms: 0.002, changeMax: 0.04 };
  const frame = {
    type: 'frame', source: src, runId: 2, field: 'u', step: 1, t: 0.2, width: 2, height: 1,
    data: new Float32Array([0, 1]), stats: { min: 0, max: 1, mean: 0.5 }, psnr: 22,
  };
  it('accepts a frame with per-step measures (null where not reported, NaN kept) and refuses malformed ones', () => {
    expect(validateToPreview({ ...frame, measures })).toEqual({ ...frame, measures });
    const partial = { ...measures, changeRms: null, changeMax: null };
    expect(validateToPreview({ ...frame, measures: partial })).toEqual({ ...frame, measures: partial });
    const m = validateToPreview({ ...frame, measures: { ...measures, tv: NaN } });
    expect(m?.type === 'frame' && Number.isNaN(m.measures?.tv)).toBe(true);
    expect(validateToPreview({ ...frame, measures: { ...measures, tv: '1' } })).toBeNull();
    expect(validateToPreview({ ...frame, measures: { drift: 0 } })).toBeNull();
    expect(validateToPreview({ ...frame, measures: null })).toBeNull();
  });

  const spectrum = {
    type: 'spectrum', source: src, runId: 5, dims: 2, cols: 3, rows: 2, amp: new Float32Array([1, 0.5, 1, 0.2, 1, 0.2]), lo: 0, hi: 1,
    edge: [0, 0, 1, 1], peak: { value: 1, theta: [0, 0] }, isotropy: { radius: 1.5, angles: [0, 0.5], error: [0.01, -0.002] }, note: 'n',
  };
  it('accepts a frequency map and refuses one whose grid, edge or isotropy curve is malformed', () => {
    expect(validateToPreview(spectrum)).toEqual(spectrum);
    expect(validateToPreview({ ...spectrum, isotropy: null })).toEqual({ ...spectrum, isotropy: null });
    expect(validateToPreview({ ...spectrum, amp: new Float32Array(5) })).toBeNull();
    expect(validateToPreview({ ...spectrum, edge: [0, 0, 1] })).toBeNull();
    expect(validateToPreview({ ...spectrum, edge: [0, 0, 1, NaN] })).toBeNull();
    expect(validateToPreview({ ...spectrum, hi: 0 })).toBeNull();
    expect(validateToPreview({ ...spectrum, dims: 1 })).toBeNull();
    expect(validateToPreview({ ...spectrum, cols: 2000, rows: 1, amp: new Float32Array(2000) })).toBeNull();
    expect(validateToPreview({ ...spectrum, isotropy: { radius: 1, angles: [0], error: [1, 2] } })).toBeNull();
  });

  const influence = {
    type: 'influence', source: src, runId: 5, step: 10, x: 4, y: 5, steps: 10, field: 'u', x0: 0, y0: 1, width: 2, height: 2,
    data: new Float32Array([0.1, 0.2, 0.3, 0.4]), sum: 1, peak: 0.4, note: null,
  };
  it('accepts an influence map and refuses one whose window and data disagree', () => {
    expect(validateToPreview(influence)).toEqual(influence);
    expect(validateToPreview({ ...influence, data: new Float32Array(3) })).toBeNull();
    expect(validateToPreview({ ...influence, x0: -1 })).toBeNull();
    expect(validateToPreview({ ...influence, peak: -1 })).toBeNull();
  });

  it('accepts a modified-equation summary with ranged and unranged warnings, and refuses unknown severities', () => {
    const a = {
      type: 'approximates', source: src, runId: 5, text: 'approximates u_t = 1·Δu', details: ['order 2 in space, 1 in time'],
      warnings: [{ severity: 'warning', message: 'source term', range }, { severity: 'info', message: 'drift', range: null }],
    };
    expect(validateToPreview(a)).toEqual(a);
    expect(validateToPreview({ ...a, warnings: [{ severity: 'error', message: 'x', range: null }] })).toBeNull();
    expect(validateToPreview({ ...a, details: [1] })).toBeNull();
  });

  const pinned = {
    label: 'run 3, survey tile, K = 0.06', step: 40, t: 8, field: 'u', fullWidth: 4, fullHeight: 2, width: 2, height: 1,
    data: new Float32Array([0.5, 0.25]), metrics: { psnr: 27.5, ssim: 0.81, tv: 12 }, pinnedAt: '2026-12-02T03:00:00.000Z',
  };
  it('accepts a pinned result and an unpin, and refuses a pinned picture of the wrong size', () => {
    expect(validateToPreview({ type: 'baseline', source: src, pinned })).toEqual({ type: 'baseline', source: src, pinned });
    expect(validateToPreview({ type: 'baseline', source: src, pinned: null })).toEqual({ type: 'baseline', source: src, pinned: null });
    expect(validateToPreview({ type: 'baseline', source: src, pinned: { ...pinned, data: new Float32Array(3) } })).toBeNull();
    expect(validateToPreview({ type: 'baseline', source: src, pinned: { ...pinned, metrics: { psnr: 1 } } })).toBeNull();
  });

  it('accepts comparisons with and without a common size', () => {
    const c = {
      type: 'comparison', source: src, runId: 5, step: 40, comparable: true, note: null,
      pinned: { psnr: 27.5, ssim: 0.81, tv: 12 }, current: { psnr: 28, ssim: 0.83, tv: 11 }, delta: { psnr: 0.5, ssim: 0.02, tv: -1 }, between: { psnr: 35, ssim: 0.97 },
    };
    expect(validateToPreview(c)).toEqual(c);
    const apart = { ...c, comparable: false, note: 'sizes differ', current: { psnr: null, ssim: null, tv: 3 }, delta: { psnr: null, ssim: null, tv: -9 }, between: null };
    expect(validateToPreview(apart)).toEqual(apart);
    expect(validateToPreview({ ...c, between: { psnr: 1 } })).toBeNull();
    expect(validateToPreview({ ...c, comparable: 'yes' })).toBeNull();
    expect(validateToPreview({ ...c, delta: undefined })).toBeNull();
  });
});

describe('input choices', () => {
  it('keeps only the declared fields', () => {
    expect(validInput({ kind: 'scene', scene: 'cells', noise: 0.2, seed: 9, evil: true })).toEqual({ kind: 'scene', scene: 'cells', noise: 0.2, seed: 9 });
    expect(validInput({ kind: 'scene', scene: 'cells', noise: 2, seed: 9 })).toBeNull();
    expect(validInput(undefined)).toBeNull();
  });
});
