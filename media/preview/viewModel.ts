// View-model of the live run: the frames of the current run, picture windows, zoom and pan, knob slider mapping and
// every label the panel shows. DOM-free (unit-tested in test/unit/preview/); rendering code in main.ts only reads it.
// Imports only the shared protocol; never the engine, the analysis, the notation or the images code.

import type { KnobSpec, ToPreview, WireFinding, WireVerdict } from '../../src/protocol/preview';
import { divergingIndex, greyByte, sequentialIndex } from './colour';

/** What the picture shows: the field now, at the start, their change, or the influence map of the picked pixel. */
export type ViewMode = 'now' | 'start' | 'change' | 'influence';

// ------------------------------------------------------------------------------------------------ frames

/** Frames of one run, kept sorted by step; frames of any other run are refused. */
export class FrameStore {
  runId = -1;
  started: ToPreview.RunStarted | null = null;
  frames: ToPreview.Frame[] = [];
  findings: WireFinding[] = [];
  ended: ToPreview.RunEnded | null = null;

  /** Starts a new run (or restarts the same one for another field). */
  begin(msg: ToPreview.RunStarted): void {
    const sameRun = msg.runId === this.runId;
    this.runId = msg.runId;
    this.started = msg;
    this.frames = [];
    this.ended = null;
    if (!sameRun) this.findings = [];
  }

  /** Adds a frame of the current run; returns its index, or -1 when it belongs to another run. */
  add(f: ToPreview.Frame): number {
    if (f.runId !== this.runId) return -1;
    let i = this.frames.length;
    while (i > 0 && this.frames[i - 1].step > f.step) i--;
    if (i > 0 && this.frames[i - 1].step === f.step) {
      this.frames[i - 1] = f;
      return i - 1;
    }
    this.frames.splice(i, 0, f);
    return i;
  }

  addFinding(m: ToPreview.Finding): boolean {
    if (m.runId !== this.runId) return false;
    this.findings.push(m.finding);
    return true;
  }

  /** Index of the frame with the largest step ≤ `step` (0 when none). */
  indexAtOrBefore(step: number): number {
    let best = 0;
    for (let i = 0; i < this.frames.length; i++) if (this.frames[i].step <= step) best = i;
    return best;
  }

  get last(): number {
    return this.frames.length - 1;
  }
}

// ------------------------------------------------------------------------------------------------ pictures

/**
 * The grey window of a run: the 0.5 % and 99.5 % quantiles of its first frame (sampled), so a few noisy outliers do
 * not wash out the picture, and the window stays fixed over the steps so smoothing shows as loss of contrast.
 */
export function greyWindow(data: Float32Array): { lo: number; hi: number } {
  const stride = Math.max(1, Math.floor(data.length / 65536));
  const sample: number[] = [];
  for (let i = 0; i < data.length; i += stride) if (Number.isFinite(data[i])) sample.push(data[i]);
  if (!sample.length) return { lo: 0, hi: 1 };
  sample.sort((a, b) => a - b);
  const q = (p: number) => sample[Math.min(sample.length - 1, Math.max(0, Math.round(p * (sample.length - 1))))];
  let lo = q(0.005);
  let hi = q(0.995);
  if (!(hi > lo)) {
    lo -= 0.5;
    hi += 0.5;
  }
  return { lo, hi };
}

/** Largest |now − start| over finite pixels (the change view's symmetric scale); 0 when nothing changed. */
export function changeScale(now: Float32Array, start: Float32Array): number {
  let m = 0;
  const n = Math.min(now.length, start.length);
  for (let i = 0; i < n; i++) {
    const d = Math.abs(now[i] - start[i]);
    if (d > m && Number.isFinite(d)) m = d;
  }
  return m;
}

/** Fills RGBA bytes from three channels in [0, 1] (clamped, rounded; non-finite values in the `bad` colour). */
export function paintRgb(out: Uint8ClampedArray, red: Float32Array, green: Float32Array, blue: Float32Array, bad: readonly [number, number, number] = [255, 0, 255]): void {
  const byte = (v: number): number => Math.round(255 * (v < 0 ? 0 : v > 1 ? 1 : v));
  for (let i = 0; i < red.length; i++) {
    const o = i * 4;
    const r = red[i], g = green[i], b = blue[i];
    if (!Number.isFinite(r) || !Number.isFinite(g) || !Number.isFinite(b)) {
      out[o] = bad[0]; out[o + 1] = bad[1]; out[o + 2] = bad[2];
    } else {
      out[o] = byte(r); out[o + 1] = byte(g); out[o + 2] = byte(b);
    }
    out[o + 3] = 255;
  }
}

