// Generates the JavaScript kernels of the engine's sensitivity mode: every value travels with one tangent per chosen
// name (a `param` or `dt`), i.e. forward-mode derivatives with dual numbers, written out as straight-line code.
// Companion of codegen.ts (same naming rule: no text from the user's file reaches generated code; names become
// generated identifiers, numbers are re-printed from parsed values). Pure string building; no vscode, DOM or Node.
//
// Rules (a' is the tangent of a, one per chosen name; a zero tangent is tracked symbolically and never computed):
//   a ± b → a' ± b'      a·b → a'b + ab'      a/b → (a' − (a/b)·b')/b       a^n (n a literal) → n·a^(n−1)·a'
//   a^b → a^b·(b'·ln a + b·a'/a)      exp → e^a·a'   log → a'/a   sqrt → a'/(2√a)   sin → cos a·a'
//   cos → −sin a·a'   tanh → (1 − tanh² a)·a'   abs → sign(a)·a'   sign, comparisons, and/or/not → 0
//   min/max (calls and reductions), clamp: the tangent of the selected argument (the first one on ties)
//   if/then/else: the tangent of the branch taken (the condition itself has no derivative)
//   params: a seed 1 in their own slot; dt: seed 1 in its slot; t = step·dt: tangent `step` in dt's slot.

import type { Expr } from '../notation/ast';
import type { CheckedScheme, Offset } from '../notation/scheme';
import { Emitter, jsNumber, Names } from './codegen';
import { accessOffset, EngineError } from './plan';
import type { DType } from './types';

const MAX_INLINE_DEPTH = 64;

/** A value and its tangents as JavaScript text; null marks a tangent that is identically zero. */
interface Dual {
  readonly v: string;
  readonly d: readonly (string | null)[];
}

interface Env {
  readonly locals: ReadonlyMap<string, Dual>;
  readonly offsets: ReadonlyMap<string, Offset>;
  readonly depth: number;
}

const ROOT: Env = { locals: new Map(), offsets: new Map(), depth: 0 };

type Kind = 'init' | 'let' | 'update' | 'constant';

/** Lowers expressions to duals. `wrt` lists the chosen names in tangent order. */
class DualLowering {
  readonly nt: number;
  readonly dtSlot: number;
  constructor(
    readonly scheme: CheckedScheme,
    readonly names: Names,
    readonly em: Emitter,
    readonly kind: Kind,
    readonly wrt: readonly string[],
    readonly primedReady: Set<number>,
    readonly dtype: DType,
  ) {
    this.nt = wrt.length;
    this.dtSlot = wrt.indexOf('dt');
  }

  private zeros(): (string | null)[] {
    return new Array<string | null>(this.nt).fill(null);
  }

  private isSimple(js: string): boolean {
    return /^(?:[a-z][a-z0-9_]*|\(?-?[0-9.e+-]+\)?|NaN|Infinity)$/.test(js);
  }

  bind(js: string): string {
    if (this.isSimple(js)) return js;
    const known = this.em.lookup(js);
    if (known) return known;
    const t = this.em.temp();
    this.em.lines.push(`const ${t} = ${js};`);
    this.em.remember(js, t);
    return t;
  }

  private bindDual(x: Dual): Dual {
    return { v: this.bind(x.v), d: x.d.map(s => (s === null ? null : this.bind(s))) };
  }

  private seed(slot: number, tangent: string): (string | null)[] {
    const d = this.zeros();
    if (slot >= 0) d[slot] = tangent;
    return d;
  }

