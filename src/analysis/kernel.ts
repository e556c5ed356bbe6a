// Effective kernel weights: ∂u'/∂u[n] at one pixel of a state (frozen diffusivities, or fully linearised),
// and the impulse response of linear schemes with its spread compared with the heat kernel's √(2t).
// Pure: imports only src/notation types and sibling analysis modules; never Node, vscode or the DOM.

import type { CheckedScheme } from '../notation/scheme';
import { SchemeEvaluator, decodeKey } from './linearise';
import { linearStencil } from './stability';
import { gridReader, type FieldState } from './stabilityState';

export type { FieldState } from './stabilityState';

export interface KernelOptions {
  /** Full derivative (diffusivities differentiated too) instead of frozen diffusivities. */
  readonly linearised?: boolean;
  /** The updated field whose new value is examined; default: the first update. */
  readonly field?: string;
}

export interface KernelWeights {
  readonly field: string;
  readonly x: number;
  readonly y: number;
  /** The new value at (x, y). */
  readonly value: number;
  /** Half-width of `grid`: offsets −radius..radius per axis. */
  readonly radius: number;
  /** Weights on the field's own old values by offset, row-major: grid[(dy + r)·(2r + 1) + (dx + r)] (1d: one row). */
  readonly grid: Float64Array;
  /** Every non-zero weight, over all fields (a primed read brings in the other fields' stencils). */
  readonly entries: readonly { readonly field: string; readonly offset: readonly number[]; readonly weight: number }[];
  /** Σ of all weights; 1 for schemes that keep constants constant. */
  readonly sum: number;
  readonly centre: number;
  readonly negativeCentre: boolean;
}

/**
 * The weights of `field'` at pixel (x, y). Offsets are relative to the pixel as written in the scheme; near the
 * border a ghost offset stands for the cell the boundary rule maps it to.
 */
export function kernelAt(scheme: CheckedScheme, state: FieldState, x: number, y: number, opts: KernelOptions = {}): KernelWeights {
  const field = opts.field ?? scheme.updates[0]?.field;
  if (field === undefined) throw new Error('the scheme has no update');
  const ev = new SchemeEvaluator(scheme);
  const self = ev.fieldIndexOf(field);
  const r = ev.evaluateUpdate(field, x, y, {
    read: gridReader(scheme, state), dt: scheme.dt, t: state.t ?? 0,
    diffusivity: { kind: opts.linearised ? 'full' : 'frozen' },
  });
  const entries: { field: string; offset: number[]; weight: number }[] = [];
  let radius = 0;
  let sum = 0;
  let centre = 0;
  for (const [k, w] of r.grad) {
    if (w === 0) continue;
    const { field: f, dx, dy } = decodeKey(k);
    entries.push({ field: scheme.fields[f].name, offset: scheme.dims === 2 ? [dx, dy] : [dx], weight: w });
    sum += w;
    if (f === self) {
      radius = Math.max(radius, Math.abs(dx), Math.abs(dy));
      if (dx === 0 && dy === 0) centre = w;
    }
  }
  const size = 2 * radius + 1;
  const grid = new Float64Array(scheme.dims === 2 ? size * size : size);
  for (const [k, w] of r.grad) {
    const { field: f, dx, dy } = decodeKey(k);
    if (f !== self) continue;
    grid[(scheme.dims === 2 ? (dy + radius) * size : 0) + dx + radius] += w;
  }
  entries.sort((a, b) => (a.field < b.field ? -1 : a.field > b.field ? 1 : 0) || (a.offset[1] ?? 0) - (b.offset[1] ?? 0) || a.offset[0] - b.offset[0]);
  return { field, x, y, value: r.value, radius, grid, entries, sum, centre, negativeCentre: centre < 0 };
}

