// The one lowering every exporter shares: a checked scheme becomes a small target-neutral IR of hash-consed
// value nodes (user functions inlined, reductions unrolled, offsets and constants resolved) grouped into kernels,
// plus a symbolic halo plan whose blur radii are computed at run time from the params.
// Pure: imports only src/notation and the engine's planning helpers; no Node, vscode or DOM.

import type { Expr, SourceRange } from '../notation/ast';
import type { Boundary, CheckedScheme, Offset } from '../notation/scheme';
import { accessOffset, EngineError, readRadii } from '../engine/plan';

/** Raised for schemes (or constructs) a target cannot express; the message names the construct and its line. */
export class ExportError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'ExportError';
  }
}

export type OpName =
  | 'neg' | 'pos' | 'not'
  | 'add' | 'sub' | 'mul' | 'div' | 'pow'
  | 'lt' | 'le' | 'gt' | 'ge' | 'eq' | 'ne' | 'and' | 'or'
  | 'select'
  | 'abs' | 'sqrt' | 'exp' | 'log' | 'sin' | 'cos' | 'tanh' | 'sign'
  | 'min' | 'max' | 'clamp';

export type Node =
  | { readonly k: 'num'; readonly v: number }
  | { readonly k: 'param'; readonly i: number }
  | { readonly k: 'dt' } | { readonly k: 't' } | { readonly k: 'x' } | { readonly k: 'y' }
  /** A stored value: field (current level) or let buffer at offset (dx, dy) from the pixel. */
  | { readonly k: 'read'; readonly buf: 'field' | 'let'; readonly i: number; readonly dx: number; readonly dy: number }
  /** The new (primed) value of field i at the pixel; exists only after that field's update in the same kernel. */
  | { readonly k: 'new'; readonly i: number }
  | { readonly k: 'op'; readonly op: OpName; readonly args: readonly number[] };

/**
 * Value nodes of one module, interned by structure so equal subexpressions share one id (and one temporary).
 * `invariant[id]` is true when the node reads no buffer and no coordinate: targets compute it once per call.
 */
export class Graph {
  readonly nodes: Node[] = [];
  readonly invariant: boolean[] = [];
  private readonly ids = new Map<string, number>();
  add(n: Node): number {
    const key = JSON.stringify(n, (_k, v) => (typeof v === 'number' && Object.is(v, -0) ? '-0' : v));
    const known = this.ids.get(key);
    if (known !== undefined) return known;
    const id = this.nodes.length;
    this.nodes.push(n);
    this.invariant.push(n.k === 'op' ? n.args.every(a => this.invariant[a]) : n.k === 'num' || n.k === 'param' || n.k === 'dt' || n.k === 't');
    this.ids.set(key, id);
    return id;
  }
  num(v: number): number {
    return this.add({ k: 'num', v });
  }
  op(op: OpName, ...args: number[]): number {
    return this.add({ k: 'op', op, args });
  }
  /** The op nodes `roots` need, each after its arguments, leaving out those in `done` (which it extends). */
  order(roots: readonly number[], done: Set<number>): number[] {
    const out: number[] = [];
    const visit = (id: number): void => {
      if (done.has(id)) return;
      const n = this.nodes[id];
      if (n.k !== 'op') return;
      for (const a of n.args) visit(a);
      done.add(id);
      out.push(id);
    };
    for (const r of roots) visit(r);
    return out;
  }
}

/** One term of a halo extent: base (0 or another let's extent) + a fixed radius + optionally a blur let's radius. */
export interface ExtentTerm {
  readonly let: number | null;
  readonly add: number;
  readonly blur: number | null;
}

export interface ExportField {
  readonly name: string;
  readonly boundary: Boundary;
  readonly updated: boolean;
  /** Initial value over the interior, or null for `image` fields. */
  readonly init: number | null;
  /** For fields filled by the caller (`init` null): the input they read (null: the main one) and the channel (null: grey/luma). */
  readonly image?: { readonly input: string | null; readonly channel: string | null };
  readonly line: number;
}

export interface ExportParam {
  readonly name: string;
  readonly value: number;
  readonly lo: number | null;
  readonly hi: number | null;
}

export type ExportLet =
  | { readonly kind: 'expr'; readonly name: string; readonly value: number; readonly extent: readonly ExtentTerm[]; readonly line: number }
  | {
    readonly kind: 'blur'; readonly name: string; readonly source: { readonly buf: 'field' | 'let'; readonly i: number };
    /** The sigma node (invariant). */
    readonly sigma: number; readonly extent: readonly ExtentTerm[]; readonly line: number;
  };