/**
 * Fills RGBA bytes for one picture: grey for 'now' and 'start' (window lo..hi), the diverging table for 'change'
 * (scale ±scale, zero in the middle). Non-finite values are drawn in the `bad` colour so a blow-up is seen.
 */
export function paint(out: Uint8ClampedArray, mode: ViewMode, now: Float32Array, start: Float32Array, win: { lo: number; hi: number }, table: Uint8Array, scale: number, bad: readonly [number, number, number] = [255, 0, 255]): void {
  const src = mode === 'start' ? start : now;
  for (let i = 0; i < src.length; i++) {
    const o = i * 4;
    const v = src[i];
    if (!Number.isFinite(v)) {
      out[o] = bad[0]; out[o + 1] = bad[1]; out[o + 2] = bad[2]; out[o + 3] = 255;
      continue;
    }
    if (mode === 'change') {
      const k = divergingIndex(v - start[i], scale) * 3;
      out[o] = table[k]; out[o + 1] = table[k + 1]; out[o + 2] = table[k + 2];
    } else {
      const g = greyByte(v, win.lo, win.hi);
      out[o] = g; out[o + 1] = g; out[o + 2] = g;
    }
    out[o + 3] = 255;
  }
}

// ------------------------------------------------------------------------------------------------ zoom and pan

/** Screen position of the picture: screen = offset + image · scale (image units are frame pixels). */
export interface ViewTransform {
  readonly scale: number;
  readonly offsetX: number;
  readonly offsetY: number;
}

export const MAX_SCALE = 64;

/** The whole frame centred in the canvas. */
export function fitTransform(frameW: number, frameH: number, canvasW: number, canvasH: number): ViewTransform {
  const scale = Math.max(1e-3, Math.min(canvasW / frameW, canvasH / frameH));
  return { scale, offsetX: (canvasW - frameW * scale) / 2, offsetY: (canvasH - frameH * scale) / 2 };
}

/** Zooms by `factor` keeping the image point under (sx, sy) in place; the scale stays within [min, MAX_SCALE]. */
export function zoomAt(t: ViewTransform, factor: number, sx: number, sy: number, minScale: number): ViewTransform {
  const scale = Math.max(minScale, Math.min(MAX_SCALE, t.scale * factor));
  const ix = (sx - t.offsetX) / t.scale;
  const iy = (sy - t.offsetY) / t.scale;
  return { scale, offsetX: sx - ix * scale, offsetY: sy - iy * scale };
}

export function panBy(t: ViewTransform, dx: number, dy: number): ViewTransform {
  return { scale: t.scale, offsetX: t.offsetX + dx, offsetY: t.offsetY + dy };
}

/** The frame pixel under a screen point, or null outside the picture. */
export function framePixelAt(t: ViewTransform, sx: number, sy: number, frameW: number, frameH: number): { fx: number; fy: number } | null {
  const fx = Math.floor((sx - t.offsetX) / t.scale);
  const fy = Math.floor((sy - t.offsetY) / t.scale);
  return fx >= 0 && fy >= 0 && fx < frameW && fy < frameH ? { fx, fy } : null;
}

/** Full-resolution pixel of a frame pixel: frames are box-downsampled by an integer factor k = ⌈full / frame⌉. */
export function fullPixel(fx: number, fy: number, s: { width: number; height: number; frameWidth: number; frameHeight: number }): { x: number; y: number } {
  const kx = Math.ceil(s.width / s.frameWidth);
  const ky = s.height === 1 ? 1 : Math.ceil(s.height / s.frameHeight);
  const k = Math.max(kx, ky);
  return { x: Math.min(s.width - 1, fx * k + Math.floor(k / 2)), y: Math.min(s.height - 1, fy * k + Math.floor(k / 2)) };
}

/** Frame pixel that shows a full-resolution pixel (inverse of fullPixel up to the block). */
export function framePixelOf(x: number, y: number, s: { width: number; height: number; frameWidth: number; frameHeight: number }): { fx: number; fy: number } {
  const k = Math.max(Math.ceil(s.width / s.frameWidth), s.height === 1 ? 1 : Math.ceil(s.height / s.frameHeight));
  return { fx: Math.floor(x / k), fy: Math.floor(y / k) };
}

