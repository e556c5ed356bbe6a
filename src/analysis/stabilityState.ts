// Field states for the analysis: grid readers with the boundary rules of numerics.md, the initial state
// (declared initial values or a default test scene), random states for structure tests, and field ranges.
// Pure: imports only src/notation types and linearise.ts; never Node, vscode or the DOM.

import type { Boundary, CheckedScheme } from '../notation/scheme';
import { SchemeEvaluator, type FieldReader } from './linearise';
import type { Interval } from './stabilityBounds';

/** Current values of every field, indexed like `scheme.fields`; pixel (x, y) is at y·width + x. */
export interface FieldState {
  readonly width: number;
  readonly height: number;
  readonly fields: readonly ArrayLike<number>[];
  /** Time of the state (for schemes reading `t`); 0 by default. */
  readonly t?: number;
}

export interface GreyImage {
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array | Float64Array;
}

/** Index of the grid cell that ghost index i reads; −1 for a fixed value. Folds repeatedly like scipy's reflect. */
export function ghostIndex(i: number, n: number, b: Boundary): number {
  if (i >= 0 && i < n) return i;
  if (b.kind === 'fixed') return -1;
  if (b.kind === 'periodic') return ((i % n) + n) % n;
  const m = ((i % (2 * n)) + 2 * n) % (2 * n);
  return m < n ? m : 2 * n - 1 - m;
}

export function gridReader(scheme: CheckedScheme, state: FieldState): FieldReader {
  return (f, x, y) => {
    const b = scheme.fields[f].boundary;
    const gx = ghostIndex(x, state.width, b);
    const gy = scheme.dims === 2 ? ghostIndex(y, state.height, b) : 0;
    if (gx < 0 || gy < 0) return b.kind === 'fixed' ? b.value : 0;
    return state.fields[f][gy * state.width + gx];
  };
}

/** A deterministic pseudo-random value in [0, 1) for (seed, field, x, y); integer hashing, no state. */
export function hash01(seed: number, f: number, x: number, y: number): number {
  let h = (seed * 374761393 + f * 668265263 + x * 2246822519 + y * 3266489917) >>> 0;
  h = Math.imul(h ^ (h >>> 15), 2246822519) >>> 0;
  h = Math.imul(h ^ (h >>> 13), 3266489917) >>> 0;
  h = (h ^ (h >>> 16)) >>> 0;
  return h / 4294967296;
}

/**
 * A reader on the unbounded grid: random values in `ranges` for updated and image fields; fields with a
 * declared initial expression and no update keep that expression's value (they are coefficients or sources).
 */
export function randomReader(scheme: CheckedScheme, seed: number, ranges?: readonly Interval[]): FieldReader {
  const initEval = new SchemeEvaluator(scheme);
  const noRead: FieldReader = () => NaN;
  return (f, x, y) => {
    const info = scheme.fields[f];
    if (!info.updated && info.init.kind === 'expr') return initEval.evaluatePlain(info.init.expr, x, y, noRead);
    const r = ranges?.[f];
    const lo = r && Number.isFinite(r[0]) ? r[0] : 0;
    const hi = r && Number.isFinite(r[1]) ? r[1] : 1;
    return lo + (hi - lo) * hash01(seed, f, x, y);
  };
}

/** Default test scene: a gentle ramp, a bright disc with a sharp rim, a dark bar and a flat patch, in [0, 1]. */
export function defaultScene(width: number, height: number): Float64Array {
  const out = new Float64Array(width * height);
  for (let y = 0; y < height; y++) {
    for (let x = 0; x < width; x++) {
      let v = 0.2 + (0.3 * x) / Math.max(1, width - 1);
      const dx = x - width / 2;
      const dy = height > 1 ? y - height / 2 : 0;
      if (dx * dx + dy * dy < (width / 5) * (width / 5)) v += 0.45;
      if (x >= Math.floor((3 * width) / 4) && x < Math.floor((3 * width) / 4) + 2) v = 0.05;
      if (height > 1 && y < height / 4 && x < width / 4) v = 0.5;
      out[y * width + x] = Math.min(1, Math.max(0, v));
    }
  }
  return out;
}

/**
 * The initial state: `image` fields take the given image (or the default scene), expression fields are
 * evaluated per pixel. A 1-d scheme on a 2-d image uses its middle row.
 */
export function initialState(scheme: CheckedScheme, image?: GreyImage): FieldState {
  const width = image?.width ?? 64;
  const height = scheme.dims === 1 ? 1 : image?.height ?? 64;
  let picture: ArrayLike<number>;
  if (image) {
    if (scheme.dims === 1 && image.height > 1) {
      const row = Math.floor(image.height / 2);
      picture = image.data.subarray(row * image.width, (row + 1) * image.width);
    } else picture = image.data;
  } else picture = defaultScene(width, height);
  const ev = new SchemeEvaluator(scheme);
  const noRead: FieldReader = () => NaN;
  const fields = scheme.fields.map((f) => {
    if (f.init.kind === 'image') {
      // A named input (a mask, a guide) is not known to the analysis: a checkerboard of 0 and 1 puts both ends of
      // the [0, 1] data range next to each other, so the frozen coefficients take their extremes somewhere.
      if (f.init.input !== null) return Float64Array.from({ length: width * height }, (_, i) => ((i % width) + Math.floor(i / width)) % 2);
      // Every channel of the main picture is taken as the grey picture (a colour file's channels are not at hand here);
      // alpha is 1, as for files without alpha.
      if (f.init.channel === 'alpha') return new Float64Array(width * height).fill(1);
      return Float64Array.from(picture);
    }
    const a = new Float64Array(width * height);
    for (let y = 0; y < height; y++) for (let x = 0; x < width; x++) a[y * width + x] = ev.evaluatePlain(f.init.expr, x, y, noRead);
    return a;
  });
  return { width, height, fields, t: 0 };
}

/** Range of each field over a state, widened by its fixed boundary value; image fields at least [0, 1] without an image. */
export function fieldRanges(scheme: CheckedScheme, state: FieldState, imageGiven: boolean): Interval[] {
  return scheme.fields.map((f, i) => {
    let lo = Infinity;
    let hi = -Infinity;
    const a = state.fields[i];
    for (let k = 0; k < a.length; k++) {
      if (a[k] < lo) lo = a[k];
      if (a[k] > hi) hi = a[k];
    }
    if (f.init.kind === 'image' && !imageGiven) { lo = Math.min(lo, 0); hi = Math.max(hi, 1); }
    if (f.boundary.kind === 'fixed') { lo = Math.min(lo, f.boundary.value); hi = Math.max(hi, f.boundary.value); }
    if (!(lo <= hi)) return [-Infinity, Infinity] as Interval;
    return [lo, hi] as Interval;
  });
}