  private read(target: string, o: Offset | null): Dual {
    const f = this.names.field.get(target);
    const l = this.names.let.get(target);
    let buf: string;
    if (f !== undefined && this.scheme.symbols.get(target) === 'field') {
      if (this.kind === 'constant') throw new EngineError('a constant expression cannot read a field');
      buf = `c${f}`;
    } else if (l !== undefined && this.scheme.symbols.get(target) === 'let') {
      if (this.kind === 'init' || this.kind === 'constant') throw new EngineError('a field initialiser cannot read a let field');
      buf = `l${l}`;
    } else throw new EngineError('neighbour access to something that is not a field');
    let idx = 'i';
    if (o !== null && !o.every(c => c === 0)) {
      const full: Offset = this.scheme.dims === 1 ? [o[0], 0] : o;
      idx = `i + ${this.em.offset(full)}`;
    }
    const v = this.bind(`${buf}[${idx}]`);
    const d = this.wrt.map((_, j) => this.bind(`t${buf}_${j}[${idx}]`));
    return { v, d };
  }

  lower(e: Expr, env: Env): Dual {
    const r = this.lowerRaw(e, env);
    return { v: this.em.lookup(r.v) ?? r.v, d: r.d };
  }

  private add(a: string | null, b: string | null, op: '+' | '-'): string | null {
    if (a === null && b === null) return null;
    if (b === null) return a;
    if (a === null) return op === '+' ? b : `(-${b})`;
    return `(${a} ${op} ${b})`;
  }

  private lowerRaw(e: Expr, env: Env): Dual {
    switch (e.kind) {
      case 'number': return { v: jsNumber(e.value), d: this.zeros() };
      case 'name': {
        const local = env.locals.get(e.name);
        if (local !== undefined) return local;
        switch (this.scheme.symbols.get(e.name)) {
          case 'field': case 'let': return this.read(e.name, null);
          case 'param': {
            const k = this.names.param.get(e.name) as number;
            return { v: `p${k}`, d: this.seed(this.wrt.indexOf(e.name), '1') };
          }
          case 'constant':
            switch (e.name) {
              case 'pi': return { v: jsNumber(Math.PI), d: this.zeros() };
              case 'h': return { v: jsNumber(this.scheme.spacing), d: this.zeros() };
              case 'dt': return { v: 'dt', d: this.seed(this.dtSlot, '1') };
              // t = step·dt, so dt/d(dt) = step (the step count is held fixed: docs/sensitivities.md).
              case 't': return { v: 't', d: this.seed(this.dtSlot, 'st') };
              case 'x': case 'y':
                if (this.kind === 'constant') throw new EngineError('a constant expression cannot read x or y');
                return { v: e.name, d: this.zeros() };
            }
        }
        throw new EngineError('a name the engine cannot resolve');
      }
      case 'access': {
        if (e.primed) {
          const f = this.names.field.get(e.target);
          if (f === undefined || this.kind !== 'update' || !this.primedReady.has(f)) throw new EngineError('a primed value read before its update');
          if (e.offset !== null) throw new EngineError('primed values are read at the same pixel only');
          return { v: this.dtype === 'float32' ? `d${f}[i]` : `n${f}`, d: this.wrt.map((_, j) => `tn${f}_${j}`) };
        }
        const o = accessOffset(e, env.offsets);
        if (o === undefined) throw new EngineError('an offset variable outside its reduction');
        return this.read(e.target, o);
      }
      case 'unary': {
        const a = this.lower(e.operand, env);
        if (e.op === '-') return { v: `(-${a.v})`, d: a.d.map(s => (s === null ? null : `(-${s})`)) };
        if (e.op === '+') return { v: `(+${a.v})`, d: a.d };
        return { v: `(${a.v} === 0 ? 1 : 0)`, d: this.zeros() };
      }
      case 'binary': return this.binary(e, env);
      case 'if': {
        const c = this.bind(this.lower(e.cond, env).v);
        const { value: a, lines: thenLines } = this.em.block(() => this.lower(e.then, env));
        const { value: b, lines: elseLines } = this.em.block(() => this.lower(e.otherwise, env));
        const outer = this.em.lines;
        const d = this.zeros();
        const tv = this.em.temp();
        const td = a.d.map((s, j) => (s === null && b.d[j] === null ? null : `${tv}_${j}`));
        outer.push(`let ${[tv, ...td.filter((s): s is string => s !== null)].join(', ')};`);
        const assign = (x: Dual) => [`${tv} = ${x.v};`, ...td.flatMap((s, j) => (s === null ? [] : [`${s} = ${x.d[j] ?? '0'};`]))];
        outer.push(`if (${c} !== 0) {`, ...thenLines, ...assign(a), '} else {', ...elseLines, ...assign(b), '}');
        td.forEach((s, j) => (d[j] = s));
        return { v: tv, d };
      }
      case 'reduce': {
        const set = this.scheme.neighbourSets.get(e.set);
        if (!set) throw new EngineError('unknown neighbour set');
        const parts = set.map(o => {
          const inner = new Map(env.offsets);
          inner.set(e.variable, o);
          return this.bindDual(this.lower(e.body, { ...env, offsets: inner }));
        });
        if (e.op === 'sum') {
          if (parts.length === 0) return { v: '0', d: this.zeros() };
          const d = this.zeros().map((_, j) => {
            const nz = parts.map(p => p.d[j]).filter((s): s is string => s !== null);
            return nz.length ? `(${nz.join(' + ')})` : null;
          });
          return { v: `(${parts.map(p => p.v).join(' + ')})`, d };
        }
        if (parts.length === 0) return { v: e.op === 'max' ? '(-Infinity)' : 'Infinity', d: this.zeros() };
        return this.select(parts, e.op);
      }
      case 'call': return this.call(e, env);
      default: throw new EngineError('the scheme still holds a parse error');
    }
  }

