// Lowers a checked scheme's update and `expr`-let expressions into a small hash-consed graph of per-pixel values
// (the input of the SIMD kernel emitter). It follows codegen.ts's decisions (inlined functions, unrolled reductions,
// small integer powers as products, division by a loop-invariant value as a product with its reciprocal), so both
// backends compute the same formulas. Must not import vscode, the DOM or Node modules.

import type { Expr } from '../../notation/ast';
import type { CheckedScheme, Offset } from '../../notation/scheme';
import { offsetComponent } from '../plan';

const MAX_INLINE_DEPTH = 64;

/** A construct the SIMD backend does not vectorise; the scheme then runs on the JavaScript backend. */
export class Unsupported extends Error {
  constructor(readonly construct: string, readonly line: number) {
    super(`${construct} at line ${line}`);
    this.name = 'Unsupported';
  }
}

export type NodeOp =
  | 'const' | 'param' | 'dt' | 't' | 'x' | 'y' | 'load'
  | 'neg' | 'abs' | 'sqrt' | 'sign' | 'exp' | 'log' | 'sin' | 'cos' | 'tanh'
  | 'add' | 'sub' | 'mul' | 'div' | 'min' | 'max' | 'pow'
  | 'lt' | 'le' | 'gt' | 'ge' | 'eq' | 'ne'
  | 'and' | 'or' | 'not' | 'select' | 'num' | 'truth'
  /**
   * args [F, T]: the value T, which equals -F one pixel to the left (x) or one row up (y); see Graph.reuse. value 1:
   * worth carrying to the next vector or row; 0 (y only): worth it only between the two rows of a pair (kernel.ts).
   */
  | 'reusex' | 'reusey';

/** Buffer a load reads: a current field (c) or a let (l). */
export interface BufRef {
  readonly kind: 'c' | 'l';
  readonly index: number;
}

export interface Node {
  readonly id: number;
  readonly op: NodeOp;
  readonly args: readonly number[];
  /** The literal of a const, the index of a param. */
  readonly value: number;
  readonly buf?: BufRef;
  readonly dx?: number;
  readonly dy?: number;
  /** Loop-invariant: depends on params, dt, t and constants only (computed once per kernel call, in Float64). */
  readonly inv: boolean;
  /** A lane mask (all ones for true) rather than a number. */
  readonly mask: boolean;
  /** Source line, for the fallback message. */
  readonly line: number;
}

export const MASK_OPS: ReadonlySet<NodeOp> = new Set(['lt', 'le', 'gt', 'ge', 'eq', 'ne', 'and', 'or', 'not', 'truth']);

export class Graph {
  readonly nodes: Node[] = [];
  private readonly memo = new Map<string, number>();
  /** Nodes written `1 / X` in the source, so that `(1 / X) * Y` becomes `Y / X` as in codegen.ts. */
  readonly reciprocals = new Map<number, number>();

  make(op: NodeOp, args: number[], line: number, extra: { value?: number; buf?: BufRef; dx?: number; dy?: number } = {}): number {
    const value = extra.value ?? 0;
    const key = `${op}|${args.join(',')}|${Object.is(value, -0) ? '-0' : String(value)}|${extra.buf ? extra.buf.kind + extra.buf.index : ''}|${extra.dx ?? ''},${extra.dy ?? ''}`;
    const hit = this.memo.get(key);
    if (hit !== undefined) return hit;
    const variantLeaf = op === 'load' || op === 'x' || op === 'y';
    const inv = !variantLeaf && args.every(a => this.nodes[a].inv);
    const id = this.nodes.length;
    this.nodes.push({ id, op, args, value, buf: extra.buf, dx: extra.dx, dy: extra.dy, inv, mask: MASK_OPS.has(op), line });
    this.memo.set(key, id);
    return id;
  }
  num(id: number, line: number): number {
    return this.nodes[id].mask ? this.make('num', [id], line) : id;
  }
  truth(id: number, line: number): number {
    return this.nodes[id].mask ? id : this.make('truth', [id], line);
  }
  constant(v: number, line: number): number {
    return this.make('const', [], line, { value: v });
  }

