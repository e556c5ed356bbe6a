// Frozen-coefficient weights of a whole step at one pixel, over every updated field (a matrix stencil), with the
// spacing h and the step dt overridable so callers can refine them. Exact for linear constant-coefficient schemes
// (the weights do not depend on the state); for other schemes the weights of the state and pixel given, or of a
// flat state (the fields' initial values at the pixel) when no state is given.
// Shared by modifiedEquation.ts, spectrum.ts and influence.ts. Pure: never Node, vscode or the DOM.

import type { CheckedScheme } from '../notation/scheme';
import { SchemeEvaluator, decodeKey, type FieldReader } from './linearise';
import { linearStencil } from './stability';
import { gridReader, type FieldState } from './stabilityState';
import type { MatrixEntry, MatrixStencil } from './stabilityVonNeumann';

export interface FrozenOptions {
  /** A state to freeze the coefficients at (e.g. the run's state at a step); default a flat state. */
  readonly state?: FieldState;
  /** The pixel; default the centre of the state (32, 32 for the flat state, on the default 64×64 grid). */
  readonly x?: number;
  readonly y?: number;
  /** Overrides of the scheme's dt and spacing h. */
  readonly dt?: number;
  readonly spacing?: number;
  /** `frozen` (default): diffusivity values frozen, as `fluxel kernel` shows; `full`: the exact Jacobian row. */
  readonly mode?: 'frozen' | 'full';
  /** Parameter overrides by name. */
  readonly params?: Readonly<Record<string, number>>;
}

export interface FrozenStencil extends MatrixStencil {
  /** Names of the updated fields, indexed like the entries' i and j. */
  readonly fields: readonly string[];
  /** True when the weights do not depend on the state (linear constant-coefficient scheme). */
  readonly linear: boolean;
  readonly x: number;
  readonly y: number;
  readonly dt: number;
  readonly spacing: number;
}

/** Image fields read 0.5 and updated fields their initial value at (x0, y0); fields without an update keep their own per-pixel values. */
export function flatReader(scheme: CheckedScheme, x0: number, y0: number): FieldReader {
  const ev = new SchemeEvaluator(scheme);
  const noRead: FieldReader = () => NaN;
  const atPixel = scheme.fields.map((f) => (f.init.kind === 'image' ? 0.5 : ev.evaluatePlain(f.init.expr, x0, y0, noRead)));
  return (f, x, y) => {
    const info = scheme.fields[f];
    if (!info.updated && info.init.kind === 'expr') return ev.evaluatePlain(info.init.expr, x, y, noRead);
    return atPixel[f];
  };
}

/** The scheme with another spacing (the evaluator reads h from it). */
export function withSpacing(scheme: CheckedScheme, spacing: number): CheckedScheme {
  return spacing === scheme.spacing ? scheme : { ...scheme, spacing };
}

const linearCache = new WeakMap<CheckedScheme, boolean>();

export function isLinearScheme(scheme: CheckedScheme): boolean {
  let v = linearCache.get(scheme);
  if (v === undefined) {
    v = linearStencil(scheme) !== null;
    linearCache.set(scheme, v);
  }
  return v;
}

/** Weights ∂(new value of updated field i at the pixel)/∂(old value of updated field j at offset (dx, dy)). */
export function frozenStencil(scheme: CheckedScheme, opts: FrozenOptions = {}): FrozenStencil {
  const spacing = opts.spacing ?? scheme.spacing;
  const dt = opts.dt ?? scheme.dt;
  const s = withSpacing(scheme, spacing);
  const params = opts.params ? new Map(Object.entries(opts.params)) : undefined;
  const ev = new SchemeEvaluator(s, params);
  const state = opts.state;
  const x = opts.x ?? (state ? Math.floor(state.width / 2) : 32);
  const y = opts.y ?? (state ? Math.floor(state.height / 2) : scheme.dims === 2 ? 32 : 0);
  const read = state ? gridReader(s, state) : flatReader(s, x, y);
  const names: string[] = [];
  const index = new Map<number, number>();
  for (const f of scheme.fields) if (f.updated) { index.set(f.index, names.length); names.push(f.name); }
  const entries: MatrixEntry[] = [];
  names.forEach((name, i) => {
    const r = ev.evaluateUpdate(name, x, y, { read, dt, t: state?.t ?? 0, diffusivity: { kind: opts.mode === 'full' ? 'full' : 'frozen' } });
    for (const [k, w] of r.grad) {
      const { field, dx, dy } = decodeKey(k);
      const j = index.get(field);
      if (j !== undefined && w !== 0) entries.push({ i, j, dx, dy, w });
    }
  });
  entries.sort((a, b) => a.i - b.i || a.j - b.j || a.dy - b.dy || a.dx - b.dx);
  return { n: names.length, entries, fields: names, linear: isLinearScheme(scheme), x, y, dt, spacing };
}