  /**
   * max/min of several duals: the value as Math.max/min (NaN propagates), the tangent of the first argument that
   * attains it (a chain of strict comparisons), i.e. the derivative of the branch selected at this point.
   */
  private select(parts: Dual[], op: 'max' | 'min'): Dual {
    const v = `Math.${op}(${parts.map(p => p.v).join(', ')})`;
    if (parts.every(p => p.d.every(s => s === null))) return { v, d: this.zeros() };
    if (parts.length === 2) {
      const [a, b] = parts;
      const cmp = op === 'max' ? '>=' : '<=';
      return { v, d: a.d.map((s, j) => (s === null && b.d[j] === null ? null : `(${a.v} ${cmp} ${b.v} ? ${s ?? '0'} : ${b.d[j] ?? '0'})`)) };
    }
    const m = this.em.temp();
    const md = parts[0].d.map((_, j) => (parts.some(p => p.d[j] !== null) ? `${m}_${j}` : null));
    const live = md.map((s, j) => [s, j] as const).filter(([s]) => s !== null) as [string, number][];
    this.em.lines.push(`let ${m} = ${parts[0].v}${live.map(([s, j]) => `, ${s} = ${parts[0].d[j] ?? '0'}`).join('')};`);
    const cmp = op === 'max' ? '>' : '<';
    for (const p of parts.slice(1)) {
      this.em.lines.push(`if (${p.v} ${cmp} ${m}) { ${m} = ${p.v};${live.map(([s, j]) => ` ${s} = ${p.d[j] ?? '0'};`).join('')} }`);
    }
    return { v, d: md };
  }