export interface ExportUpdate {
  readonly field: number;
  readonly value: number;
  readonly line: number;
}

/** The whole scheme in target-neutral form. Node ids refer to `graph`. */
export interface ExportIR {
  readonly dims: 1 | 2;
  readonly spacing: number;
  readonly dt: number;
  readonly steps: number;
  readonly fields: readonly ExportField[];
  readonly params: readonly ExportParam[];
  readonly lets: readonly ExportLet[];
  /** Evaluation order; an update reading `v'` comes after v's. */
  readonly updates: readonly ExportUpdate[];
  /** Halo of every buffer = max over these terms (fields' needs and lets' extents), at least 0. */
  readonly halo: readonly ExtentTerm[];
  readonly graph: Graph;
  /** Lines (1-based) of `x`/`y` reads in lets or updates: exporters that cannot place chunks refuse them. */
  readonly coordinateReads: readonly { readonly what: string; readonly line: number }[];
}

const MAX_INLINE_DEPTH = 64;

interface Env {
  readonly locals: ReadonlyMap<string, number>;
  readonly offsets: ReadonlyMap<string, Offset>;
  readonly depth: number;
}
const ROOT: Env = { locals: new Map(), offsets: new Map(), depth: 0 };

type Place = 'init' | 'let' | 'update' | 'sigma';

/** Lowers expressions of one scheme into a shared graph, mirroring the engine's code generator value for value. */
class Lowerer {
  /** Nodes known to be `1 / X`, with X: a later product with them becomes a division (as the engine does). */
  private readonly reciprocals = new Map<number, number>();
  readonly coordinateReads: { what: string; line: number }[] = [];
  private readonly fieldIndex = new Map<string, number>();
  private readonly letIndex = new Map<string, number>();
  private readonly paramIndex = new Map<string, number>();
  constructor(readonly scheme: CheckedScheme, readonly g: Graph) {
    scheme.fields.forEach((f, k) => this.fieldIndex.set(f.name, k));
    scheme.lets.forEach((l, k) => this.letIndex.set(l.name, k));
    scheme.params.forEach((p, k) => this.paramIndex.set(p.name, k));
  }

  lower(e: Expr, env: Env, place: Place): number {
    const g = this.g;
    switch (e.kind) {
      case 'number': return g.num(e.value);
      case 'name': {
        const local = env.locals.get(e.name);
        if (local !== undefined) return local;
        switch (this.scheme.symbols.get(e.name)) {
          case 'field': case 'let': return this.read(e.name, [0, 0], place, e.range);
          case 'param': return g.add({ k: 'param', i: this.paramIndex.get(e.name) as number });
          case 'constant':
            switch (e.name) {
              case 'pi': return g.num(Math.PI);
              case 'h': return g.num(this.scheme.spacing);
              case 'dt': return g.add({ k: 'dt' });
              case 't': return place === 'init' || place === 'sigma' ? g.num(0) : g.add({ k: 't' });
              case 'x': case 'y':
                if (place === 'let' || place === 'update') this.coordinateReads.push({ what: `\`${e.name}\``, line: e.range.start.line });
                return g.add({ k: e.name });
            }
        }
        throw new ExportError(`line ${e.range.start.line}: the name \`${e.name}\` cannot be exported here`);
      }
      case 'access': {
        if (e.primed) {
          const f = this.fieldIndex.get(e.target);
          if (f === undefined || place !== 'update' || e.offset !== null) throw new ExportError(`line ${e.range.start.line}: a primed value can only be read at the same pixel in an update`);
          return g.add({ k: 'new', i: f });
        }
        const o = accessOffset(e, env.offsets);
        if (o === undefined) throw new ExportError(`line ${e.range.start.line}: an offset variable outside its reduction`);
        return this.read(e.target, o ?? [0, 0], place, e.range);
      }
      case 'unary': {
        const a = this.lower(e.operand, env, place);
        return g.op(e.op === '-' ? 'neg' : e.op === '+' ? 'pos' : 'not', a);
      }
      case 'binary': {
        if (e.op === '^') {
          const b = this.lower(e.left, env, place);
          // Small integer powers become products, exactly as the engine prints them ((t * t) * t for cubes).
          if (e.right.kind === 'number' && (e.right.value === 1 || e.right.value === 2 || e.right.value === 3)) {
            if (e.right.value === 1) return g.op('pos', b);
            const sq = g.op('mul', b, b);
            return e.right.value === 2 ? sq : g.op('mul', sq, b);
          }
          return g.op('pow', b, this.lower(e.right, env, place));
        }
        const a = this.lower(e.left, env, place);
        const b = this.lower(e.right, env, place);
        switch (e.op) {
          case '/': {
            // The engine multiplies by a reciprocal computed once when the divisor is loop-invariant.
            if (g.invariant[b]) return g.op('mul', a, g.op('div', g.num(1), b));
            const d = g.op('div', a, b);
            if (e.left.kind === 'number' && e.left.value === 1) this.reciprocals.set(d, b);
            return d;
          }
          case '*': {
            const ra = this.reciprocals.get(a), rb = this.reciprocals.get(b);
            if (ra !== undefined) return g.op('div', b, ra);
            if (rb !== undefined) return g.op('div', a, rb);
            return g.op('mul', a, b);
          }
          case '+': return g.op('add', a, b);
          case '-': return g.op('sub', a, b);
          case '<': return g.op('lt', a, b);
          case '<=': return g.op('le', a, b);
          case '>': return g.op('gt', a, b);
          case '>=': return g.op('ge', a, b);
          case '==': return g.op('eq', a, b);
          case '!=': return g.op('ne', a, b);
          case 'and': return g.op('and', a, b);
          case 'or': return g.op('or', a, b);
        }
        throw new ExportError(`line ${e.range.start.line}: unknown operator`);
      }
      case 'if': {
        // Both branches are pure, so evaluating them eagerly and selecting gives the engine's lazy result.
        const c = this.lower(e.cond, env, place);
        return g.op('select', c, this.lower(e.then, env, place), this.lower(e.otherwise, env, place));
      }
      case 'reduce': {
        const set = this.scheme.neighbourSets.get(e.set);
        if (!set) throw new ExportError(`line ${e.range.start.line}: unknown neighbour set`);
        const parts = set.map(o => {
          const inner = new Map(env.offsets);
          inner.set(e.variable, o);
          return this.lower(e.body, { ...env, offsets: inner }, place);
        });
        if (parts.length === 0) return g.num(e.op === 'sum' ? 0 : e.op === 'max' ? -Infinity : Infinity);
        // Left to right, as the engine's `(a + b + c)` and Math.max(a, b, c) evaluate.
        const op: OpName = e.op === 'sum' ? 'add' : e.op;
        return parts.slice(1).reduce((acc, p) => g.op(op, acc, p), parts[0]);
      }
      case 'call': return this.call(e, env, place);
      default: throw new ExportError(`line ${e.range.start.line}: the scheme still holds a parse error`);
    }
  }

