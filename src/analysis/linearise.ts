// Forward-mode evaluation of a checked scheme's updates at one pixel: the new value and its derivatives with
// respect to every field's old value at every offset (the stencil weights). Shared by stability and kernel code.
// Pure: imports only src/notation types and tables; never Node, vscode or the DOM.

import type { CallExpr, Expr } from '../notation/ast';
import { applyBuiltin } from '../notation/builtins';
import type { CheckedScheme, LetInfo, Offset, UpdateInfo } from '../notation/scheme';

/** Offsets are encoded into one integer key per (field, dx, dy); R bounds the stencil radius of one evaluation. */
const R = 128;
const SPAN = 2 * R + 1;

export function gradKey(field: number, dx: number, dy: number): number {
  return (field * SPAN + (dx + R)) * SPAN + (dy + R);
}

export function decodeKey(key: number): { field: number; dx: number; dy: number } {
  const dy = (key % SPAN) - R;
  const rest = Math.floor(key / SPAN);
  const dx = (rest % SPAN) - R;
  return { field: Math.floor(rest / SPAN), dx, dy };
}

/** A dual number with a sparse gradient; `d === null` means a zero gradient (constants, value-only mode). */
export interface Dual {
  readonly v: number;
  readonly d: Map<number, number> | null;
}

/**
 * How diffusivity calls are treated. `full`: differentiated like any function (linearisation).
 * `frozen`: their value at the state, derivative zero (the weights `fluxel kernel` shows).
 * `probe`: the k-th call evaluated returns `probe[k]` (its argument is not evaluated); used to expose how
 * weights depend on the diffusivity values.
 */
export type DiffusivityMode =
  | { readonly kind: 'full' }
  | { readonly kind: 'frozen' }
  | { readonly kind: 'probe'; readonly values: readonly number[] };

/** Reads an old field value at an absolute grid position; the reader applies the boundary rule (or none). */
export type FieldReader = (field: number, x: number, y: number) => number;

export interface EvalOptions {
  readonly read: FieldReader;
  readonly dt: number;
  readonly t?: number;
  readonly diffusivity: DiffusivityMode;
  /** Fields whose old values are differentiation variables; others are constants. Default: all. */
  readonly seeded?: ReadonlySet<number>;
}

export interface UpdateResult {
  readonly value: number;
  readonly grad: Map<number, number>;
  /** Diffusivity call sites in evaluation order (probe and frozen modes), with frozen values when known. */
  readonly calls: readonly { readonly site: CallExpr; readonly value: number }[];
}

type ScopeValue = Dual | { readonly offset: Offset };
type Scope = ReadonlyMap<string, ScopeValue>;

const EMPTY_SCOPE: Scope = new Map();

function constant(v: number): Dual {
  return { v, d: null };
}

/** a·da + b·db, allocating only when some gradient is present. */
function combine(v: number, a: Dual, ca: number, b: Dual | null, cb: number): Dual {
  const ad = ca === 0 ? null : a.d;
  const bd = b === null || cb === 0 ? null : b.d;
  if (ad === null && bd === null) return { v, d: null };
  const d = new Map<number, number>();
  if (ad !== null) for (const [k, x] of ad) d.set(k, x * ca);
  if (bd !== null) for (const [k, x] of bd) d.set(k, (d.get(k) ?? 0) + x * cb);
  return { v, d };
}

function chain(a: Dual, v: number, dv: number): Dual {
  return combine(v, a, dv, null, 0);
}

function truthy(a: Dual): boolean {
  return a.v !== 0 && !Number.isNaN(a.v);
}

/** The most blur taps ((2r+1)² in 2d, 2r+1 in 1d) one evaluation of a blurred value may visit: σ ≤ 12 in 2d. */
export const MAX_BLUR_TAPS = 10_000;

/** Gaussian taps of numerics.md: exp(−k²/(2σ²)) for |k| ≤ ⌊4σ + 0.5⌋, normalised; σ = 0 is the identity. */
export function gaussianTaps(sigma: number): Float64Array {
  if (!(sigma > 0)) return Float64Array.of(1);
  const r = Math.floor(4 * sigma + 0.5);
  const taps = new Float64Array(2 * r + 1);
  let s = 0;
  for (let k = -r; k <= r; k++) {
    taps[k + r] = Math.exp(-(k * k) / (2 * sigma * sigma));
    s += taps[k + r];
  }
  for (let i = 0; i < taps.length; i++) taps[i] /= s;
  return taps;
}

/**
 * A reusable evaluator for one scheme. Lets are evaluated on the extended grid from the fields' values
 * (numerics.md "Derived fields"): a let at an offset is its expression evaluated at the shifted position.
 */
