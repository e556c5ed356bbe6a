// Static facts about a checked scheme that the runner needs: which names each expression reads and how far away,
// constant evaluation (blur sigma, offsets), the halo plan, and a canonical signature for the kernel cache.
// Must not import vscode, the DOM or Node modules.

import type { AccessExpr, Expr } from '../notation/ast';
import { applyBuiltin } from '../notation/builtins';
import type { CheckedScheme, Offset } from '../notation/scheme';

/** Nesting limit for user functions calling user functions; the checker forbids recursion, this is a guard. */
const MAX_INLINE_DEPTH = 64;

export class EngineError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'EngineError';
  }
}

/**
 * The offset an access `u[..]` reads: its literal offset, the offset a reduction variable is bound to in `offsets`,
 * or null for the pixel itself; undefined for a variable no enclosing reduction binds (callers say so in their terms).
 */
export function accessOffset(e: AccessExpr, offsets: ReadonlyMap<string, Offset>): Offset | null | undefined {
  if (e.offset?.kind === 'literal') return e.offset.components.map(offsetComponent);
  if (e.offset?.kind === 'variable') return offsets.get(e.offset.name);
  return null;
}

/** The value of an offset component: an integer literal, possibly negated. */
export function offsetComponent(e: Expr): number {
  let v: number;
  if (e.kind === 'number') v = e.value;
  else if (e.kind === 'unary' && (e.op === '-' || e.op === '+') && e.operand.kind === 'number') {
    v = e.op === '-' ? -e.operand.value : e.operand.value;
  } else throw new EngineError('offset components must be integer literals');
  if (!Number.isInteger(v) || Math.abs(v) > 1024) throw new EngineError(`offset component ${v} is not a small integer`);
  return v === 0 ? 0 : v; // folds -0 to 0
}

/** Chebyshev radius of an offset: the halo width it needs on each axis. */
function radiusOf(o: Offset): number {
  let r = 0;
  for (const c of o) r = Math.max(r, Math.abs(c));
  return r;
}

/**
 * For every field or let that `expr` reads, the largest offset radius at which it is read.
 * User function bodies are followed, with reduction variables bound to each offset of their set.
 */
export function readRadii(scheme: CheckedScheme, expr: Expr): Map<string, number> {
  const out = new Map<string, number>();
  const note = (name: string, r: number) => out.set(name, Math.max(out.get(name) ?? 0, r));
  const visit = (e: Expr, sets: Map<string, number>, locals: ReadonlySet<string>, depth: number): void => {
    switch (e.kind) {
      case 'name': {
        if (locals.has(e.name)) return;
        const k = scheme.symbols.get(e.name);
        if (k === 'field' || k === 'let') note(e.name, 0);
        return;
      }
      case 'access': {
        if (e.primed && e.offset === null) return; // same pixel, new level: no halo
        let r = 0;
        if (e.offset?.kind === 'literal') r = radiusOf(e.offset.components.map(offsetComponent));
        else if (e.offset?.kind === 'variable') r = sets.get(e.offset.name) ?? 0;
        note(e.target, r);
        return;
      }
      case 'unary': visit(e.operand, sets, locals, depth); return;
      case 'binary': visit(e.left, sets, locals, depth); visit(e.right, sets, locals, depth); return;
      case 'if':
        visit(e.cond, sets, locals, depth); visit(e.then, sets, locals, depth); visit(e.otherwise, sets, locals, depth);
        return;
      case 'reduce': {
        const set = scheme.neighbourSets.get(e.set);
        if (!set) throw new EngineError('unknown neighbour set');
        const inner = new Map(sets);
        inner.set(e.variable, set.reduce((m, o) => Math.max(m, radiusOf(o)), 0));
        visit(e.body, inner, locals, depth);
        return;
      }
      case 'call': {
        for (const a of e.args) visit(a, sets, locals, depth);
        const fn = scheme.functions.get(e.callee);
        if (fn) {
          if (depth > MAX_INLINE_DEPTH) throw new EngineError('user functions nest too deeply');
          // A function body sees only its own parameters and the scheme's top-level names.
          visit(fn.body, new Map(), new Set(fn.params), depth + 1);
        }
        return;
      }
      default: return;
    }
  };
  visit(expr, new Map(), new Set(), 0);
  return out;
}