  /** The node with every load moved by (dx, dy); null where that is not a pure translation (x, y, reused values). */
  shift(id: number, dx: number, dy: number): number | null {
    const n = this.nodes[id];
    if (n.inv) return id;
    if (n.op === 'load') return this.make('load', [], n.line, { buf: n.buf, dx: (n.dx ?? 0) + dx, dy: (n.dy ?? 0) + dy });
    if (n.op === 'x' || n.op === 'y' || n.op === 'reusex' || n.op === 'reusey') return null;
    const args: number[] = [];
    for (const a of n.args) {
      const b = this.shift(a, dx, dy);
      if (b === null) return null;
      args.push(b);
    }
    return this.make(n.op, args, n.line, { value: n.value });
  }

  /**
   * A canonical form up to sign: (c, s) with value(id) = s·value(c) exactly in IEEE arithmetic, using only rules that
   * hold bit for bit: a - b = -(b - a), (-a) - (-b) = -(a - b), a - (-b) = a + b, commutative + and ·, (-a)·b = -(a·b),
   * (-a)/b = -(a/b). Any other operation keeps its arguments as they are (signs materialised).
   */
  canon(id: number, memo = new Map<number, [number, number]>()): [number, number] {
    const hit = memo.get(id);
    if (hit) return hit;
    const n = this.nodes[id];
    const line = n.line;
    let out: [number, number];
    const ordered = (op: 'add' | 'mul', a: number, b: number) => this.make(op, a <= b ? [a, b] : [b, a], line);
    const diff = (a: number, b: number, sign: number): [number, number] =>
      a <= b ? [this.make('sub', [a, b], line), sign] : [this.make('sub', [b, a], line), -sign];
    if (n.op === 'sub' || n.op === 'add') {
      const [a, sa] = this.canon(n.args[0], memo), [b, sb] = this.canon(n.args[1], memo);
      const same = sa === sb;
      if (n.op === 'sub') out = same ? diff(a, b, sa) : [ordered('add', a, b), sa];
      else out = same ? [ordered('add', a, b), sa] : diff(a, b, sa);
    } else if (n.op === 'neg') {
      const [a, sa] = this.canon(n.args[0], memo);
      out = [a, -sa];
    } else if (n.op === 'mul' || n.op === 'div') {
      const [a, sa] = this.canon(n.args[0], memo), [b, sb] = this.canon(n.args[1], memo);
      out = [n.op === 'mul' ? ordered('mul', a, b) : this.make('div', [a, b], line), sa * sb];
    } else if (n.args.length === 0) {
      out = [id, 1];
    } else {
      const args = n.args.map(a => {
        const [c, sc] = this.canon(a, memo);
        return sc < 0 ? this.make('neg', [c], line) : c;
      });
      out = [this.make(n.op, args, line, { value: n.value, buf: n.buf, dx: n.dx, dy: n.dy }), 1];
    }
    memo.set(id, out);
    return out;
  }

  /**
   * Taking a flux from the vector before costs a shuffle (from the row above: a load and a store), and the sum
   * subtracts it instead of adding the term: worth it along x for any term (the shuffle runs beside the sums, which
   * keep the floating-point add ports busy: a 5-point heat kernel took 7% less time), along y only for a term with a
   * division, square root or exp, or several other operations (a cheap term took 6% more time). A cheap term along
   * y is still marked, for the kernels that take rows in pairs and hand the flux from one to the other in a register.
   */
  private worthReusing(id: number, axis: 'x' | 'y'): boolean {
    if (axis === 'x') return true;
    const seen = new Set<number>();
    let ops = 0, costly = false;
    const walk = (k: number): void => {
      const n = this.nodes[k];
      if (n.inv || seen.has(k) || n.op === 'load') return;
      seen.add(k);
      ops++;
      if (n.op === 'div' || n.op === 'sqrt' || n.op === 'exp') costly = true;
      n.args.forEach(walk);
    };
    walk(id);
    return costly || ops >= 6;
  }