/**
 * Rows per recorded step in a 1-D space–time picture, so the picture has roughly the stage's shape instead of a
 * thin strip (width cells wide, `steps` bands high).
 */
export function spaceTimeRepeat(stageW: number, stageH: number, width: number, steps: number): number {
  if (!(stageW > 0 && stageH > 0 && width > 0 && steps > 0)) return 1;
  return Math.max(1, Math.min(64, Math.round((stageH / stageW) * width / steps)));
}

// ------------------------------------------------------------------------------------------------ labels

/** A number in at most `digits` significant digits, without trailing zeros; exponents for tiny or huge values. */
export function fmt(v: number, digits = 4): string {
  if (Number.isNaN(v)) return 'NaN';
  if (!Number.isFinite(v)) return v > 0 ? '∞' : '−∞';
  if (v === 0) return '0';
  const a = Math.abs(v);
  const text = a >= 1e-3 && a < 1e6 ? String(Number(v.toPrecision(digits))) : v.toExponential(Math.max(0, digits - 2));
  return text.replace(/-/g, '−');
}

export function stepLabel(step: number, steps: number, t: number): string {
  return `step ${step} of ${steps} · t = ${fmt(t, 4)}`;
}

export type Tone = 'ok' | 'warn' | 'info' | 'error';

/** The verdict in our words: within limit · over the limit · estimate only · no bound known. */
export function verdictLabel(v: WireVerdict): { text: string; tone: Tone; detail: string } {
  const method = v.method === 'von-neumann' ? 'von Neumann' : v.method === 'positivity' ? 'positivity' : v.method === 'linearised' ? 'linearised estimate' : 'none';
  const limit = v.unconditional ? 'any dt' : v.limit === null ? 'no limit' : fmt(v.limit, 4);
  const detail = `dt ${fmt(v.dt, 4)} / ${limit} · ${method}`;
  if (v.method === 'none' || (v.limit === null && !v.unconditional)) return { text: 'no bound known', tone: v.limit === null && v.method !== 'none' ? 'error' : 'info', detail };
  if (!v.stable) return { text: 'over the limit', tone: 'error', detail };
  if (v.estimate || v.method === 'linearised') return { text: 'estimate only', tone: 'info', detail };
  return { text: 'within limit', tone: 'ok', detail };
}

const KIND_WORDS: Record<WireFinding['kind'], string> = { 'blow-up': 'blow-up', 'new-extremum': 'new extremum', growth: 'runaway growth', 'no-convergence': 'not converged' };

/** One finding line: what, when (step), where (pixel). */
export function findingText(f: WireFinding): string {
  return `${KIND_WORDS[f.kind]} · step ${f.step} at (${f.x}, ${f.y}): ${f.message}`;
}

export function findingLine(f: WireFinding): string {
  return `line ${f.range.start.line}`;
}

// ------------------------------------------------------------------------------------------------ knobs

export const SLIDER_STEPS = 1000;

/** The slider's span for a knob: its declared range, or a decade either side of the value when none is declared. */
export function knobSpan(k: KnobSpec): { lo: number; hi: number; log: boolean } {
  let lo = k.lo;
  let hi = k.hi;
  if (lo === null || hi === null || !(hi > lo)) {
    const v = Math.abs(k.value) || 1;
    lo = lo ?? (k.value > 0 ? v / 10 : k.value - 10 * v);
    hi = hi ?? (k.value > 0 ? v * 10 : k.value + 10 * v);
    if (!(hi > lo)) hi = lo + 1;
  }
  // A range over two decades or more that stays positive is easier to set on a log scale.
  return { lo, hi, log: lo > 0 && hi / lo >= 100 };
}

export function sliderFromValue(k: KnobSpec, v: number): number {
  const { lo, hi, log } = knobSpan(k);
  const t = log ? Math.log(v / lo) / Math.log(hi / lo) : (v - lo) / (hi - lo);
  return Math.max(0, Math.min(SLIDER_STEPS, Math.round((Number.isFinite(t) ? t : 0) * SLIDER_STEPS)));
}

export function valueFromSlider(k: KnobSpec, pos: number): number {
  const { lo, hi, log } = knobSpan(k);
  const t = Math.max(0, Math.min(1, pos / SLIDER_STEPS));
  const v = log ? lo * (hi / lo) ** t : lo + (hi - lo) * t;
  return Number(v.toPrecision(4));
}