  private binary(e: Extract<Expr, { kind: 'binary' }>, env: Env): Dual {
    if (e.op === '^') return this.power(e.left, e.right, env);
    const a = this.bindDual(this.lower(e.left, env));
    const b = this.bindDual(this.lower(e.right, env));
    switch (e.op) {
      case '+': case '-': return { v: `(${a.v} ${e.op} ${b.v})`, d: a.d.map((s, j) => this.add(s, b.d[j], e.op as '+' | '-')) };
      case '*': return {
        v: `(${a.v} * ${b.v})`,
        d: a.d.map((s, j) => this.add(s === null ? null : `(${s} * ${b.v})`, b.d[j] === null ? null : `(${a.v} * ${b.d[j]})`, '+')),
      };
      case '/': {
        const q = this.bind(`(${a.v} / ${b.v})`);
        return {
          v: q,
          d: a.d.map((s, j) => {
            const num = this.add(s, b.d[j] === null ? null : `(${q} * ${b.d[j]})`, '-');
            return num === null ? null : `(${num} / ${b.v})`;
          }),
        };
      }
      case '<': case '<=': case '>': case '>=': return { v: `(${a.v} ${e.op} ${b.v} ? 1 : 0)`, d: this.zeros() };
      case '==': return { v: `(${a.v} === ${b.v} ? 1 : 0)`, d: this.zeros() };
      case '!=': return { v: `(${a.v} !== ${b.v} ? 1 : 0)`, d: this.zeros() };
      case 'and': return { v: `(${a.v} !== 0 && ${b.v} !== 0 ? 1 : 0)`, d: this.zeros() };
      case 'or': return { v: `(${a.v} !== 0 || ${b.v} !== 0 ? 1 : 0)`, d: this.zeros() };
    }
    throw new EngineError('unknown operator');
  }

  private power(base: Expr, exp: Expr, env: Env): Dual {
    const a = this.bindDual(this.lower(base, env));
    if (exp.kind === 'number' && (exp.value === 1 || exp.value === 2 || exp.value === 3)) {
      const t = a.v;
      if (exp.value === 1) return { v: `(+${t})`, d: a.d };
      if (exp.value === 2) return { v: `(${t} * ${t})`, d: a.d.map(s => (s === null ? null : `(2 * ${t} * ${s})`)) };
      return { v: `(${t} * ${t} * ${t})`, d: a.d.map(s => (s === null ? null : `(3 * ${t} * ${t} * ${s})`)) };
    }
    const b = this.bindDual(this.lower(exp, env));
    const v = this.bind(`Math.pow(${a.v}, ${b.v})`);
    const bConst = b.d.every(s => s === null);
    return {
      v,
      d: a.d.map((s, j) => {
        const db = b.d[j];
        if (exp.kind === 'number' && exp.value === 0) return null;
        // Exponent without tangent: b·a^(b−1)·a', which stays finite for a ≤ 0 with integer b.
        if (bConst) return s === null ? null : `(${b.v} * Math.pow(${a.v}, ${b.v} - 1) * ${s})`;
        const viaB = db === null ? null : `(${db} * Math.log(${a.v}))`;
        const viaA = s === null ? null : `(${b.v} * ${s} / ${a.v})`;
        const sum = this.add(viaB, viaA, '+');
        return sum === null ? null : `(${v} * ${sum})`;
      }),
    };
  }