  /**
   * For a sum over a set holding both o and -o (o one step right or down): when the term at -o is exactly minus the
   * term at o taken one pixel back (the flux through a shared face, written for both pixels), the term at -o
   * becomes a reuse node, so kernels compute each face's flux once. Returns the new term, or the old one.
   */
  reuse(forward: number, backward: number, axis: 'x' | 'y', line: number): number {
    const back = this.shift(forward, axis === 'x' ? -1 : 0, axis === 'y' ? -1 : 0);
    if (back === null || this.nodes[forward].inv) return backward;
    const memo = new Map<number, [number, number]>();
    const [c1, s1] = this.canon(backward, memo), [c2, s2] = this.canon(back, memo);
    if (c1 !== c2 || s1 !== -s2) return backward;
    return this.make(axis === 'x' ? 'reusex' : 'reusey', [forward, backward], line, { value: this.worthReusing(backward, axis) ? 1 : 0 });
  }
}

interface Env {
  readonly locals: ReadonlyMap<string, number>;
  readonly offsets: ReadonlyMap<string, Offset>;
  readonly depth: number;
}

const ROOT: Env = { locals: new Map(), offsets: new Map(), depth: 0 };

/** One kernel's graph: the values to store (update: one per updated field, in order; let: one). */
export interface KernelGraph {
  readonly graph: Graph;
  readonly stores: readonly { readonly field: number; readonly node: number }[];
}

class Lowerer {
  readonly g = new Graph();
  /** Off only to check that reusing fluxes changes no bit. */
  reuseFluxes = true;
  private readonly field = new Map<string, number>();
  private readonly let = new Map<string, number>();
  private readonly param = new Map<string, number>();
  /** New values of fields already updated in this kernel (primed reads). */
  readonly ready = new Map<number, number>();

  constructor(readonly scheme: CheckedScheme) {
    scheme.fields.forEach((f, k) => this.field.set(f.name, k));
    scheme.lets.forEach((l, k) => this.let.set(l.name, k));
    scheme.params.forEach((p, k) => this.param.set(p.name, k));
  }

  private read(target: string, o: Offset | null, line: number): number {
    const sym = this.scheme.symbols.get(target);
    let buf: BufRef;
    if (sym === 'field' && this.field.has(target)) buf = { kind: 'c', index: this.field.get(target) as number };
    else if (sym === 'let' && this.let.has(target)) buf = { kind: 'l', index: this.let.get(target) as number };
    else throw new Unsupported('a neighbour access the engine cannot resolve', line);
    const full = o === null ? [0, 0] : this.scheme.dims === 1 ? [o[0], 0] : [o[0], o[1] ?? 0];
    return this.g.make('load', [], line, { buf, dx: full[0], dy: full[1] });
  }

