// What the analysis worker computes, as plain functions (so unit tests call them without a thread): the static
// verdict for given knob values, the weights at one pixel of a full-resolution state, the impulse response, scenes
// and decoded image files, and the metrics of an A/B comparison.
// Must not import vscode, Node or the DOM.

import { impulseResponse, kernelAt } from '../../analysis/kernel';
import { compareImages, totalVariation, type MetricImage } from '../../analysis/metrics';
import { analyseStability } from '../../analysis/stability';
import { extremumPrinciple } from '../../engine/monitorPolicy';
import { decodeImage } from '../../images/codec';
import { makeScene } from '../../images/scenes';
import { parseAndCheck } from '../../notation';
import type { CheckedScheme } from '../../notation/scheme';
import type { WireVerdict } from '../../protocol/preview';
import type { CompareResult, ImpulseResult, KnobSet, Picture, SideMetrics, WeightsResult } from './analysisProtocol';

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

export function scenePictures(name: string, noise: number, seed: number, size: number): { noisy: Picture; clean: Picture } {
  const s = makeScene(name, { width: size, height: size, noise, seed });
  return { noisy: s.noisy, clean: s.clean };
}

export function decodePicture(bytes: Uint8Array): Picture {
  const c = decodeImage(bytes, {}).channels[0];
  return { width: c.width, height: c.height, data: c.data };
}

/**
 * The metrics of one side of an A/B comparison (numerics.md "Metrics"): PSNR and SSIM against the clean reference
 * when there is one of the same size (SSIM null on images smaller than its 11×11 window), isotropic total variation;
 * with a pinned result of the same size, PSNR and SSIM of this result against it.
 */
export function compareResult(result: MetricImage, reference: MetricImage | null, pinned: MetricImage | null): CompareResult {
  const same = (a: MetricImage | null): a is MetricImage => a !== null && a.width === result.width && a.height === result.height;
  let metrics: SideMetrics = { psnr: null, ssim: null, tv: totalVariation(result) };
  if (same(reference)) {
    const c = compareImages(reference, result);
    metrics = { ...metrics, psnr: c.psnr, ssim: c.ssim };
  }
  let between: CompareResult['between'] = null;
  if (same(pinned)) {
    const c = compareImages(pinned, result);
    between = { psnr: c.psnr, ssim: c.ssim ?? Number.NaN };
  }
  return { metrics, between };
}