  private read(target: string, o: Offset, place: Place, range: SourceRange): number {
    const sym = this.scheme.symbols.get(target);
    const dx = o[0] ?? 0, dy = this.scheme.dims === 2 ? o[1] ?? 0 : 0;
    if (place === 'init' || place === 'sigma') throw new ExportError(`line ${range.start.line}: \`${target}\` is read in an initial value or blur width, which cannot export`);
    if (sym === 'field') return this.g.add({ k: 'read', buf: 'field', i: this.fieldIndex.get(target) as number, dx: dx === 0 ? 0 : dx, dy: dy === 0 ? 0 : dy });
    if (sym === 'let') return this.g.add({ k: 'read', buf: 'let', i: this.letIndex.get(target) as number, dx: dx === 0 ? 0 : dx, dy: dy === 0 ? 0 : dy });
    throw new ExportError(`line ${range.start.line}: \`${target}\` has no stored values`);
  }

  private call(e: Extract<Expr, { kind: 'call' }>, env: Env, place: Place): number {
    const g = this.g;
    const fn = this.scheme.functions.get(e.callee);
    if (fn) {
      if (env.depth > MAX_INLINE_DEPTH) throw new ExportError(`line ${e.range.start.line}: user functions nest too deeply`);
      const locals = new Map<string, number>();
      fn.params.forEach((p, k) => locals.set(p, this.lower(e.args[k], env, place)));
      // Inlined: the body sees its parameters and the scheme's top-level names, not the caller's locals.
      return this.lower(fn.body, { locals, offsets: new Map(), depth: env.depth + 1 }, place);
    }
    if (e.callee === 'len') {
      const a = e.args[0];
      const o = a?.kind === 'name' ? env.offsets.get(a.name) : undefined;
      if (!o) throw new ExportError(`line ${e.range.start.line}: len() takes a reduction variable`);
      return g.num(Math.hypot(...o));
    }
    if (e.callee === 'blur') throw new ExportError(`line ${e.range.start.line}: \`blur\` exports only as the whole right-hand side of a let`);
    const args = e.args.map(a => this.lower(a, env, place));
    switch (e.callee) {
      case 'abs': case 'sqrt': case 'exp': case 'log': case 'sin': case 'cos': case 'tanh': case 'sign':
        return g.op(e.callee, args[0]);
      case 'min': case 'max': return g.op(e.callee, args[0], args[1]);
      // The engine's Math.min(Math.max(a, lo), hi).
      case 'clamp': return g.op('min', g.op('max', args[0], args[1]), args[2]);
    }
    throw new ExportError(`line ${e.range.start.line}: the call \`${e.callee}\` has no export`);
  }
}