  lower(e: Expr, env: Env): number {
    const g = this.g;
    const line = e.range.start.line;
    switch (e.kind) {
      case 'number': return g.constant(e.value, line);
      case 'name': {
        const local = env.locals.get(e.name);
        if (local !== undefined) return local;
        switch (this.scheme.symbols.get(e.name)) {
          case 'field': case 'let': return this.read(e.name, null, line);
          case 'param': return g.make('param', [], line, { value: this.param.get(e.name) as number });
          case 'constant':
            switch (e.name) {
              case 'pi': return g.constant(Math.PI, line);
              case 'h': return g.constant(this.scheme.spacing, line);
              case 'dt': return g.make('dt', [], line);
              case 't': return g.make('t', [], line);
              case 'x': return g.make('x', [], line);
              case 'y': return g.make('y', [], line);
            }
        }
        throw new Unsupported('a name the engine cannot resolve', line);
      }
      case 'access': {
        if (e.primed) {
          const f = this.field.get(e.target);
          const v = f === undefined ? undefined : this.ready.get(f);
          if (v === undefined || e.offset !== null) throw new Unsupported('a primed read', line);
          // The stored value is the lane value itself: Float32 lanes are already rounded as the store rounds.
          return v;
        }
        let o: Offset | null = null;
        if (e.offset?.kind === 'literal') o = e.offset.components.map(offsetComponent);
        else if (e.offset?.kind === 'variable') {
          const bound = env.offsets.get(e.offset.name);
          if (!bound) throw new Unsupported('an offset variable outside its reduction', line);
          o = bound;
        }
        return this.read(e.target, o, line);
      }
      case 'unary': {
        const a = this.lower(e.operand, env);
        if (e.op === '-') return g.make('neg', [g.num(a, line)], line);
        if (e.op === '+') return g.num(a, line);
        return g.make('not', [g.truth(a, line)], line);
      }
      case 'binary': {
        if (e.op === '^') return this.power(e.left, e.right, env, line);
        const a = g.num(this.lower(e.left, env), line);
        const b = g.num(this.lower(e.right, env), line);
        const cmp = { '<': 'lt', '<=': 'le', '>': 'gt', '>=': 'ge', '==': 'eq', '!=': 'ne' } as const;
        switch (e.op) {
          case '+': return g.make('add', [a, b], line);
          case '-': return g.make('sub', [a, b], line);
          case '*': {
            const ra = g.reciprocals.get(a), rb = g.reciprocals.get(b);
            if (ra !== undefined) return g.make('div', [b, ra], line);
            if (rb !== undefined) return g.make('div', [a, rb], line);
            return g.make('mul', [a, b], line);
          }
          case '/': {
            if (g.nodes[b].inv) {
              // As codegen.ts (also inside invariant parts): a division by a loop-invariant value is a product with its reciprocal.
              return g.make('mul', [a, g.make('div', [g.constant(1, line), b], line)], line);
            }
            const d = g.make('div', [a, b], line);
            if (e.left.kind === 'number' && e.left.value === 1) g.reciprocals.set(d, b);
            return d;
          }
          case 'and': return g.make('and', [g.truth(a, line), g.truth(b, line)], line);
          case 'or': return g.make('or', [g.truth(a, line), g.truth(b, line)], line);
          default: return g.make(cmp[e.op], [a, b], line);
        }
      }
      case 'if': {
        const c = g.truth(this.lower(e.cond, env), line);
        const a = g.num(this.lower(e.then, env), line);
        const b = g.num(this.lower(e.otherwise, env), line);
        return g.make('select', [c, a, b], line);
      }
      case 'reduce': {
        const set = this.scheme.neighbourSets.get(e.set);
        if (!set) throw new Unsupported('an unknown neighbour set', line);
        const parts = set.map(o => {
          const inner = new Map(env.offsets);
          inner.set(e.variable, o);
          return g.num(this.lower(e.body, { ...env, offsets: inner }), line);
        });
        if (parts.length === 0) return g.constant(e.op === 'sum' ? 0 : e.op === 'max' ? -Infinity : Infinity, line);
        if (e.op === 'sum' && this.reuseFluxes) {
          const at = (dx: number, dy: number) => set.findIndex(o => o[0] === dx && (o[1] ?? 0) === dy);
          for (const [dx, dy, axis] of [[1, 0, 'x'], [0, 1, 'y']] as const) {
            const f = at(dx, dy), b = at(-dx, -dy);
            if (f >= 0 && b >= 0 && (axis === 'x' || this.scheme.dims === 2)) parts[b] = g.reuse(parts[f], parts[b], axis, line);
          }
        }
        const op = e.op === 'sum' ? 'add' : e.op;
        return parts.slice(1).reduce((acc, p) => g.make(op, [acc, p], line), parts[0]);
      }
      case 'call': return this.call(e, env, line);
      default: throw new Unsupported('a parse error', line);
    }
  }

