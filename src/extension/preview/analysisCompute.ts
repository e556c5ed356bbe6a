// What the analysis worker computes, as plain functions (so unit tests call them without a thread): the static
// verdict for given knob values, the weights at one pixel of a full-resolution state, the impulse response, scenes
// and decoded image files.
// Must not import vscode, Node or the DOM.

import { impulseResponse, kernelAt } from '../../analysis/kernel';
import { analyseStability } from '../../analysis/stability';
import { extremumPrinciple } from '../../engine/monitorPolicy';
import { decodeImage } from '../../images/codec';
import { makeScene } from '../../images/scenes';
import { makeInput, pictureFromDecoded, type InputPicture } from '../../images/inputs';
import { parseAndCheck } from '../../notation';
import type { CheckedScheme } from '../../notation/scheme';
import type { WireVerdict } from '../../protocol/preview';
import type { ImpulseResult, KnobSet, Picture, WeightsResult } from './analysisProtocol';

let lastText: string | null = null;
let lastScheme: CheckedScheme | null = null;

/** Checks `text` (cached for the last text) and applies the knob values; throws when the text has errors. */
export function schemeWithKnobs(text: string, knobs: KnobSet): CheckedScheme {
  if (text !== lastText) {
    lastText = text;
    lastScheme = parseAndCheck(text).scheme;
  }
  if (!lastScheme) throw new Error('the scheme has errors');
  const base = lastScheme;
  return {
    ...base,
    dt: knobs.dt,
    params: base.params.map((p) => (Object.prototype.hasOwnProperty.call(knobs.values, p.name) ? { ...p, value: knobs.values[p.name] } : p)),
  };
}

const orNull = (v: number | null | undefined): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);

export function computeVerdict(text: string, knobs: KnobSet): { verdict: WireVerdict; extremumCheck: boolean } {
  const scheme = schemeWithKnobs(text, knobs);
  const r = analyseStability(scheme);
  const verdict: WireVerdict = {
    method: r.method, limit: orNull(r.limit), dt: r.dt, stable: r.stable, reason: r.reason, estimate: r.estimate === true,
    unconditional: r.unconditional === true, positivityLimit: orNull(r.positivityLimit), diffusionLimit: orNull(r.diffusionLimit),
  };
  return { verdict, extremumCheck: extremumPrinciple(scheme, r).applies };
}

export function computeWeights(text: string, knobs: KnobSet, state: { fields: readonly ArrayLike<number>[]; width: number; height: number; t: number }, x: number, y: number, field: string): WeightsResult {
  const scheme = schemeWithKnobs(text, knobs);
  const k = kernelAt(scheme, { width: state.width, height: state.height, fields: state.fields, t: state.t }, x, y, { field });
  return {
    field: k.field, radius: k.radius, dims: scheme.dims, grid: Array.from(k.grid), sum: k.sum, centre: k.centre,
    negativeCentre: k.negativeCentre, value: k.value, others: k.entries.filter((e) => e.field !== k.field).length,
  };
}

export function computeImpulse(text: string, knobs: KnobSet, steps: number): ImpulseResult | null {
  const scheme = schemeWithKnobs(text, knobs);
  const r = impulseResponse(scheme, steps, { maxRadius: 64 });
  if (!r) return null;
  return { steps: r.steps, t: r.t, sigma: [...r.sigma], heatSigma: r.heatSigma, sum: r.sum, truncated: r.truncated };
}

/** A picture with its channels kept when it is colour (or has alpha). */
function withChannels(p: InputPicture): Picture {
  const c = p.channels;
  const hasAlpha = c.alpha.some((a) => a !== 1);
  return { width: p.width, height: p.height, data: c.luma, ...(p.colour || hasAlpha ? { channels: { red: c.red, green: c.green, blue: c.blue, alpha: c.alpha } } : {}) };
}

export function scenePictures(name: string, noise: number, seed: number, size: number): { noisy: Picture; clean: Picture } {
  if (name === 'palette') {
    const s = makeInput('palette', { width: size, height: size, noise, seed });
    return { noisy: withChannels(s.noisy), clean: withChannels(s.clean ?? s.noisy) };
  }
  const s = makeScene(name, { width: size, height: size, noise, seed });
  return { noisy: s.noisy, clean: s.clean };
}

/** Decodes with every channel (images/inputs.ts); `range` maps integer samples as --range does. */
export function decodePicture(bytes: Uint8Array, range?: { lo: number; hi: number }): Picture {
  return withChannels(pictureFromDecoded(decodeImage(bytes, { channels: 'all', ...(range ? { range } : {}) })));
}