export class SchemeEvaluator {
  readonly scheme: CheckedScheme;
  private readonly params = new Map<string, number>();
  private readonly fieldIndex = new Map<string, number>();
  private readonly lets = new Map<string, LetInfo>();
  private readonly blurTaps = new Map<string, Float64Array>();
  private readonly updates = new Map<string, UpdateInfo>();

  // Per-evaluation state, reset by evaluateUpdate.
  private opts!: EvalOptions;
  private x0 = 0;
  private y0 = 0;
  private memo = new Map<string, Dual>();
  private calls: { site: CallExpr; value: number }[] = [];

  constructor(scheme: CheckedScheme, paramOverrides?: ReadonlyMap<string, number>) {
    this.scheme = scheme;
    for (const p of scheme.params) this.params.set(p.name, paramOverrides?.get(p.name) ?? p.value);
    for (const f of scheme.fields) this.fieldIndex.set(f.name, f.index);
    for (const l of scheme.lets) this.lets.set(l.name, l);
    for (const u of scheme.updates) this.updates.set(u.field, u);
  }

  fieldIndexOf(name: string): number {
    const i = this.fieldIndex.get(name);
    if (i === undefined) throw new Error(`unknown field ${name}`);
    return i;
  }

  /** Evaluates `field'` at pixel (x, y); gradient keys are offsets relative to (x, y). */
  evaluateUpdate(field: string, x: number, y: number, opts: EvalOptions): UpdateResult {
    this.opts = opts;
    this.x0 = x;
    this.y0 = y;
    this.memo = new Map();
    this.calls = [];
    const r = this.primedAt(field, x, y, true);
    return { value: r.v, grad: r.d ?? new Map(), calls: this.calls };
  }

  /** Evaluates a closed expression (a field's initial value) at (x, y) without derivatives. */
  evaluatePlain(expr: Expr, x: number, y: number, read: FieldReader, t = 0): number {
    // Called once per pixel for initial states: reuse the options and the memo rather than allocate them.
    const o = this.plainOpts;
    if (o && o.read === read && o.t === t) this.opts = o;
    else this.opts = this.plainOpts = { read, dt: this.scheme.dt, t, diffusivity: { kind: 'frozen' } };
    this.x0 = x;
    this.y0 = y;
    if (this.memo.size) this.memo = new Map();
    if (this.calls.length) this.calls = [];
    return this.eval(expr, x, y, EMPTY_SCOPE, false).v;
  }

  private plainOpts: EvalOptions | null = null;

  /** Calls a user function or diffusivity on numbers (no derivatives); diffusivities are evaluated, not frozen. */
  callFunction(name: string, args: readonly number[]): number {
    const fn = this.scheme.functions.get(name);
    if (!fn) throw new Error(`unknown function ${name}`);
    this.opts = { read: () => NaN, dt: this.scheme.dt, t: 0, diffusivity: { kind: 'full' } };
    this.memo = new Map();
    this.calls = [];
    const scope = new Map<string, ScopeValue>();
    fn.params.forEach((p, i) => scope.set(p, constant(args[i] ?? NaN)));
    return this.eval(fn.body, 0, 0, scope, false).v;
  }

  private primedAt(field: string, x: number, y: number, grad: boolean): Dual {
    const key = `'${field}@${x},${y},${grad ? 1 : 0}`;
    const hit = this.memo.get(key);
    if (hit) return hit;
    const u = this.updates.get(field);
    // A field without an update keeps its value, so its primed value is its old value.
    const r = u ? this.eval(u.expr, x, y, EMPTY_SCOPE, grad) : this.fieldAt(this.fieldIndexOf(field), x, y, grad);
    this.memo.set(key, r);
    return r;
  }

  private fieldAt(f: number, x: number, y: number, grad: boolean): Dual {
    const v = this.opts.read(f, x, y);
    if (!grad || (this.opts.seeded && !this.opts.seeded.has(f))) return { v, d: null };
    return { v, d: new Map([[gradKey(f, x - this.x0, y - this.y0), 1]]) };
  }

  private letAt(l: LetInfo, x: number, y: number, grad: boolean): Dual {
    const key = `${l.name}@${x},${y},${grad ? 1 : 0}`;
    const hit = this.memo.get(key);
    if (hit) return hit;
    let r: Dual;
    if (l.kind === 'expr') {
      r = this.eval(l.expr, x, y, EMPTY_SCOPE, grad);
    } else {
      let taps = this.blurTaps.get(l.name);
      if (!taps) {
        const sigma = this.eval(l.sigma, x, y, EMPTY_SCOPE, false).v;
        // Every evaluation of a blurred value visits all (2r+1)^dims taps with derivatives: a width far beyond the
        // picture would keep the analysis busy for minutes (σ = 40 took seconds, σ = 1000 hours), so it stops here.
        const r = sigma > 0 ? Math.floor(4 * sigma + 0.5) : 0;
        const count = (2 * r + 1) ** this.scheme.dims;
        if (!(count <= MAX_BLUR_TAPS)) {
          throw new Error(`blur(${l.source}, ${sigma}) is too wide to analyse: its kernel has ${count} taps, the analysis evaluates at most ${MAX_BLUR_TAPS}`);
        }
        taps = gaussianTaps(sigma);
        this.blurTaps.set(l.name, taps);
      }
      r = this.blurAt(l.source, taps, x, y, grad);
    }
    this.memo.set(key, r);
    return r;
  }

