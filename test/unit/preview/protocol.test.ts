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
  ];
  for (const [name, msg] of bad) {
    it(`refuses ${name}`, () => expect(validateFromPreview(msg)).toBeNull());
  }

  it('drops properties that are not part of the message', () => {
    expect(validateFromPreview({ type: 'ready', source: src, extra: 1 })).toEqual({ type: 'ready', source: src });
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

describe('input choices', () => {
  it('keeps only the declared fields', () => {
    expect(validInput({ kind: 'scene', scene: 'cells', noise: 0.2, seed: 9, evil: true })).toEqual({ kind: 'scene', scene: 'cells', noise: 0.2, seed: 9 });
    expect(validInput({ kind: 'scene', scene: 'cells', noise: 2, seed: 9 })).toBeNull();
    expect(validInput(undefined)).toBeNull();
  });
});