export interface ImpulseResponse {
  readonly field: string;
  readonly steps: number;
  /** Elapsed time steps·dt. */
  readonly t: number;
  /** Response on a (2R+1)^dims grid centred on the impulse, row-major like KernelWeights.grid. */
  readonly radius: number;
  readonly grid: Float64Array;
  readonly sum: number;
  /** Centre of mass and variance per axis, in grid cells. */
  readonly mean: readonly number[];
  readonly variance: readonly number[];
  /** Equivalent Gaussian width per axis in the scheme's length units, √variance·h. */
  readonly sigma: readonly number[];
  /** Width √(2t) of the heat kernel for u_t = Δu after time t, for comparison. */
  readonly heatSigma: number;
  /** True when the response reached the grid's edge (capped at maxRadius) and mass may have been lost. */
  readonly truncated: boolean;
}

/** The most cell updates (steps × cells × stencil entries) an impulse response may take: about a second. */
export const MAX_IMPULSE_WORK = 1e9;

/**
 * Applies a linear constant-coefficient scheme `steps` times to a unit impulse in `field` (other fields zero)
 * on an unbounded grid, exactly, with the extracted stencil weights. Returns null for other schemes.
 */
export function impulseResponse(scheme: CheckedScheme, steps: number, opts: { field?: string; maxRadius?: number; maxWork?: number } = {}): ImpulseResponse | null {
  const w = linearStencil(scheme);
  if (!w) return null;
  const updated = scheme.fields.filter((f) => f.updated).map((f) => f.name);
  const field = opts.field ?? scheme.updates[0]?.field ?? updated[0];
  const fi = updated.indexOf(field);
  if (fi < 0) return null;
  let reach = 0;
  for (const e of w.entries) reach = Math.max(reach, Math.abs(e.dx), Math.abs(e.dy));
  const R = Math.min(reach * steps, opts.maxRadius ?? 128);
  const size = 2 * R + 1;
  const ny = scheme.dims === 2 ? size : 1;
  const cells = size * ny;
  // Each step visits every cell once per stencil entry: a huge step count (`steps 1e9`) would keep the caller (the
  // live run's analysis thread, `fluxel kernel`) busy for days, so it is refused with the reason instead.
  const work = steps * cells * w.entries.length;
  const maxWork = opts.maxWork ?? MAX_IMPULSE_WORK;
  if (!(work <= maxWork)) {
    throw new Error(`the impulse response of ${steps} steps would take about ${work.toExponential(1)} operations, more than the ${maxWork.toExponential(0)} allowed; ask for fewer steps (kernel --step N)`);
  }
  let cur = updated.map(() => new Float64Array(cells));
  cur[fi][(scheme.dims === 2 ? R * size : 0) + R] = 1;
  for (let s = 0; s < steps; s++) {
    const next = updated.map(() => new Float64Array(cells));
    for (const e of w.entries) {
      const src = cur[e.j];
      const dst = next[e.i];
      // new(x) += w · old(x + o); cells outside the grid are zero.
      for (let y = 0; y < ny; y++) {
        const sy = y + e.dy;
        if (sy < 0 || sy >= ny) continue;
        for (let x = 0; x < size; x++) {
          const sx = x + e.dx;
          if (sx < 0 || sx >= size) continue;
          dst[y * size + x] += e.w * src[sy * size + sx];
        }
      }
    }
    cur = next;
  }
  const g = cur[fi];
  let sum = 0;
  const m = [0, 0];
  for (let y = 0; y < ny; y++) for (let x = 0; x < size; x++) {
    const v = g[y * size + x];
    sum += v;
    m[0] += v * (x - R);
    m[1] += v * (scheme.dims === 2 ? y - R : 0);
  }
  const mean = m.map((v) => v / sum);
  const va = [0, 0];
  for (let y = 0; y < ny; y++) for (let x = 0; x < size; x++) {
    const v = g[y * size + x];
    va[0] += v * (x - R - mean[0]) ** 2;
    va[1] += v * (scheme.dims === 2 ? (y - R - mean[1]) ** 2 : 0);
  }
  const dims = scheme.dims;
  const variance = va.slice(0, dims).map((v) => v / sum);
  const t = steps * scheme.dt;
  return {
    field, steps, t, radius: R, grid: g, sum,
    mean: mean.slice(0, dims), variance,
    sigma: variance.map((v) => Math.sqrt(v) * scheme.spacing),
    heatSigma: Math.sqrt(2 * t),
    truncated: R < reach * steps,
  };
}