  private blurAt(source: string, taps: Float64Array, x: number, y: number, grad: boolean): Dual {
    const rad = (taps.length - 1) / 2;
    const twoD = this.scheme.dims === 2;
    let v = 0;
    const d = grad ? new Map<number, number>() : null;
    for (let j = twoD ? -rad : 0; j <= (twoD ? rad : 0); j++) {
      const wy = twoD ? taps[j + rad] : 1;
      for (let i = -rad; i <= rad; i++) {
        const w = taps[i + rad] * wy;
        const s = this.nameAt(source, x + i, y + j, grad);
        v += w * s.v;
        if (d && s.d) for (const [k, g] of s.d) d.set(k, (d.get(k) ?? 0) + w * g);
      }
    }
    return { v, d: d && d.size > 0 ? d : null };
  }

  /** A field or let value at an absolute position. */
  private nameAt(name: string, x: number, y: number, grad: boolean): Dual {
    const l = this.lets.get(name);
    if (l) return this.letAt(l, x, y, grad);
    return this.fieldAt(this.fieldIndexOf(name), x, y, grad);
  }

  private offsetOf(expr: Expr & { kind: 'access' }, x: number, y: number, scope: Scope): Offset {
    const o = expr.offset;
    if (o === null) return this.scheme.dims === 2 ? [0, 0] : [0];
    if (o.kind === 'variable') {
      const s = scope.get(o.name);
      if (!s || !('offset' in s)) throw new Error(`${o.name} is not a neighbour variable`);
      return s.offset;
    }
    return o.components.map((c) => Math.round(this.eval(c, x, y, scope, false).v));
  }

  private eval(e: Expr, x: number, y: number, scope: Scope, grad: boolean): Dual {
    switch (e.kind) {
      case 'number':
        return constant(e.value);
      case 'name': {
        const s = scope.get(e.name);
        if (s) {
          if ('offset' in s) throw new Error(`neighbour variable ${e.name} used as a number`);
          return grad ? s : constant(s.v);
        }
        if (this.fieldIndex.has(e.name) || this.lets.has(e.name)) return this.nameAt(e.name, x, y, grad);
        const p = this.params.get(e.name);
        if (p !== undefined) return constant(p);
        switch (e.name) {
          case 'pi': return constant(Math.PI);
          case 'h': return constant(this.scheme.spacing);
          case 'dt': return constant(this.opts.dt);
          case 't': return constant(this.opts.t ?? 0);
          case 'x': return constant(x);
          case 'y': return constant(y);
          default: throw new Error(`unknown name ${e.name}`);
        }
      }
      case 'access': {
        const off = this.offsetOf(e, x, y, scope);
        const ax = x + (off[0] ?? 0);
        const ay = y + (off[1] ?? 0);
        if (e.primed) return this.primedAt(e.target, ax, ay, grad);
        return this.nameAt(e.target, ax, ay, grad);
      }
      case 'unary': {
        const a = this.eval(e.operand, x, y, scope, grad);
        if (e.op === '-') return chain(a, -a.v, -1);
        if (e.op === '+') return a;
        return constant(truthy(a) ? 0 : 1);
      }
      case 'binary':
        return this.binary(e.op, e.left, e.right, x, y, scope, grad);
      case 'if': {
        const c = this.eval(e.cond, x, y, scope, false);
        return this.eval(truthy(c) ? e.then : e.otherwise, x, y, scope, grad);
      }
      case 'reduce': {
        const set = this.scheme.neighbourSets.get(e.set);
        if (!set) throw new Error(`unknown neighbour set ${e.set}`);
        let acc: Dual | null = null;
        for (const off of set) {
          const inner = new Map(scope);
          inner.set(e.variable, { offset: off });
          const b = this.eval(e.body, x, y, inner, grad);
          if (acc === null) acc = b;
          else if (e.op === 'sum') acc = combine(acc.v + b.v, acc, 1, b, 1);
          else if (e.op === 'max') acc = b.v > acc.v ? b : acc;
          else acc = b.v < acc.v ? b : acc;
        }
        return acc ?? constant(0);
      }
      case 'call':
        return this.call(e, x, y, scope, grad);
      case 'error':
        throw new Error('cannot evaluate an erroneous expression');
    }
  }

