// What the analysis worker computes, as plain functions (so unit tests call them without a thread): the static
// verdict for given knob values, the weights at one pixel of a full-resolution state, the impulse response, scenes
// and decoded image files, the metrics of an A/B comparison, and the panel's adapters over src/analysis' frequency
// map, modified equation and influence map (their results reshaped for the wire: Float32 pictures, the stable
// region's edge as line segments, the influence map cropped to where it is non-zero).
// Must not import vscode, Node or the DOM.

import { influenceMap } from '../../analysis/influence';
import { impulseResponse, kernelAt } from '../../analysis/kernel';
import { modifiedEquation, modifiedEquationDiagnostics } from '../../analysis/modifiedEquation';
import { frequencyMap } from '../../analysis/spectrum';
import { MARGIN } from '../../analysis/stabilityVonNeumann';
import { recordTrajectory } from '../../engine/trajectory';
import type { SourceRange } from '../../notation/ast';
import { compareImages, totalVariation, type MetricImage } from '../../analysis/metrics';
import { analyseStability } from '../../analysis/stability';
import { extremumPrinciple } from '../../engine/monitorPolicy';
import { decodeImage } from '../../images/codec';
import { makeScene } from '../../images/scenes';
import { makeInput, pictureFromDecoded, type InputPicture } from '../../images/inputs';
import { parseAndCheck } from '../../notation';
import type { CheckedScheme } from '../../notation/scheme';
import type { WireVerdict } from '../../protocol/preview';
import type { ApproximatesResult, CompareResult, FrozenAt, ImpulseResult, InfluenceResult, KnobSet, Picture, SideMetrics, SpectrumResult, WeightsResult } from './analysisProtocol';

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

/**
 * The |G| = level contour of a sampled map as line segments (x0, y0, x1, y1, ...) in θ, by marching squares with
 * linear interpolation along the cell sides; a saddle cell joins its crossings in side order. A 1-D map (one row)
 * gives a zero-length segment at each crossing.
 */
export function levelSegments(values: ArrayLike<number>, axis: ArrayLike<number>, cols: number, rows: number, level: number): number[] {
  const out: number[] = [];
  const cross = (a: number, b: number, ta: number, tb: number) => ta + ((level - a) / (b - a)) * (tb - ta);
  if (rows === 1) {
    for (let i = 0; i + 1 < cols; i++) {
      const a = values[i], b = values[i + 1];
      if ((a - level) * (b - level) < 0) {
        const t = cross(a, b, axis[i], axis[i + 1]);
        out.push(t, 0, t, 0);
      }
    }
    return out;
  }
  for (let j = 0; j + 1 < rows; j++) {
    for (let i = 0; i + 1 < cols; i++) {
      const v00 = values[j * cols + i], v10 = values[j * cols + i + 1];
      const v01 = values[(j + 1) * cols + i], v11 = values[(j + 1) * cols + i + 1];
      const x0 = axis[i], x1 = axis[i + 1], y0 = axis[j], y1 = axis[j + 1];
      const pts: number[] = [];
      // Sides in order: bottom (y0), right (x1), top (y1), left (x0).
      if ((v00 - level) * (v10 - level) < 0) pts.push(cross(v00, v10, x0, x1), y0);
      if ((v10 - level) * (v11 - level) < 0) pts.push(x1, cross(v10, v11, y0, y1));
      if ((v01 - level) * (v11 - level) < 0) pts.push(cross(v01, v11, x0, x1), y1);
      if ((v00 - level) * (v01 - level) < 0) pts.push(x0, cross(v00, v01, y0, y1));
      for (let k = 0; k + 3 < pts.length; k += 4) out.push(pts[k], pts[k + 1], pts[k + 2], pts[k + 3]);
    }
  }
  return out;
}

/**
 * The frequency map for the panel (src/analysis/spectrum.ts), with the edge where |G| crosses 1 + MARGIN; frozen at
 * a picked pixel of a run's state when `at` is given (schemes that are not linear), else at a flat state.
 */