  private power(base: Expr, exp: Expr, env: Env, line: number): number {
    const g = this.g;
    const b = g.num(this.lower(base, env), line);
    // A literal exponent, possibly negated (`u^-2`).
    const lit = exp.kind === 'number' ? exp.value
      : exp.kind === 'unary' && exp.op === '-' && exp.operand.kind === 'number' ? -exp.operand.value : NaN;
    if (Number.isInteger(lit) && Math.abs(lit) <= 16 && (exp.kind === 'number' || !g.nodes[b].inv)) {
      const n = lit;
      // 1, 2, 3 are products in codegen.ts too; other small integers are exact-enough products here (a few ulps).
      if (n === 1) return b;
      if (n === 2) return g.make('mul', [b, b], line);
      if (n === 3) return g.make('mul', [g.make('mul', [b, b], line), b], line);
      if (g.nodes[b].inv) return g.make('pow', [b, g.constant(n, line)], line);
      if (n === 0) return g.constant(1, line);
      let acc = b;
      for (let k = 1; k < Math.abs(n); k++) acc = g.make('mul', [acc, b], line);
      return n < 0 ? g.make('div', [g.constant(1, line), acc], line) : acc;
    }
    const x = g.num(this.lower(exp, env), line);
    return g.make('pow', [b, x], line);
  }

  private call(e: Extract<Expr, { kind: 'call' }>, env: Env, line: number): number {
    const g = this.g;
    const fn = this.scheme.functions.get(e.callee);
    if (fn) {
      if (env.depth > MAX_INLINE_DEPTH || fn.params.length !== e.args.length) throw new Unsupported('a user function call', line);
      const locals = new Map<string, number>();
      fn.params.forEach((p, k) => locals.set(p, this.lower(e.args[k], env)));
      return this.lower(fn.body, { locals, offsets: new Map(), depth: env.depth + 1 });
    }
    if (e.callee === 'len') {
      const a = e.args[0];
      const o = a?.kind === 'name' ? env.offsets.get(a.name) : undefined;
      if (!o) throw new Unsupported('len() of something that is not a reduction variable', line);
      return g.constant(Math.hypot(...o), line);
    }
    const args = e.args.map(a => g.num(this.lower(a, env), line));
    const need = (n: number) => {
      if (args.length !== n) throw new Unsupported(`${e.callee}() with ${args.length} arguments`, line);
    };
    switch (e.callee) {
      case 'abs': case 'sqrt': case 'exp': case 'log': case 'sin': case 'cos': case 'tanh': case 'sign':
        need(1);
        return g.make(e.callee, args, line);
      case 'min': case 'max':
        need(2);
        return g.make(e.callee, args, line);
      case 'clamp':
        need(3);
        return g.make('min', [g.make('max', [args[0], args[1]], line), args[2]], line);
    }
    throw new Unsupported(`the call ${e.callee}()`, line);
  }
}

/** The update kernel's graph: every update in evaluation order, primed reads bound to earlier new values. */
export function updateGraph(scheme: CheckedScheme, opts: { reuseFluxes?: boolean } = {}): KernelGraph {
  const low = new Lowerer(scheme);
  low.reuseFluxes = opts.reuseFluxes ?? true;
  const stores: { field: number; node: number }[] = [];
  for (const u of scheme.updates) {
    const k = scheme.fields.findIndex(f => f.name === u.field);
    if (k < 0) throw new Unsupported('an update of an unknown field', u.range.start.line);
    const node = low.g.num(low.lower(u.expr, ROOT), u.range.start.line);
    stores.push({ field: k, node });
    low.ready.set(k, node);
  }
  return { graph: low.g, stores };
}

/** The graph of `expr` let number `index`. */
export function letGraph(scheme: CheckedScheme, index: number, opts: { reuseFluxes?: boolean } = {}): KernelGraph {
  const l = scheme.lets[index];
  if (l.kind !== 'expr') throw new Unsupported('a blur let', l.range.start.line);
  const low = new Lowerer(scheme);
  low.reuseFluxes = opts.reuseFluxes ?? true;
  const node = low.g.num(low.lower(l.expr, ROOT), l.range.start.line);
  return { graph: low.g, stores: [{ field: index, node }] };
}
