// The frequency map: the amplification |G(θ)| of one step over the whole frequency plane (2d) or line (1d), where
// it exceeds 1 (the stable region's edge), and how far the discrete operator's symbol is from the continuous
// equation's along a circle of fixed |θ| (isotropy error by direction) and along the θx axis (accuracy by
// frequency). Weights are exact for linear schemes and frozen at a pixel otherwise (frozen.ts).
//
// API (stable; the panel and `fluxel spectrum` use it):
// - frequencyMap(scheme, opts?: FrequencyMapOptions): FrequencyMap — a plain object of numbers and typed arrays
//   (structured-clone safe); `frequencyMapJson(map)` turns it into plain JSON (number arrays).
// Layout: amplitude[row·width + col], col ↔ θx = axis[col], row ↔ θy = axis[row] (row 0 is θy = −π); 1d: one row.
// G is the spectral radius of the amplification matrix for systems (von Neumann, numerics.md).
// Pure: imports only sibling analysis modules.

import type { CheckedScheme } from '../notation/scheme';
import { frozenStencil, type FrozenOptions } from './frozen';
import { modifiedEquation, type Term } from './modifiedEquation';
import { spectralRadius } from './stabilityEigen';
import { MARGIN, symbol } from './stabilityVonNeumann';

export interface FrequencyMapOptions extends FrozenOptions {
  /** Samples per axis over [−π, π] (odd, so 0 and ±π are included); default 101 in 2d, 501 in 1d (ticks at 0.4π). */
  readonly samples?: number;
  /** |θ| of the isotropy circle; default π/2. */
  readonly radius?: number;
  /** Directions on the circle, over [0, 2π); default 72. */
  readonly directions?: number;
  /** The updated field whose operator symbol is compared; default the first. */
  readonly field?: string;
}

export interface FrequencyMap {
  readonly dims: 1 | 2;
  readonly fields: readonly string[];
  readonly field: string;
  readonly linear: boolean;
  readonly at: { readonly x: number; readonly y: number } | null;
  readonly dt: number;
  readonly spacing: number;
  /** θ values of the columns (and rows in 2d), from −π to π. */
  readonly axis: Float64Array;
  readonly width: number;
  readonly height: number;
  /** |G(θ)|, the spectral radius of the amplification matrix. */
  readonly amplitude: Float64Array;
  /** 1 where |G| > 1 + MARGIN (unstable), else 0. */
  readonly unstable: Uint8Array;
  /** 1 on cells next to the |G| = 1 level (a neighbour on the other side of 1 + MARGIN): the stable region's edge. */
  readonly edge: Uint8Array;
  readonly unstableCount: number;
  readonly maxAmplitude: number;
  readonly worstTheta: readonly number[];
  /** Colour-bar range: [min |G|, max(1, max |G|)]. */
  readonly colourRange: { readonly lo: number; readonly hi: number };
  /** Relative error |L̂(θ) − P(θ)|/|P(θ)| of the discrete operator L̂ = (G_ii − 1)/dt against the continuous symbol P. */
  readonly isotropy: {
    readonly radius: number;
    /** Direction φ of θ = radius·(cos φ, sin φ) (1d: 0 and π). */
    readonly angles: Float64Array;
    readonly relError: Float64Array;
    readonly max: number;
    readonly min: number;
    /** max − min over directions: 0 for a direction-independent error. */
    readonly spread: number;
  } | null;
  readonly accuracy: { readonly theta: Float64Array; readonly relError: Float64Array } | null;
  /** The continuous equation the symbol is compared with (the modified equation's principal part). */
  readonly equation: string;
}

/** The continuous symbol Σ c·(iθx/h)^i (iθy/h)^j of the principal terms. */
function continuousSymbol(terms: readonly Term[], tx: number, ty: number, h: number): [number, number] {
  let re = 0, im = 0;
  for (const t of terms) {
    const mag = t.coef * Math.pow(tx / h, t.i) * Math.pow(ty / h, t.j);
    // i^(i+j): 1, i, −1, −i.
    switch ((t.i + t.j) % 4) {
      case 0: re += mag; break;
      case 1: im += mag; break;
      case 2: re -= mag; break;
      default: im -= mag; break;
    }
  }
  return [re, im];
}