export function computeSpectrum(text: string, knobs: KnobSet, at?: FrozenAt): SpectrumResult {
  const scheme = schemeWithKnobs(text, knobs);
  const frozen = at ? { state: { width: at.width, height: at.height, fields: at.fields, t: at.t }, x: at.x, y: at.y } : {};
  const m = frequencyMap(scheme, { dt: knobs.dt, params: knobs.values, ...frozen });
  const where = m.linear ? 'exact for this linear scheme' : `frozen coefficients at (${m.at?.x ?? '?'}, ${m.at?.y ?? '?'}) ${at ? `of the run's state at step ${at.step}` : 'of a flat state'}`;
  // A map whose |G| is constant up to rounding (e.g. |G| = 1 everywhere) is shown on 0 … hi, not as rounding noise.
  const flat = m.colourRange.hi - m.colourRange.lo < 1e-6 * Math.max(1, m.colourRange.hi);
  const unstable = m.unstableCount > 0 ? `|G| > 1 on ${m.unstableCount} of ${m.width * m.height} frequencies (inside the accent edge)` : 'no frequency grows (|G| ≤ 1 everywhere)';
  return {
    dims: m.dims, cols: m.width, rows: m.height, amp: Float32Array.from(m.amplitude),
    lo: flat ? 0 : m.colourRange.lo, hi: m.colourRange.hi > 0 ? m.colourRange.hi : 1,
    edge: levelSegments(m.amplitude, m.axis, m.width, m.height, 1 + MARGIN),
    peak: { value: m.maxAmplitude, theta: [...m.worstTheta] },
    isotropy: m.isotropy ? { radius: m.isotropy.radius, angles: Array.from(m.isotropy.angles), error: Array.from(m.isotropy.relError) } : null,
    note: `Field ${m.field}, ${where}; ${unstable}; symbol compared with ${m.equation}.`,
  };
}

const wire = (r: SourceRange) => ({ start: { line: r.start.line, column: r.start.column }, end: { line: r.end.line, column: r.end.column } });

/** What the scheme approximates (src/analysis/modifiedEquation.ts): the summary line, per-field details, warnings. */
export function computeApproximates(text: string, knobs: KnobSet, at?: FrozenAt): ApproximatesResult {
  const scheme = schemeWithKnobs(text, knobs);
  const state = at ? { width: at.width, height: at.height, fields: at.fields, t: at.t } : undefined;
  const me = modifiedEquation(scheme, { dt: knobs.dt, params: knobs.values, ...(state && at ? { state, x: at.x, y: at.y } : {}) });
  const order = (v: number | null) => (v === null ? '?' : String(v));
  const details = me.fields.map((f) => `${f.text}; leading error ${f.leadingError?.text ?? 'none found'}; order ${order(f.orderSpace)} in space, ${order(f.orderTime)} in time`);
  const where = at ? `of the run's state at step ${at.step}` : 'of a flat state';
  details.push(me.linear ? 'Exact: the scheme is linear with constant coefficients.' : `Frozen coefficients at (${me.at?.x ?? '?'}, ${me.at?.y ?? '?'}) ${where} (the scheme is not linear).`);
  const warnings = modifiedEquationDiagnostics(scheme, me)
    .filter((d) => d.severity !== 'error')
    .map((d) => ({ severity: d.severity === 'warning' ? 'warning' as const : 'info' as const, message: d.message, range: wire(d.range) }));
  return { text: me.summary, details, warnings };
}

/**
 * The influence map of (x, y) of `field` after `steps` steps (src/analysis/influence.ts, frozen weights): the run is
 * replayed from its input at full resolution in Float32 (the live run's precision) to get the states it passed
 * through, then the adjoint sweep runs over them. The result is cropped to the box of non-zero weights.
 */
export function computeInfluence(req: { text: string; knobs: KnobSet; image: Picture | null; fieldImages?: Readonly<Record<string, Picture>>; width: number; height: number; steps: number; x: number; y: number; field: string }): InfluenceResult {
  const scheme = schemeWithKnobs(req.text, req.knobs);
  const traj = recordTrajectory(scheme, req.steps, {
    ...(req.image ? { image: req.image, ...(req.fieldImages ? { fieldImages: req.fieldImages } : {}) } : { width: req.width, height: req.height }),
    params: req.knobs.values, dt: req.knobs.dt, dtype: 'float32',
  });
  const m = influenceMap(scheme, traj.states, { x: req.x, y: req.y, field: req.field }, { params: req.knobs.values, dt: req.knobs.dt });
  const full = m.maps[m.field];
  const box = m.box ?? { x0: req.x, y0: req.y, x1: req.x, y1: req.y };
  const width = box.x1 - box.x0 + 1;
  const height = box.y1 - box.y0 + 1;
  const data = new Float32Array(width * height);
  let sum = 0;
  let peak = 0;
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      const v = full[(box.y0 + y) * m.width + box.x0 + x];
      data[y * width + x] = v;
      sum += v;
      if (Math.abs(v) > peak) peak = Math.abs(v);
    }
  }
  const others = Object.keys(m.maps).filter((k) => k !== m.field);
  const stopped = traj.states.length < req.steps ? `the run stopped after ${traj.states.length} steps; ` : '';
  const note = others.length || stopped ? `${stopped}${others.length ? `the inputs of ${others.join(', ')} also act (all fields together sum to ${Number(m.sum.toPrecision(6))})` : ''}`.replace(/; $/, '') : null;
  return { steps: m.steps, field: m.field, x0: box.x0, y0: box.y0, width, height, data, sum, peak, note };
}