// ------------------------------------------------------------------------------------------------ weights

export interface WeightCell {
  readonly dx: number;
  readonly dy: number;
  readonly weight: number;
  readonly text: string;
  /** Index into the diverging table (scale: 1, or the largest |weight| when that is larger). */
  readonly colour: number;
  readonly centre: boolean;
}

/** The weights grid as rows of cells, top row = dy −r (image rows grow downwards). */
export function weightRows(w: Pick<ToPreview.Weights, 'grid' | 'radius' | 'dims'>): WeightCell[][] {
  const side = 2 * w.radius + 1;
  const rows = w.dims === 2 ? side : 1;
  // Colour strength is the weight itself up to 1 (a plain average's weights stay pale, a dominant centre is strong);
  // larger weights, as in wave or sharpening schemes, scale the map to the largest.
  let scale = 1;
  for (const v of w.grid) scale = Math.max(scale, Math.abs(v));
  const out: WeightCell[][] = [];
  for (let r = 0; r < rows; r++) {
    const row: WeightCell[] = [];
    for (let c = 0; c < side; c++) {
      const weight = w.grid[r * side + c];
      const dx = c - w.radius;
      const dy = w.dims === 2 ? r - w.radius : 0;
      row.push({ dx, dy, weight, text: weight === 0 ? '·' : fmt(weight, 3), colour: divergingIndex(weight, scale), centre: dx === 0 && dy === 0 });
    }
    out.push(row);
  }
  return out;
}

// ------------------------------------------------------------------------------------------------ charts

export interface Series {
  readonly steps: number[];
  readonly min: number[];
  readonly max: number[];
  readonly mean: number[];
  /** null when the run has no clean reference. */
  readonly psnr: (number | null)[] | null;
  readonly best: { step: number; psnr: number } | null;
}

/** Chart series from the frames; the best step is the frame with the highest PSNR (first one on ties). */
export function seriesOf(frames: readonly ToPreview.Frame[], hasReference: boolean): Series {
  const steps = frames.map((f) => f.step);
  const psnr = hasReference ? frames.map((f) => (f.psnr !== null && Number.isFinite(f.psnr) ? f.psnr : null)) : null;
  let best: { step: number; psnr: number } | null = null;
  if (psnr) psnr.forEach((p, i) => { if (p !== null && (!best || p > best.psnr)) best = { step: steps[i], psnr: p }; });
  return {
    steps,
    min: frames.map((f) => f.stats.min),
    max: frames.map((f) => f.stats.max),
    mean: frames.map((f) => f.stats.mean),
    psnr,
    best,
  };
}

/** A short text summary of a chart for screen readers. */
export function seriesSummary(s: Series): string {
  if (!s.steps.length) return 'no frames yet';
  const i = s.steps.length - 1;
  const parts = [`at step ${s.steps[i]}: min ${fmt(s.min[i])}, max ${fmt(s.max[i])}, mean ${fmt(s.mean[i])}`];
  if (s.best) parts.push(`best PSNR ${fmt(s.best.psnr, 4)} dB at step ${s.best.step}`);
  return parts.join('; ');
}

// ------------------------------------------------------------------------------------------------ keys

export type KeyAction = { kind: 'view'; mode: ViewMode } | { kind: 'play' } | { kind: 'step'; by: number } | { kind: 'zoom'; factor: number } | { kind: 'fit' } | { kind: 'first' } | { kind: 'last' };

/** Keyboard shortcuts of the picture (only when focus is not in a text field or slider). */
export function keyAction(key: string): KeyAction | null {
  switch (key) {
    case 'n': return { kind: 'view', mode: 'now' };
    case 's': return { kind: 'view', mode: 'start' };
    case 'c': return { kind: 'view', mode: 'change' };
    case 'i': return { kind: 'view', mode: 'influence' };
    case ' ': case 'p': return { kind: 'play' };
    case 'ArrowRight': case '.': return { kind: 'step', by: 1 };
    case 'ArrowLeft': case ',': return { kind: 'step', by: -1 };
    case 'Home': return { kind: 'first' };
    case 'End': return { kind: 'last' };
    case '+': case '=': return { kind: 'zoom', factor: 2 };
    case '-': return { kind: 'zoom', factor: 0.5 };
    case '0': return { kind: 'fit' };
    default: return null;
  }
}