  private call(e: Extract<Expr, { kind: 'call' }>, env: Env): Dual {
    const fn = this.scheme.functions.get(e.callee);
    if (fn) {
      if (env.depth > MAX_INLINE_DEPTH) throw new EngineError('user functions nest too deeply');
      if (fn.params.length !== e.args.length) throw new EngineError('wrong number of arguments');
      const locals = new Map<string, Dual>();
      fn.params.forEach((p, k) => locals.set(p, this.bindDual(this.lower(e.args[k], env))));
      return this.lower(fn.body, { locals, offsets: new Map(), depth: env.depth + 1 });
    }
    if (e.callee === 'len') {
      const a = e.args[0];
      const o = a?.kind === 'name' ? env.offsets.get(a.name) : undefined;
      if (!o) throw new EngineError('len() takes a reduction variable');
      return { v: jsNumber(Math.hypot(...o)), d: this.zeros() };
    }
    const args = e.args.map(x => this.bindDual(this.lower(x, env)));
    const need = (n: number) => {
      if (args.length !== n) throw new EngineError('wrong number of arguments');
    };
    const unary = (v: string, dOf: (s: string, value: string, arg: string) => string): Dual => {
      need(1);
      const a = args[0];
      const value = this.bind(v);
      return { v: value, d: a.d.map(s => (s === null ? null : dOf(s, value, a.v))) };
    };
    const a0 = args[0]?.v;
    switch (e.callee) {
      case 'abs': return unary(`Math.abs(${a0})`, (s, _v, a) => `(Math.sign(${a}) * ${s})`);
      case 'sqrt': return unary(`Math.sqrt(${a0})`, (s, v) => `(${s} / (2 * ${v}))`);
      case 'exp': return unary(`Math.exp(${a0})`, (s, v) => `(${v} * ${s})`);
      case 'log': return unary(`Math.log(${a0})`, (s, _v, a) => `(${s} / ${a})`);
      case 'sin': return unary(`Math.sin(${a0})`, (s, _v, a) => `(Math.cos(${a}) * ${s})`);
      case 'cos': return unary(`Math.cos(${a0})`, (s, _v, a) => `(-Math.sin(${a}) * ${s})`);
      case 'tanh': return unary(`Math.tanh(${a0})`, (s, v) => `((1 - ${v} * ${v}) * ${s})`);
      case 'sign': need(1); return { v: `Math.sign(${a0})`, d: this.zeros() };
      case 'min': need(2); return this.select(args, 'min');
      case 'max': need(2); return this.select(args, 'max');
      case 'clamp': {
        need(3);
        const lo = this.bindDual(this.select([args[0], args[1]], 'max'));
        return this.select([lo, args[2]], 'min');
      }
    }
    throw new EngineError('a call the engine does not know');
  }
}

function prologue(scheme: CheckedScheme, wrt: readonly string[]): string[] {
  const lines = [
    'const W = g.width, H = g.height, pw = g.pw, hx = g.haloX, hy = g.haloY;',
    'const P = ctx.params, dt = ctx.dt, t = ctx.t, st = T.step;',
  ];
  scheme.fields.forEach((_, k) => {
    lines.push(`const c${k} = ctx.cur[${k}];`);
    wrt.forEach((_n, j) => lines.push(`const tc${k}_${j} = T.cur[${k}][${j}];`));
  });
  scheme.lets.forEach((_, k) => {
    lines.push(`const l${k} = ctx.lets[${k}];`);
    wrt.forEach((_n, j) => lines.push(`const tl${k}_${j} = T.lets[${k}][${j}];`));
  });
  scheme.params.forEach((_, k) => lines.push(`const p${k} = P[${k}];`));
  return lines;
}

export interface DualSource {
  /** Body of a factory `() => ({ inits, lets, sigmas, update })`. */
  readonly source: string;
}

/**
 * The dual kernels of a scheme for the chosen names `wrt` (declared params and/or `dt`): field initialisers, `expr`
 * lets over the extended grid, blur sigmas (value and tangents of the constant expression), and the fused update.
 * Kernels take (g, ctx, T) where T = { cur, next, lets: per field or let, per chosen name, a padded Float64Array;
 * step: the step index }. Values are written exactly where the plain kernels write them.
 */
