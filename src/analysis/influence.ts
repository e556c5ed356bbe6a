// The influence map: for a picked pixel p of an updated field after N steps, how much each input pixel q of each
// updated field influences it — the row of p in the product J_{N−1}···J_1 J_0 of the per-step weight matrices
// along the actual trajectory, computed backwards (an adjoint sweep) without forming any matrix:
//   λ_N = e_p;  λ_k[j, q] = Σ_{i, x} λ_{k+1}[i, x] · ∂u_{k+1}[i, x]/∂u_k[j, q],
// visiting only pixels x where λ_{k+1} is non-zero and scattering each one's stencil weights (evaluated at the
// state u_k) through the boundary rule (ghost offsets fold onto the cells they read; fixed values carry none).
// Weights are frozen-coefficient (mode 'frozen', the default; as `fluxel kernel` shows them) or the exact
// derivatives (mode 'full': then λ_0 is the gradient ∂u_N[p]/∂u_0, the true sensitivity of a nonlinear scheme).
// For linear schemes both equal the N-step impulse response read backwards (the adjoint's row).
//
// API (stable; the panel and `fluxel kernel --influence N` use it):
// - influenceMap(scheme, states, target, opts): InfluenceMap — `states[k]` is the state before step k+1
//   (u_0 .. u_{N−1}, N = states.length); src/engine/trajectory.ts records them from a run.
// Pure: imports only the notation types and sibling analysis modules.

import type { CheckedScheme } from '../notation/scheme';
import { SchemeEvaluator, decodeKey } from './linearise';
import { ghostIndex, gridReader, type FieldState } from './stabilityState';

export interface InfluenceTarget {
  readonly x: number;
  readonly y: number;
  /** The updated field at the picked pixel; default the first update. */
  readonly field?: string;
}

export interface InfluenceOptions {
  readonly mode?: 'frozen' | 'full';
  readonly params?: Readonly<Record<string, number>>;
  /** dt used when evaluating the weights; default the scheme's. */
  readonly dt?: number;
}

export interface InfluenceMap {
  readonly field: string;
  readonly x: number;
  readonly y: number;
  readonly steps: number;
  readonly mode: 'frozen' | 'full';
  readonly width: number;
  readonly height: number;
  /** Per updated field (by name): influence of its input values on the picked value, row-major width × height. */
  readonly maps: Readonly<Record<string, Float64Array>>;
  /** Σ over all fields and pixels (1 for schemes that keep constants, when fixed boundaries are not reached). */
  readonly sum: number;
  /** Largest |weight| and the bounding box of the non-zero weights (over all fields). */
  readonly maxAbs: number;
  readonly box: { readonly x0: number; readonly y0: number; readonly x1: number; readonly y1: number } | null;
  /** Evaluated stencils (pixels × steps), for cost reports. */
  readonly evaluations: number;
}

export function influenceMap(scheme: CheckedScheme, states: readonly FieldState[], target: InfluenceTarget, opts: InfluenceOptions = {}): InfluenceMap {
  const N = states.length;
  const width = states[0]?.width ?? 0;
  const height = states[0]?.height ?? 0;
  const updated = scheme.fields.filter((f) => f.updated);
  const field = target.field ?? scheme.updates[0]?.field ?? updated[0]?.name;
  const fpos = updated.findIndex((f) => f.name === field);
  if (fpos < 0) throw new Error(`'${field}' is not an updated field`);
  if (!(target.x >= 0 && target.x < width && target.y >= 0 && target.y < height) && N > 0) {
    throw new Error(`pixel (${target.x}, ${target.y}) is outside the ${width}×${height} grid`);
  }
  const size = width * height;
  const slot = new Map<number, number>(); // scheme field index → position among updated fields
  updated.forEach((f, k) => slot.set(f.index, k));
  const ev = new SchemeEvaluator(scheme, opts.params ? new Map(Object.entries(opts.params)) : undefined);
  const dt = opts.dt ?? scheme.dt;
  const mode = opts.mode ?? 'frozen';
  let lam = updated.map(() => new Float64Array(size));
  if (N === 0) {
    const out = updated.map(() => new Float64Array(Math.max(1, size)));
    out[fpos][target.y * width + target.x] = 1;
    return finish(scheme, updated.map((f) => f.name), out, field, target, 0, mode, Math.max(1, width), Math.max(1, height), 0);
  }
  lam[fpos][target.y * width + target.x] = 1;
  let evaluations = 0;
  for (let k = N - 1; k >= 0; k--) {
    const state = states[k];
    const read = gridReader(scheme, state);
    const next = updated.map(() => new Float64Array(size));
    for (let i = 0; i < updated.length; i++) {
      const li = lam[i];
      for (let p = 0; p < size; p++) {
        const a = li[p];
        if (a === 0) continue;
        const x = p % width, y = (p - x) / width;
        const r = ev.evaluateUpdate(updated[i].name, x, y, { read, dt, t: state.t ?? k * dt, diffusivity: { kind: mode } });
        evaluations++;
        for (const [key, wgt] of r.grad) {
          if (wgt === 0) continue;
          const { field: f, dx, dy } = decodeKey(key);
          const j = slot.get(f);
          if (j === undefined) continue; // fields without an update are constants
          const b = scheme.fields[f].boundary;
          const gx = ghostIndex(x + dx, width, b);
          const gy = scheme.dims === 2 ? ghostIndex(y + dy, height, b) : 0;
          if (gx < 0 || gy < 0) continue; // a fixed boundary value is no input pixel
          next[j][gy * width + gx] += a * wgt;
        }
      }
    }
    lam = next;
  }
  return finish(scheme, updated.map((f) => f.name), lam, field, target, N, mode, width, height, evaluations);
}

function finish(
  _scheme: CheckedScheme, names: string[], lam: Float64Array[], field: string, target: InfluenceTarget, steps: number,
  mode: 'frozen' | 'full', width: number, height: number, evaluations: number,
): InfluenceMap {
  const maps: Record<string, Float64Array> = {};
  let sum = 0, maxAbs = 0;
  let x0 = Infinity, y0 = Infinity, x1 = -Infinity, y1 = -Infinity;
  names.forEach((n, k) => {
    maps[n] = lam[k];
    const a = lam[k];
    for (let p = 0; p < a.length; p++) {
      const v = a[p];
      if (v === 0) continue;
      sum += v;
      maxAbs = Math.max(maxAbs, Math.abs(v));
      const x = p % width, y = (p - x) / width;
      x0 = Math.min(x0, x); x1 = Math.max(x1, x); y0 = Math.min(y0, y); y1 = Math.max(y1, y);
    }
  });
  return {
    field, x: target.x, y: target.y, steps, mode, width, height, maps, sum, maxAbs,
    box: x0 <= x1 ? { x0, y0, x1, y1 } : null, evaluations,
  };
}