// ------------------------------------------------------------------------------------------------ knob fit

/** The line under the knobs that tells how a knob fit goes: evaluations while running, then what it found. */
export function fitText(msg: ToPreview.Fit): string {
  const metric = msg.metric === 'psnr' ? 'PSNR' : 'SSIM';
  const show = (v: number) => (msg.metric === 'psnr' ? `${fmt(v, 4)} dB` : fmt(v, 4));
  switch (msg.status) {
    case 'running':
      return `fitting… ${msg.evaluations} run${msg.evaluations === 1 ? '' : 's'} so far`;
    case 'cancelled':
      return 'fit cancelled';
    case 'failed':
      return `fit failed: ${msg.message ?? 'unknown error'}`;
    case 'done': {
      const values = Object.entries(msg.values ?? {}).map(([k, v]) => `${k} = ${fmt(v, 4)}`).join(', ');
      const best = msg.best === null ? '' : ` · ${metric} ${show(msg.best)}`;
      const noisy = msg.noisy === null ? '' : ` (noisy input ${show(msg.noisy)})`;
      return `fit: ${values} · best step ${msg.step ?? '?'}${best}${noisy} · ${msg.evaluations} runs`;
    }
  }
}

// ------------------------------------------------------------------------------------------------ frequency map

/**
 * RGBA bytes of the frequency map: |G| of each grid cell through the sequential table over [lo, hi]; non-finite
 * values in the `bad` colour. Rows are flipped so θy grows upwards on screen (row 0 of the grid is θy = −π).
 */
export function paintSpectrum(out: Uint8ClampedArray, amp: Float32Array, cols: number, rows: number, lo: number, hi: number, table: Uint8Array, bad: readonly [number, number, number] = [255, 0, 255]): void {
  for (let j = 0; j < rows; j++) {
    const src = (rows - 1 - j) * cols;
    for (let i = 0; i < cols; i++) {
      const v = amp[src + i];
      const o = (j * cols + i) * 4;
      if (!Number.isFinite(v)) {
        out[o] = bad[0]; out[o + 1] = bad[1]; out[o + 2] = bad[2]; out[o + 3] = 255;
        continue;
      }
      const k = sequentialIndex(v, lo, hi) * 3;
      out[o] = table[k]; out[o + 1] = table[k + 1]; out[o + 2] = table[k + 2]; out[o + 3] = 255;
    }
  }
}

/**
 * Screen position of a frequency θ on a map drawn `cells` cells over `size` pixels: grid point i (θ = −π + 2π·i/(cells − 1))
 * is the centre of cell i. `flip` maps θy (upwards) to screen rows (downwards).
 */
export function thetaToScreen(theta: number, cells: number, size: number, flip = false): number {
  const i = cells > 1 ? ((theta + Math.PI) / (2 * Math.PI)) * (cells - 1) : 0;
  const c = flip ? cells - 1 - i : i;
  return ((c + 0.5) / cells) * size;
}

/** The line under the frequency map: its largest |G| and where. */
export function spectrumText(m: Pick<ToPreview.Spectrum, 'peak' | 'dims'>): string {
  const th = m.peak.theta.map((t) => fmtAngle(t)).join(', ');
  return `largest |G| ${fmt(m.peak.value, 5)} at θ = ${m.dims === 2 ? `(${th})` : th}`;
}

/** An angle in radians as a multiple of π where it is one of the common ones, else in radians. */
export function fmtAngle(t: number): string {
  const q = t / Math.PI;
  for (const [v, s] of [[0, '0'], [1, 'π'], [-1, '−π'], [0.5, 'π/2'], [-0.5, '−π/2'], [0.25, 'π/4'], [-0.25, '−π/4'], [0.75, '3π/4'], [-0.75, '−3π/4']] as const) {
    if (Math.abs(q - v) < 1e-9) return s;
  }
  return fmt(t, 3);
}

/** The isotropy curve for a chart: angles in degrees, errors in percent. */
export function isotropySeries(iso: NonNullable<ToPreview.Spectrum['isotropy']>): { degrees: number[]; percent: number[] } {
  return { degrees: iso.angles.map((a) => (a * 180) / Math.PI), percent: iso.error.map((e) => e * 100) };
}

// ------------------------------------------------------------------------------------------------ influence map

/**
 * RGBA bytes of an influence map over its window: each weight through the diverging table at scale `peak`, with an
 * opacity that grows with |weight| / peak (square root, so weak but real influence stays visible), transparent at 0.
 */