export function generateDualSource(scheme: CheckedScheme, dtype: DType, wrt: readonly string[]): DualSource {
  const names = new Names(scheme);
  for (const w of wrt) if (w !== 'dt' && !names.param.has(w)) throw new EngineError(`no parameter '${w}' to differentiate by`);
  const out: string[] = ['"use strict";'];
  const store = (target: string, d: readonly (string | null)[]) => d.map((s, j) => `${target}_${j}[i] = ${s ?? '0'};`);

  const inits: string[] = [];
  scheme.fields.forEach((f, k) => {
    if (f.init.kind !== 'expr') {
      inits.push('null');
      return;
    }
    const em = new Emitter();
    const low = new DualLowering(scheme, names, em, 'init', wrt, new Set(), dtype);
    const r = low.lower(f.init.expr, ROOT);
    out.push(
      `function init${k}(g, ctx, T) {`, ...prologue(scheme, wrt), ...em.offsetDecls(),
      'for (let y = 0; y < H; y++) {', 'let i = (y + hy) * pw + hx;', 'for (let x = 0; x < W; x++, i++) {',
      ...em.lines, `c${k}[i] = ${r.v};`, ...store(`tc${k}`, r.d), '}', '}', '}',
    );
    inits.push(`init${k}`);
  });

  const lets: string[] = [];
  const sigmas: string[] = [];
  scheme.lets.forEach((l, k) => {
    if (l.kind !== 'expr') {
      lets.push('null');
      const em = new Emitter();
      const low = new DualLowering(scheme, names, em, 'constant', wrt, new Set(), dtype);
      const r = low.lower(l.sigma, ROOT);
      out.push(
        `function sigma${k}(ctx, T) {`, 'const P = ctx.params, dt = ctx.dt, t = ctx.t, st = T.step;',
        ...scheme.params.map((_, q) => `const p${q} = P[${q}];`), ...em.lines,
        `return [${[r.v, ...r.d.map(s => s ?? '0')].join(', ')}];`, '}',
      );
      sigmas.push(`sigma${k}`);
      return;
    }
    sigmas.push('null');
    const em = new Emitter();
    const low = new DualLowering(scheme, names, em, 'let', wrt, new Set(), dtype);
    const r = low.lower(l.expr, ROOT);
    const ey = scheme.dims === 2 ? 'e' : '0';
    out.push(
      `function let${k}(g, ctx, T, e) {`, ...prologue(scheme, wrt), ...em.offsetDecls(),
      `for (let y = -${ey}; y < H + ${ey}; y++) {`, 'let i = (y + hy) * pw + hx - e;', 'for (let x = -e; x < W + e; x++, i++) {',
      ...em.lines, `l${k}[i] = ${r.v};`, ...store(`tl${k}`, r.d), '}', '}', '}',
    );
    lets.push(`let${k}`);
  });

  const em = new Emitter();
  const ready = new Set<number>();
  const low = new DualLowering(scheme, names, em, 'update', wrt, ready, dtype);
  const body: string[] = [];
  const init: string[] = [];
  const storeMon: string[] = [];
  for (const u of scheme.updates) {
    const k = names.field.get(u.field);
    if (k === undefined) throw new EngineError('an update of an unknown field');
    em.lines = [];
    const r = low.lower(u.expr, ROOT);
    body.push(...em.lines, `const n${k} = ${r.v};`, `d${k}[i] = n${k};`);
    r.d.forEach((s, j) => body.push(`const tn${k}_${j} = ${s ?? '0'};`, `td${k}_${j}[i] = tn${k}_${j};`));
    body.push(`mn${k} = Math.min(mn${k}, n${k});`, `mx${k} = Math.max(mx${k}, n${k});`);
    ready.add(k);
    init.push(`const d${k} = ctx.next[${k}];`, `let mn${k} = Infinity, mx${k} = -Infinity;`);
    wrt.forEach((_, j) => init.push(`const td${k}_${j} = T.next[${k}][${j}];`));
    storeMon.push(`M.min[${k}] = mn${k};`, `M.max[${k}] = mx${k};`, `M.bad[${k}] = (mn${k} - mn${k}) + (mx${k} - mx${k});`);
  }
  out.push(
    'function update(g, ctx, T) {', ...prologue(scheme, wrt), 'const M = ctx.monitor;', ...init, ...em.offsetDecls(),
    'for (let y = 0; y < H; y++) {', 'let i = (y + hy) * pw + hx;', 'for (let x = 0; x < W; x++, i++) {',
    ...body, '}', '}', ...storeMon, '}',
  );
  out.push(`return { inits: [${inits.join(', ')}], lets: [${lets.join(', ')}], sigmas: [${sigmas.join(', ')}], update };`);
  return { source: out.join('\n') };
}
