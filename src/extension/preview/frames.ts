// Pure helpers of the live run's host side: how often to record frames, box-downsampling of a field to the preview
// size, row extraction, and the text that writes knob values back into a scheme. No vscode, no Node, no DOM,
// so the session and the unit tests use them directly.

import type { Program } from '../../notation/ast';

/** Largest number of frames a run records for scrubbing (step 0 and the last step always included). */
export const DEFAULT_MAX_FRAMES = 120;
/** Full-resolution values (all recorded frames, all fields) the host keeps for the weights inspector. */
export const DEFAULT_VALUE_BUDGET = 48 * 1024 * 1024;

/**
 * The recording stride: every step when that fits both the frame cap and the memory budget, else the smallest
 * stride that does. Returns ≥ 1.
 */
export function frameStride(steps: number, pixels: number, fields: number, maxFrames = DEFAULT_MAX_FRAMES, budget = DEFAULT_VALUE_BUDGET): number {
  if (steps <= 1) return 1;
  const perFrame = Math.max(1, pixels * Math.max(1, fields));
  const framesByBudget = Math.max(2, Math.floor(budget / perFrame));
  const frames = Math.max(2, Math.min(maxFrames, framesByBudget));
  // frames counts step 0 and the last step; the stride covers the steps in between.
  return Math.max(1, Math.ceil(steps / (frames - 1)));
}

/** The integer shrink factor that brings the longer side to at most `maxSize` (1 when it already fits). */
export function shrinkFactor(width: number, height: number, maxSize: number): number {
  const side = Math.max(width, height);
  return side <= maxSize ? 1 : Math.ceil(side / Math.max(1, maxSize));
}

export interface Plane {
  readonly width: number;
  readonly height: number;
  readonly data: ArrayLike<number>;
}

/**
 * Box-average downsampling by an integer factor: each output pixel is the mean of the k×k block it covers (blocks
 * at the right and bottom edges are smaller). Factor 1 copies into a Float32Array. Non-finite values propagate,
 * so a blow-up stays visible in the preview.
 */
export function downsample(src: Plane, k: number): { width: number; height: number; data: Float32Array } {
  const { width, height, data } = src;
  if (k <= 1) return { width, height, data: Float32Array.from(data as ArrayLike<number>) };
  const w = Math.ceil(width / k);
  const h = Math.ceil(height / k);
  const out = new Float32Array(w * h);
  const acc = new Float64Array(w);
  const cnt = new Float64Array(w);
  for (let oy = 0; oy < h; oy++) {
    acc.fill(0);
    cnt.fill(0);
    const y1 = Math.min(height, (oy + 1) * k);
    for (let y = oy * k; y < y1; y++) {
      const row = y * width;
      for (let x = 0; x < width; x++) {
        const o = (x / k) | 0;
        acc[o] += data[row + x];
        cnt[o] += 1;
      }
    }
    for (let o = 0; o < w; o++) out[oy * w + o] = acc[o] / cnt[o];
  }
  return { width: w, height: h, data: out };
}

/** Row `row` of a plane as a Float32Array (clamped to the plane). */
export function rowOf(src: Plane, row: number): Float32Array {
  const y = Math.min(Math.max(0, row), src.height - 1);
  const out = new Float32Array(src.width);
  for (let x = 0; x < src.width; x++) out[x] = src.data[y * src.width + x];
  return out;
}

/** A number as the shortest text that reads back within 6 significant digits, never in a form the lexer refuses. */
export function knobText(v: number): string {
  const short = Number(v.toPrecision(6));
  const s = String(short);
  // The lexer reads 1e-7 but not a leading minus inside a declaration's number; knobs from ranges are ≥ 0 in practice.
  return s;
}

export interface OffsetEdit {
  readonly start: number;
  readonly end: number;
  readonly newText: string;
}

/**
 * The edits that write knob values into the file: the number after `param NAME =` for each named param and the
 * number after `step dt =`. Values equal to the written ones produce no edit. Offsets refer to the parsed text.
 */
export function knobEdits(program: Program, values: Readonly<Record<string, number>>, dt: number | null): OffsetEdit[] {
  const edits: OffsetEdit[] = [];
  for (const d of program.decls) {
    if (d.kind === 'param' && Object.prototype.hasOwnProperty.call(values, d.name.name)) {
      const v = values[d.name.name];
      if (Number.isFinite(v) && v !== d.value.value) edits.push({ start: d.value.range.start.offset, end: d.value.range.end.offset, newText: knobText(v) });
    } else if (d.kind === 'step' && dt !== null && Number.isFinite(dt) && dt !== d.value.value) {
      edits.push({ start: d.value.range.start.offset, end: d.value.range.end.offset, newText: knobText(dt) });
    }
  }
  return edits.sort((a, b) => a.start - b.start);
}