/** Evaluates a constant expression (numbers, params, pi, h, dt, built-ins, user functions): used for blur sigma. */
export function evalConstant(scheme: CheckedScheme, e: Expr, params: ReadonlyMap<string, number>, dt: number, locals = new Map<string, number>(), depth = 0): number {
  const ev = (x: Expr) => evalConstant(scheme, x, params, dt, locals, depth);
  switch (e.kind) {
    case 'number': return e.value;
    case 'name': {
      const l = locals.get(e.name);
      if (l !== undefined) return l;
      const p = params.get(e.name);
      if (p !== undefined) return p;
      if (e.name === 'pi') return Math.PI;
      if (e.name === 'h') return scheme.spacing;
      if (e.name === 'dt') return dt;
      throw new EngineError('not a constant expression');
    }
    case 'unary': {
      const a = ev(e.operand);
      return e.op === '-' ? -a : e.op === '+' ? a : a === 0 ? 1 : 0;
    }
    case 'binary': {
      const a = ev(e.left), b = ev(e.right);
      switch (e.op) {
        case '+': return a + b;
        case '-': return a - b;
        case '*': return a * b;
        case '/': return a / b;
        case '^': return Math.pow(a, b);
        case '<': return a < b ? 1 : 0;
        case '<=': return a <= b ? 1 : 0;
        case '>': return a > b ? 1 : 0;
        case '>=': return a >= b ? 1 : 0;
        case '==': return a === b ? 1 : 0;
        case '!=': return a !== b ? 1 : 0;
        case 'and': return a !== 0 && b !== 0 ? 1 : 0;
        case 'or': return a !== 0 || b !== 0 ? 1 : 0;
      }
      throw new EngineError('unknown operator');
    }
    case 'if': return ev(e.cond) !== 0 ? ev(e.then) : ev(e.otherwise);
    case 'call': {
      const args = e.args.map(ev);
      const fn = scheme.functions.get(e.callee);
      if (fn) {
        if (depth > MAX_INLINE_DEPTH) throw new EngineError('user functions nest too deeply');
        const inner = new Map<string, number>();
        fn.params.forEach((p, k) => inner.set(p, args[k]));
        return evalConstant(scheme, fn.body, params, dt, inner, depth + 1);
      }
      return applyBuiltin(e.callee, args);
    }
    default: throw new EngineError('not a constant expression');
  }
}

/** Number of taps on each side of the centre for blur(·, sigma): ⌊4σ + 0.5⌋ (numerics.md, "blur"). */
export function blurRadius(sigma: number): number {
  if (!(sigma >= 0) || !Number.isFinite(sigma)) throw new EngineError(`blur sigma must be a finite number ≥ 0, got ${sigma}`);
  return Math.floor(4 * sigma + 0.5);
}

export interface HaloPlan {
  /** Halo of every padded buffer. */
  readonly halo: number;
  /** Per let (scheme order): how many cells beyond the image it must be computed. */
  readonly letExtents: readonly number[];
  /** Per let: blur sigma (null for `expr` lets). */
  readonly letSigmas: readonly (number | null)[];
}

/**
 * Works backwards from the updates: a let read at radius r needs extent r; whatever that let reads at radius s
 * is then needed to extent r + s (numerics.md: the halo is the sum of the radii along the chain).
 */
export function planHalo(scheme: CheckedScheme, params: ReadonlyMap<string, number>, dt: number): HaloPlan {
  const need = new Map<string, number>();
  const bump = (name: string, r: number) => need.set(name, Math.max(need.get(name) ?? 0, r));
  for (const u of scheme.updates) for (const [name, r] of readRadii(scheme, u.expr)) bump(name, r);
  const sigmas: (number | null)[] = scheme.lets.map(l => (l.kind === 'blur' ? evalConstant(scheme, l.sigma, params, dt) : null));
  const extents = new Array<number>(scheme.lets.length).fill(0);
  for (let k = scheme.lets.length - 1; k >= 0; k--) {
    const l = scheme.lets[k];
    const e = need.get(l.name) ?? 0;
    extents[k] = e;
    if (l.kind === 'blur') bump(l.source, e + blurRadius(sigmas[k] as number));
    else for (const [name, r] of readRadii(scheme, l.expr)) bump(name, e + r);
  }
  let halo = 0;
  for (const r of need.values()) halo = Math.max(halo, r);
  return { halo, letExtents: extents, letSigmas: sigmas };
}

/** A canonical text of everything that affects generated code (source ranges left out), for the kernel cache. */
export function canonicalScheme(scheme: CheckedScheme): string {
  return JSON.stringify(scheme, (key, value) => {
    if (key === 'range' || key.endsWith('Range') || key === 'decl') return undefined;
    if (value instanceof Map) return [...value.entries()].sort((a, b) => (a[0] < b[0] ? -1 : a[0] > b[0] ? 1 : 0));
    if (typeof value === 'number' && !Number.isFinite(value)) return String(value);
    if (typeof value === 'number' && Object.is(value, -0)) return '-0';
    return value;
  });
}

/** A short non-cryptographic hash (53-bit, two multiplicative lanes) for display; the cache keys on the full text. */
export function hashText(text: string): string {
  let h1 = 0xdeadbeef, h2 = 0x41c6ce57;
  for (let i = 0; i < text.length; i++) {
    const c = text.charCodeAt(i);
    h1 = Math.imul(h1 ^ c, 2654435761);
    h2 = Math.imul(h2 ^ c, 1597334677);
  }
  h1 = Math.imul(h1 ^ (h1 >>> 16), 2246822507) ^ Math.imul(h2 ^ (h2 >>> 13), 3266489909);
  h2 = Math.imul(h2 ^ (h2 >>> 16), 2246822507) ^ Math.imul(h1 ^ (h1 >>> 13), 3266489909);
  return (4294967296 * (2097151 & h2) + (h1 >>> 0)).toString(16).padStart(14, '0');
}