  private binary(op: string, l: Expr, r: Expr, x: number, y: number, scope: Scope, grad: boolean): Dual {
    if (op === 'and' || op === 'or') {
      const a = truthy(this.eval(l, x, y, scope, false));
      const b = truthy(this.eval(r, x, y, scope, false));
      return constant((op === 'and' ? a && b : a || b) ? 1 : 0);
    }
    const a = this.eval(l, x, y, scope, grad);
    const b = this.eval(r, x, y, scope, grad);
    switch (op) {
      case '+': return combine(a.v + b.v, a, 1, b, 1);
      case '-': return combine(a.v - b.v, a, 1, b, -1);
      case '*': return combine(a.v * b.v, a, b.v, b, a.v);
      case '/': return combine(a.v / b.v, a, 1 / b.v, b, -a.v / (b.v * b.v));
      case '^': {
        const v = Math.pow(a.v, b.v);
        const da = a.d ? (b.v === 0 ? 0 : b.v * Math.pow(a.v, b.v - 1)) : 0;
        const db = b.d ? (a.v > 0 ? v * Math.log(a.v) : 0) : 0;
        return combine(v, a, da, b, db);
      }
      case '<': return constant(a.v < b.v ? 1 : 0);
      case '<=': return constant(a.v <= b.v ? 1 : 0);
      case '>': return constant(a.v > b.v ? 1 : 0);
      case '>=': return constant(a.v >= b.v ? 1 : 0);
      case '==': return constant(a.v === b.v ? 1 : 0);
      case '!=': return constant(a.v !== b.v ? 1 : 0);
      default: throw new Error(`unknown operator ${op}`);
    }
  }

  private call(e: CallExpr, x: number, y: number, scope: Scope, grad: boolean): Dual {
    if (e.callee === 'len') {
      const a = e.args[0];
      const s = a && a.kind === 'name' ? scope.get(a.name) : undefined;
      if (!s || !('offset' in s)) throw new Error('len expects a neighbour variable');
      return constant(Math.hypot(...s.offset));
    }
    const fn = this.scheme.functions.get(e.callee);
    if (fn) {
      const mode = this.opts.diffusivity;
      if (fn.diffusivity && mode.kind === 'probe') {
        const k = this.calls.length;
        const v = mode.values[k] ?? 0;
        this.calls.push({ site: e, value: v });
        return constant(v);
      }
      const frozen = fn.diffusivity && mode.kind === 'frozen';
      const inner = new Map<string, ScopeValue>();
      fn.params.forEach((p, i) => inner.set(p, this.eval(e.args[i], x, y, scope, grad && !frozen)));
      const r = this.eval(fn.body, x, y, inner, grad && !frozen);
      if (fn.diffusivity) this.calls.push({ site: e, value: r.v });
      return frozen ? constant(r.v) : r;
    }
    const args = e.args.map((a) => this.eval(a, x, y, scope, grad));
    const a = args[0];
    switch (e.callee) {
      case 'abs': return chain(a, Math.abs(a.v), Math.sign(a.v));
      case 'sqrt': { const v = Math.sqrt(a.v); return chain(a, v, 0.5 / v); }
      case 'exp': { const v = Math.exp(a.v); return chain(a, v, v); }
      case 'log': return chain(a, Math.log(a.v), 1 / a.v);
      case 'sin': return chain(a, Math.sin(a.v), Math.cos(a.v));
      case 'cos': return chain(a, Math.cos(a.v), -Math.sin(a.v));
      case 'tanh': { const v = Math.tanh(a.v); return chain(a, v, 1 - v * v); }
      case 'sign': return constant(Math.sign(a.v));
      case 'min': return args[1].v < a.v ? args[1] : a;
      case 'max': return args[1].v > a.v ? args[1] : a;
      case 'clamp': {
        if (a.v < args[1].v) return args[1];
        if (a.v > args[2].v) return args[2];
        return a;
      }
      default:
        return constant(applyBuiltin(e.callee, args.map((z) => z.v)));
    }
  }
}

/** One stencil weight: ∂(new value)/∂(old value of `field` at offset [dx, dy]). */
export interface StencilEntry {
  readonly field: number;
  readonly dx: number;
  readonly dy: number;
  readonly w: number;
}

export function stencilEntries(grad: ReadonlyMap<number, number>): StencilEntry[] {
  const out: StencilEntry[] = [];
  for (const [k, w] of grad) {
    const { field, dx, dy } = decodeKey(k);
    out.push({ field, dx, dy, w });
  }
  out.sort((a, b) => a.field - b.field || a.dy - b.dy || a.dx - b.dx);
  return out;
}