/** Lowers a checked scheme. Throws ExportError (naming the construct and its line) for what cannot export. */
export function lowerScheme(scheme: CheckedScheme): ExportIR {
  if (scheme.untilChange != null) {
    // The exported step functions take a step count; the change rule needs a reduction over the whole image
    // between steps, which the generated code does not carry. Refuse rather than export a different stop.
    throw new ExportError(`the scheme stops by \`until change < ${scheme.untilChange}\`, which the exported code cannot express: replace it by \`steps N\` (e.g. the step count a run with the change rule reports) and export again`);
  }
  const g = new Graph();
  const low = new Lowerer(scheme, g);
  try {
    const fields: ExportField[] = scheme.fields.map(f => ({
      name: f.name,
      boundary: f.boundary,
      updated: f.updated,
      init: f.init.kind === 'expr' ? low.lower(f.init.expr, ROOT, 'init') : null,
      ...(f.init.kind === 'image' ? { image: { input: f.init.input, channel: f.init.channel } } : {}),
      line: f.range.start.line,
    }));
    const params: ExportParam[] = scheme.params.map(p => ({ name: p.name, value: p.value, lo: p.lo, hi: p.hi }));
    const updates: ExportUpdate[] = scheme.updates.map(u => {
      const field = scheme.fields.findIndex(f => f.name === u.field);
      return { field, value: low.lower(u.expr, ROOT, 'update'), line: u.range.start.line };
    });

    // The engine's planHalo, kept symbolic: blur radii ⌊4σ + 0.5⌋ depend on params and are added at run time.
    const need = new Map<string, ExtentTerm[]>();
    const bump = (name: string, t: ExtentTerm) => need.set(name, [...(need.get(name) ?? []), t]);
    for (const u of scheme.updates) for (const [name, r] of readRadii(scheme, u.expr)) bump(name, { let: null, add: r, blur: null });
    const lets: ExportLet[] = new Array(scheme.lets.length);
    for (let k = scheme.lets.length - 1; k >= 0; k--) {
      const l = scheme.lets[k];
      const extent = need.get(l.name) ?? [];
      const line = l.range.start.line;
      if (l.kind === 'blur') {
        const srcLet = scheme.symbols.get(l.source) === 'let';
        const source = { buf: srcLet ? 'let' as const : 'field' as const, i: srcLet ? scheme.lets.findIndex(x => x.name === l.source) : scheme.fields.findIndex(f => f.name === l.source) };
        lets[k] = { kind: 'blur', name: l.name, source, sigma: low.lower(l.sigma, ROOT, 'sigma'), extent, line };
        bump(l.source, { let: k, add: 0, blur: k });
      } else {
        lets[k] = { kind: 'expr', name: l.name, value: low.lower(l.expr, ROOT, 'let'), extent, line };
        for (const [name, r] of readRadii(scheme, l.expr)) bump(name, { let: k, add: r, blur: null });
      }
    }
    const halo: ExtentTerm[] = [];
    for (const terms of need.values()) halo.push(...terms);
    return {
      dims: scheme.dims, spacing: scheme.spacing, dt: scheme.dt, steps: scheme.steps,
      fields, params, lets, updates, halo, graph: g, coordinateReads: low.coordinateReads,
    };
  } catch (err) {
    if (err instanceof EngineError) throw new ExportError(err.message);
    throw err;
  }
}

/** Evaluates the halo plan for given blur radii (per let; 0 for expr lets): returns every let's extent and the halo. */
export function evalHalo(ir: ExportIR, blurRadii: readonly number[]): { extents: number[]; halo: number } {
  const extents = new Array<number>(ir.lets.length).fill(0);
  const term = (t: ExtentTerm) => (t.let === null ? 0 : extents[t.let]) + t.add + (t.blur === null ? 0 : blurRadii[t.blur]);
  for (let k = ir.lets.length - 1; k >= 0; k--) extents[k] = ir.lets[k].extent.reduce((m, t) => Math.max(m, term(t)), 0);
  return { extents, halo: ir.halo.reduce((m, t) => Math.max(m, term(t)), 0) };
}