export function frequencyMap(scheme: CheckedScheme, opts: FrequencyMapOptions = {}): FrequencyMap {
  const dt = opts.dt ?? scheme.dt;
  const w = frozenStencil(scheme, { ...opts, dt });
  const dims = scheme.dims;
  let n = Math.max(3, Math.floor(opts.samples ?? (dims === 2 ? 101 : 501)));
  if (n % 2 === 0) n += 1;
  const axis = new Float64Array(n);
  for (let k = 0; k < n; k++) axis[k] = -Math.PI + (2 * Math.PI * k) / (n - 1);
  const width = n, height = dims === 2 ? n : 1;
  const amplitude = new Float64Array(width * height);
  const unstable = new Uint8Array(width * height);
  let maxA = -Infinity, minA = Infinity, worst: number[] = [0, 0];
  let count = 0;
  for (let r = 0; r < height; r++) {
    for (let c = 0; c < width; c++) {
      const th = dims === 2 ? [axis[c], axis[r]] : [axis[c]];
      const a = w.n === 0 ? 1 : spectralRadius(symbol(w, th));
      const k = r * width + c;
      amplitude[k] = a;
      if (a > 1 + MARGIN) { unstable[k] = 1; count++; }
      if (a > maxA) { maxA = a; worst = th; }
      if (a < minA) minA = a;
    }
  }
  const edge = new Uint8Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) {
    const k = r * width + c;
    const nb = [[c - 1, r], [c + 1, r], [c, r - 1], [c, r + 1]];
    for (const [x, y] of nb) {
      if (x < 0 || y < 0 || x >= width || y >= height) continue;
      if (unstable[y * width + x] !== unstable[k]) { edge[k] = 1; break; }
    }
  }

  const fi = Math.max(0, opts.field ? w.fields.indexOf(opts.field) : 0);
  const field = w.fields[fi] ?? '';
  let isotropy: FrequencyMap['isotropy'] = null;
  let accuracy: FrequencyMap['accuracy'] = null;
  let equation = '';
  if (w.n > 0) {
    const me = modifiedEquation(scheme, { ...opts, dt });
    const eq = me.fields[fi];
    equation = eq.text;
    const principal = eq.principal;
    const block = { n: 1, entries: w.entries.filter((e) => e.i === fi && e.j === fi).map((e) => ({ ...e, i: 0, j: 0 })) };
    const relAt = (th: number[]): number => {
      const g = symbol(block, th);
      const lre = (g.re[0] - 1) / dt, lim = g.im[0] / dt;
      const [pre, pim] = continuousSymbol(principal, th[0], th[1] ?? 0, w.spacing);
      const den = Math.hypot(pre, pim);
      return den > 0 ? Math.hypot(lre - pre, lim - pim) / den : Number.NaN;
    };
    const radius = opts.radius ?? Math.PI / 2;
    const m = dims === 2 ? Math.max(4, Math.floor(opts.directions ?? 72)) : 2;
    const angles = new Float64Array(m);
    const rel = new Float64Array(m);
    let mx = -Infinity, mn = Infinity;
    for (let k = 0; k < m; k++) {
      const phi = (2 * Math.PI * k) / m;
      angles[k] = phi;
      rel[k] = relAt(dims === 2 ? [radius * Math.cos(phi), radius * Math.sin(phi)] : [radius * Math.cos(phi)]);
      if (rel[k] > mx) mx = rel[k];
      if (rel[k] < mn) mn = rel[k];
    }
    // A field whose own block has no principal part (it only couples to others, like u_t = v) has no symbol to compare.
    isotropy = mx >= mn ? { radius, angles, relError: rel, max: mx, min: mn, spread: mx - mn } : null;
    const steps = 64;
    const theta = new Float64Array(steps);
    const relErr = new Float64Array(steps);
    for (let k = 0; k < steps; k++) {
      theta[k] = (Math.PI * (k + 1)) / steps;
      relErr[k] = relAt(dims === 2 ? [theta[k], 0] : [theta[k]]);
    }
    accuracy = isotropy ? { theta, relError: relErr } : null;
  }
  return {
    dims, fields: w.fields, field, linear: w.linear, at: w.linear ? null : { x: w.x, y: w.y }, dt, spacing: w.spacing,
    axis, width, height, amplitude, unstable, edge, unstableCount: count, maxAmplitude: maxA, worstTheta: worst,
    colourRange: { lo: minA, hi: Math.max(1, maxA) }, isotropy, accuracy, equation,
  };
}