export function paintInfluence(out: Uint8ClampedArray, data: Float32Array, peak: number, table: Uint8Array): void {
  for (let i = 0; i < data.length; i++) {
    const v = data[i];
    const o = i * 4;
    if (!Number.isFinite(v)) {
      out[o] = 255; out[o + 1] = 0; out[o + 2] = 255; out[o + 3] = 255;
      continue;
    }
    const k = divergingIndex(v, peak) * 3;
    out[o] = table[k]; out[o + 1] = table[k + 1]; out[o + 2] = table[k + 2];
    out[o + 3] = peak > 0 ? Math.round(255 * Math.min(1, Math.sqrt(Math.abs(v) / peak))) : 0;
  }
}

/** The influence map's caption: whose influence, over how many steps, and the scale. */
export function influenceText(m: Pick<ToPreview.Influence, 'x' | 'y' | 'step' | 'steps' | 'sum' | 'peak' | 'field'>): string {
  return `influence of the input on ${m.field} at (${m.x}, ${m.y}), step ${m.step} (${m.steps} step${m.steps === 1 ? '' : 's'}): sum ${fmt(m.sum, 4)}, largest ${fmt(m.peak, 3)}`;
}

// ------------------------------------------------------------------------------------------------ per-step measures

export interface MeasureSeries {
  readonly steps: number[];
  readonly drift: (number | null)[];
  readonly tv: (number | null)[];
  readonly energy: (number | null)[];
  readonly changeRms: (number | null)[];
  readonly changeMax: (number | null)[];
}

/** Chart series of the per-step measures; null when no frame carries them. Non-finite values become gaps. */
export function measureSeriesOf(frames: readonly ToPreview.Frame[]): MeasureSeries | null {
  if (!frames.some((f) => f.measures)) return null;
  const pick = (k: keyof NonNullable<ToPreview.Frame['measures']>) => frames.map((f) => {
    const v = f.measures?.[k];
    return typeof v === 'number' && Number.isFinite(v) ? v : null;
  });
  return { steps: frames.map((f) => f.step), drift: pick('drift'), tv: pick('tv'), energy: pick('energy'), changeRms: pick('changeRms'), changeMax: pick('changeMax') };
}

// ------------------------------------------------------------------------------------------------ A/B comparison

export interface ComparisonRow {
  readonly metric: string;
  readonly pinned: string;
  readonly now: string;
  readonly delta: string;
  /** Whether the change is for the better (PSNR, SSIM up; TV is neither), or null. */
  readonly better: boolean | null;
}

const signed = (v: number, digits: number) => (v > 0 ? `+${fmt(v, digits)}` : fmt(v, digits));

/** The A/B table: PSNR and SSIM against the clean reference (when there is one) and TV, pinned · now · Δ. */
export function comparisonRows(c: Pick<ToPreview.Comparison, 'pinned' | 'current' | 'delta'>): ComparisonRow[] {
  const show = (v: number | null, digits: number, unit = '') => (v === null ? '–' : `${fmt(v, digits)}${unit}`);
  const rows: ComparisonRow[] = [];
  const add = (metric: string, k: 'psnr' | 'ssim' | 'tv', digits: number, unit: string, up: boolean | null) => {
    const d = c.delta[k];
    rows.push({
      metric, pinned: show(c.pinned[k], digits, unit), now: show(c.current[k], digits, unit),
      delta: d === null || Number.isNaN(d) ? '–' : `${signed(d, digits)}${unit}`,
      better: d === null || d === 0 || Number.isNaN(d) || up === null ? null : up ? d > 0 : d < 0,
    });
  };
  add('PSNR', 'psnr', 4, ' dB', true);
  add('SSIM', 'ssim', 4, '', true);
  add('TV', 'tv', 5, '', null);
  return rows;
}

/** The line under the A/B pictures: how far the current result is from the pinned one. */
export function betweenText(c: Pick<ToPreview.Comparison, 'between' | 'note' | 'step'>): string {
  if (!c.between) return c.note ?? 'not comparable';
  const ssim = Number.isNaN(c.between.ssim) ? 'SSIM n/a (smaller than its 11×11 window)' : `SSIM ${fmt(c.between.ssim, 4)}`;
  return `now (step ${c.step}) against pinned: PSNR ${fmt(c.between.psnr, 4)} dB, ${ssim}`;
}