/** The map as plain JSON-ready values (typed arrays become number arrays). */
export function frequencyMapJson(m: FrequencyMap): Record<string, unknown> {
  const arr = (a: ArrayLike<number>) => Array.from(a, (v) => (Number.isFinite(v) ? v : null));
  return {
    dims: m.dims, fields: m.fields, field: m.field, linear: m.linear, at: m.at, dt: m.dt, spacing: m.spacing,
    axis: arr(m.axis), width: m.width, height: m.height, amplitude: arr(m.amplitude), unstable: arr(m.unstable), edge: arr(m.edge),
    unstableCount: m.unstableCount, maxAmplitude: m.maxAmplitude, worstTheta: m.worstTheta, colourRange: m.colourRange,
    isotropy: m.isotropy && { ...m.isotropy, angles: arr(m.isotropy.angles), relError: arr(m.isotropy.relError) },
    accuracy: m.accuracy && { theta: arr(m.accuracy.theta), relError: arr(m.accuracy.relError) },
    equation: m.equation,
  };
}

export interface DtAmplitudeMap {
  /** θ of the columns (−π..π) and dt of the rows (row 0 the smallest dt). */
  readonly axis: Float64Array;
  readonly dts: Float64Array;
  readonly width: number;
  readonly height: number;
  readonly amplitude: Float64Array;
  readonly unstable: Uint8Array;
  readonly edge: Uint8Array;
  readonly colourRange: { readonly lo: number; readonly hi: number };
}

/**
 * For 1d schemes: |G(θ)| over θ (columns) and dt (rows), so the |G| = 1 edge shows which dt each frequency
 * tolerates; the weights are re-evaluated at every dt (frozen at the same state and pixel as frequencyMap).
 */
export function amplitudeOverDt(scheme: CheckedScheme, dts: readonly number[], opts: FrequencyMapOptions = {}): DtAmplitudeMap {
  let n = Math.max(3, Math.floor(opts.samples ?? 201));
  if (n % 2 === 0) n += 1;
  const axis = new Float64Array(n);
  for (let k = 0; k < n; k++) axis[k] = -Math.PI + (2 * Math.PI * k) / (n - 1);
  const width = n, height = dts.length;
  const amplitude = new Float64Array(width * height);
  const unstable = new Uint8Array(width * height);
  let lo = Infinity, hi = -Infinity;
  dts.forEach((dt, r) => {
    const w = frozenStencil(scheme, { ...opts, dt });
    for (let c = 0; c < width; c++) {
      const th = scheme.dims === 2 ? [axis[c], 0] : [axis[c]];
      const a = w.n === 0 ? 1 : spectralRadius(symbol(w, th));
      amplitude[r * width + c] = a;
      if (a > 1 + MARGIN) unstable[r * width + c] = 1;
      lo = Math.min(lo, a);
      hi = Math.max(hi, a);
    }
  });
  const edge = new Uint8Array(width * height);
  for (let r = 0; r < height; r++) for (let c = 0; c < width; c++) {
    const k = r * width + c;
    for (const [x, y] of [[c - 1, r], [c + 1, r], [c, r - 1], [c, r + 1]]) {
      if (x < 0 || y < 0 || x >= width || y >= height) continue;
      if (unstable[y * width + x] !== unstable[k]) { edge[k] = 1; break; }
    }
  }
  return { axis, dts: Float64Array.from(dts), width, height, amplitude, unstable, edge, colourRange: { lo, hi: Math.max(1, hi) } };
}
