// Generates JavaScript source for a checked scheme's kernels: field inits, `expr` lets and the fused update loop.
// Owns the rule that no text from the user's file reaches generated code: every name becomes a generated
// identifier (c0, p1, v7, ...) and every number is re-printed from its parsed value.
// Must not import vscode, the DOM or Node modules; it only builds strings (jsBackend.ts turns them into functions).

import type { Expr } from '../notation/ast';
import type { CheckedScheme, Offset } from '../notation/scheme';
import type { DType } from './types';
import { accessOffset, EngineError } from './plan';

const MAX_INLINE_DEPTH = 64;

/**
 * Prints a number as a JavaScript literal. Only digits, '.', 'e', signs and the words NaN/Infinity can come out,
 * and the result is checked against that alphabet, so a hostile AST cannot smuggle code through a "number".
 */
export function jsNumber(v: unknown): string {
  if (typeof v !== 'number') throw new EngineError('a number literal is not a number');
  if (Number.isNaN(v)) return 'NaN';
  if (v === Infinity) return 'Infinity';
  if (v === -Infinity) return '(-Infinity)';
  if (Object.is(v, -0)) return '(-0)';
  const s = String(v);
  if (!/^-?[0-9]+(\.[0-9]+)?(e[+-][0-9]+)?$/.test(s)) throw new EngineError(`cannot print number ${s}`);
  return v < 0 ? `(${s})` : s;
}

type Kind = 'init' | 'let' | 'update';

/** Statements being emitted, with a counter for fresh temporaries (also used by dualCodegen.ts). */
export class Emitter {
  lines: string[] = [];
  /** Loop-invariant statements (params, constants, dt, t only), placed before the pixel loops. */
  readonly hoisted: string[] = [];
  readonly hoistMemo = new Map<string, string>();
  /** Per block: expression text already held by a temporary (common subexpressions are computed once). */
  private memo: Map<string, string>[] = [new Map()];
  private n = 0;
  readonly offsets = new Map<string, string>();
  temp(): string {
    return `v${this.n++}`;
  }
  lookup(js: string): string | undefined {
    return this.memo[this.memo.length - 1].get(js);
  }
  remember(js: string, name: string): void {
    this.memo[this.memo.length - 1].set(js, name);
  }
  /** A nested block (an if branch) sees the outer temporaries; its own die with it. */
  pushScope(): void {
    this.memo.push(new Map(this.memo[this.memo.length - 1]));
  }
  popScope(): void {
    this.memo.pop();
  }
  /** Runs `lower` into a block of its own (an if branch, in its own scope) and gives its value and statements. */
  block<T>(lower: () => T): { value: T; lines: string[] } {
    const outer = this.lines;
    this.lines = [];
    this.pushScope();
    const value = lower();
    this.popScope();
    const lines = this.lines;
    this.lines = outer;
    return { value, lines };
  }
  /** The generated name of the index offset dx + dy·pw, declared once at the top of the kernel. */
  offset(o: Offset): string {
    const key = o.join(',');
    let name = this.offsets.get(key);
    if (!name) {
      name = `o${this.offsets.size}`;
      this.offsets.set(key, name);
    }
    return name;
  }
  offsetDecls(): string[] {
    const out: string[] = [];
    for (const [key, name] of this.offsets) {
      const [dx, dy] = key.split(',').map(Number);
      out.push(`const ${name} = ${jsNumber(dx)} + ${jsNumber(dy ?? 0)} * pw;`);
    }
    return out;
  }
}

interface Env {
  /** Function parameters in scope, bound to generated temporaries or literals. */
  readonly locals: ReadonlyMap<string, string>;
  /** Reduction variables in scope, bound to one concrete offset each (reductions are unrolled). */
  readonly offsets: ReadonlyMap<string, Offset>;
  /** Function parameters whose argument is loop-invariant. */
  readonly invariantLocals: ReadonlySet<string>;
  readonly depth: number;
}

/** Maps scheme names to generated identifiers; the user's spelling is only ever a map key. */
export class Names {
  readonly field = new Map<string, number>();
  readonly let = new Map<string, number>();
  readonly param = new Map<string, number>();
  constructor(readonly scheme: CheckedScheme) {
    scheme.fields.forEach((f, k) => this.field.set(f.name, k));
    scheme.lets.forEach((l, k) => this.let.set(l.name, k));
    scheme.params.forEach((p, k) => this.param.set(p.name, k));
  }
}

class Lowering {
  constructor(
    readonly scheme: CheckedScheme,
    readonly names: Names,
    readonly em: Emitter,
    readonly kind: Kind,
    /** Fields whose new value is already in a local `nK` (update kernel only). */
    readonly primedReady: Set<number>,
    readonly dtype: DType = 'float64',
  ) {}

  private isSimple(js: string): boolean {
    return /^(?:[a-z][a-z0-9]*|\(?-?[0-9.e+-]+\)?|NaN|Infinity)$/.test(js);
  }

  /** `(1 / X)` results, so that `(1 / X) * Y` can become `Y / X` (one division fewer, at most an ulp apart). */
  private readonly reciprocals = new Map<string, string>();

  private bind(js: string): string {
    if (this.isSimple(js)) return js;
    const known = this.em.lookup(js);
    if (known) return known;
    const t = this.em.temp();
    this.em.lines.push(`const ${t} = ${js};`);
    this.em.remember(js, t);
    return t;
  }

  /** Binds loop-invariant text once, before the loops. */
  private hoistJs(js: string): string {
    if (this.isSimple(js)) return js;
    const known = this.em.hoistMemo.get(js);
    if (known) return known;
    const t = this.em.temp();
    this.em.hoisted.push(`const ${t} = ${js};`);
    this.em.hoistMemo.set(js, t);
    return t;
  }

  /** True when `e` reads nothing that changes inside a kernel call (no fields, lets, x, y or reductions). */
  invariant(e: Expr, env: Env): boolean {
    switch (e.kind) {
      case 'number': return true;
      case 'name':
        if (env.locals.has(e.name)) return env.invariantLocals.has(e.name);
        switch (this.scheme.symbols.get(e.name)) {
          case 'param': return true;
          case 'constant': return e.name !== 'x' && e.name !== 'y';
          default: return false;
        }
      case 'unary': return this.invariant(e.operand, env);
      case 'binary': return this.invariant(e.left, env) && this.invariant(e.right, env);
      case 'if': return this.invariant(e.cond, env) && this.invariant(e.then, env) && this.invariant(e.otherwise, env);
      case 'call': {
        if (e.callee === 'len' || !e.args.every(a => this.invariant(a, env))) return false;
        const fn = this.scheme.functions.get(e.callee);
        if (!fn) return true;
        if (env.depth > MAX_INLINE_DEPTH) throw new EngineError('user functions nest too deeply');
        return this.invariant(fn.body, { locals: new Map(fn.params.map(p => [p, p])), offsets: new Map(), invariantLocals: new Set(fn.params), depth: env.depth + 1 });
      }
      default: return false;
    }
  }

  lower(e: Expr, env: Env): string {
    if (e.kind !== 'number' && e.kind !== 'name' && this.invariant(e, env)) {
      // Lowered with the loop body swapped out, so any statements it needs land before the loops too.
      const outer = this.em.lines;
      this.em.lines = this.em.hoisted;
      const js = this.lowerRaw(e, env);
      this.em.lines = outer;
      return this.hoistJs(js);
    }
    const js = this.lowerRaw(e, env);
    return this.em.lookup(js) ?? js;
  }

  private read(target: string, o: Offset | null): string {
    const f = this.names.field.get(target);
    const l = this.names.let.get(target);
    let buf: string;
    if (f !== undefined && this.scheme.symbols.get(target) === 'field') buf = `c${f}`;
    else if (l !== undefined && this.scheme.symbols.get(target) === 'let') {
      if (this.kind === 'init') throw new EngineError('a field initialiser cannot read a let field');
      buf = `l${l}`;
    } else throw new EngineError('neighbour access to something that is not a field');
    // Every read is loaded once per pixel into a temporary: V8 does not always merge repeated typed-array loads.
    if (o === null || o.every(c => c === 0)) return this.bind(`${buf}[i]`);
    const full: Offset = this.scheme.dims === 1 ? [o[0], 0] : o;
    return this.bind(`${buf}[i + ${this.em.offset(full)}]`);
  }

  private lowerRaw(e: Expr, env: Env): string {
    switch (e.kind) {
      case 'number': return jsNumber(e.value);
      case 'name': {
        const local = env.locals.get(e.name);
        if (local !== undefined) return local;
        switch (this.scheme.symbols.get(e.name)) {
          case 'field': case 'let': return this.read(e.name, null);
          case 'param': return `p${this.names.param.get(e.name)}`;
          case 'constant':
            switch (e.name) {
              case 'pi': return jsNumber(Math.PI);
              case 'h': return jsNumber(this.scheme.spacing);
              case 'dt': return 'dt';
              case 't': return 't';
              case 'x': return 'x';
              case 'y': return 'y';
            }
        }
        throw new EngineError('a name the engine cannot resolve');
      }
      case 'access': {
        if (e.primed) {
          const f = this.names.field.get(e.target);
          if (f === undefined || this.kind !== 'update' || !this.primedReady.has(f)) {
            throw new EngineError('a primed value read before its update');
          }
          if (e.offset !== null) throw new EngineError('primed values are read at the same pixel only');
          // Float32 semantics: a primed read sees exactly the stored (rounded) value, so read it back.
          return this.dtype === 'float32' ? `d${f}[i]` : `n${f}`;
        }
        const o = accessOffset(e, env.offsets);
        if (o === undefined) throw new EngineError('an offset variable outside its reduction');
        return this.read(e.target, o);
      }
      case 'unary': {
        const a = this.lower(e.operand, env);
        if (e.op === '-') return `(-${a})`;
        if (e.op === '+') return `(+${a})`;
        return `(${a} === 0 ? 1 : 0)`;
      }
      case 'binary': {
        if (e.op === '^') return this.power(e.left, e.right, env);
        const a = this.lower(e.left, env);
        if (e.op === '/' && this.invariant(e.right, env)) {
          // Division by a loop-invariant value becomes a product with its reciprocal, computed once per call.
          return `(${a} * ${this.hoistJs(`(1 / ${this.lower(e.right, env)})`)})`;
        }
        const b = this.lower(e.right, env);
        switch (e.op) {
          case '*': {
            const ra = this.reciprocals.get(a), rb = this.reciprocals.get(b);
            if (ra !== undefined) return `(${b} / ${ra})`;
            if (rb !== undefined) return `(${a} / ${rb})`;
            return `(${a} * ${b})`;
          }
          case '/': {
            const js = `(${a} / ${b})`;
            if (e.left.kind === 'number' && e.left.value === 1) this.reciprocals.set(js, b);
            return js;
          }
          case '+': case '-': return `(${a} ${e.op} ${b})`;
          case '<': case '<=': case '>': case '>=': return `(${a} ${e.op} ${b} ? 1 : 0)`;
          case '==': return `(${a} === ${b} ? 1 : 0)`;
          case '!=': return `(${a} !== ${b} ? 1 : 0)`;
          case 'and': return `(${a} !== 0 && ${b} !== 0 ? 1 : 0)`;
          case 'or': return `(${a} !== 0 || ${b} !== 0 ? 1 : 0)`;
        }
        throw new EngineError('unknown operator');
      }
      case 'if': {
        const c = this.bind(this.lower(e.cond, env));
        // Branches are evaluated lazily: their statements go inside the if/else blocks.
        const { value: a, lines: thenLines } = this.em.block(() => this.lower(e.then, env));
        const { value: b, lines: elseLines } = this.em.block(() => this.lower(e.otherwise, env));
        const outer = this.em.lines;
        if (thenLines.length === 0 && elseLines.length === 0) return `(${c} !== 0 ? ${a} : ${b})`;
        const t = this.em.temp();
        outer.push(`let ${t};`, `if (${c} !== 0) {`, ...thenLines, `${t} = ${a};`, '} else {', ...elseLines, `${t} = ${b};`, '}');
        return t;
      }
      case 'reduce': {
        const set = this.scheme.neighbourSets.get(e.set);
        if (!set) throw new EngineError('unknown neighbour set');
        const parts = set.map(o => {
          const inner = new Map(env.offsets);
          inner.set(e.variable, o);
          return this.lower(e.body, { ...env, offsets: inner });
        });
        if (e.op === 'sum') return parts.length ? `(${parts.join(' + ')})` : '0';
        if (parts.length === 0) return e.op === 'max' ? '(-Infinity)' : 'Infinity';
        return `Math.${e.op}(${parts.join(', ')})`;
      }
      case 'call': return this.call(e, env);
      default: throw new EngineError('the scheme still holds a parse error');
    }
  }

  /** Small integer powers become products: the same value as Math.pow for these exponents, and cheaper. */
  private power(base: Expr, exp: Expr, env: Env): string {
    const b = this.lower(base, env);
    if (exp.kind === 'number' && (exp.value === 1 || exp.value === 2 || exp.value === 3)) {
      const t = this.bind(b);
      return exp.value === 1 ? `(+${t})` : exp.value === 2 ? `(${t} * ${t})` : `(${t} * ${t} * ${t})`;
    }
    return `Math.pow(${b}, ${this.lower(exp, env)})`;
  }

  private call(e: Extract<Expr, { kind: 'call' }>, env: Env): string {
    const fn = this.scheme.functions.get(e.callee);
    if (fn) {
      if (env.depth > MAX_INLINE_DEPTH) throw new EngineError('user functions nest too deeply');
      if (fn.params.length !== e.args.length) throw new EngineError('wrong number of arguments');
      const locals = new Map<string, string>();
      const inv = new Set<string>();
      fn.params.forEach((p, k) => {
        if (this.invariant(e.args[k], env)) inv.add(p);
        locals.set(p, this.bind(this.lower(e.args[k], env)));
      });
      // Inlined: the body sees its parameters and the scheme's top-level names, not the caller's locals.
      return this.lower(fn.body, { locals, offsets: new Map(), invariantLocals: inv, depth: env.depth + 1 });
    }
    if (e.callee === 'len') {
      const a = e.args[0];
      const o = a?.kind === 'name' ? env.offsets.get(a.name) : undefined;
      if (!o) throw new EngineError('len() takes a reduction variable');
      return jsNumber(Math.hypot(...o));
    }
    const args = e.args.map(a => this.lower(a, env));
    const need = (n: number) => {
      if (args.length !== n) throw new EngineError('wrong number of arguments');
    };
    switch (e.callee) {
      case 'abs': need(1); return `Math.abs(${args[0]})`;
      case 'sqrt': need(1); return `Math.sqrt(${args[0]})`;
      case 'exp': need(1); return `Math.exp(${args[0]})`;
      case 'log': need(1); return `Math.log(${args[0]})`;
      case 'sin': need(1); return `Math.sin(${args[0]})`;
      case 'cos': need(1); return `Math.cos(${args[0]})`;
      case 'tanh': need(1); return `Math.tanh(${args[0]})`;
      case 'sign': need(1); return `Math.sign(${args[0]})`;
      case 'min': need(2); return `Math.min(${args[0]}, ${args[1]})`;
      case 'max': need(2); return `Math.max(${args[0]}, ${args[1]})`;
      case 'clamp': need(3); return `Math.min(Math.max(${args[0]}, ${args[1]}), ${args[2]})`;
    }
    throw new EngineError('a call the engine does not know');
  }
}

const ROOT: Env = { locals: new Map(), offsets: new Map(), invariantLocals: new Set(), depth: 0 };

export interface GeneratedSource {
  /** Body of a factory `(Math) => ({ inits, lets, update })`. */
  readonly source: string;
}

/** Hoists what every kernel reads: geometry, buffers, params, time; all into locals before the loops. */
function prologue(scheme: CheckedScheme): string[] {
  const lines = [
    'const W = g.width, H = g.height, pw = g.pw, hx = g.haloX, hy = g.haloY;',
    'const P = ctx.params, dt = ctx.dt, t = ctx.t;',
  ];
  scheme.fields.forEach((_, k) => lines.push(`const c${k} = ctx.cur[${k}];`));
  scheme.lets.forEach((_, k) => lines.push(`const l${k} = ctx.lets[${k}];`));
  scheme.params.forEach((_, k) => lines.push(`const p${k} = P[${k}];`));
  return lines;
}

export function generateSource(scheme: CheckedScheme, dtype: DType): GeneratedSource {
  const names = new Names(scheme);
  const out: string[] = ['"use strict";'];

  // Field initialisers over the interior; fields are initialised in declaration order.
  const inits: string[] = [];
  scheme.fields.forEach((f, k) => {
    if (f.init.kind !== 'expr') {
      inits.push('null');
      return;
    }
    const em = new Emitter();
    const low = new Lowering(scheme, names, em, 'init', new Set());
    const v = low.lower(f.init.expr, ROOT);
    out.push(
      `function init${k}(g, ctx) {`, ...prologue(scheme), ...em.offsetDecls(), ...em.hoisted,
      'for (let y = 0; y < H; y++) {', 'let i = (y + hy) * pw + hx;', 'for (let x = 0; x < W; x++, i++) {',
      ...em.lines, `c${k}[i] = ${v};`, '}', '}', '}',
    );
    inits.push(`init${k}`);
  });

  // `expr` lets over the image extended by e cells (e = 0 in y for 1d schemes).
  const lets: string[] = [];
  scheme.lets.forEach((l, k) => {
    if (l.kind !== 'expr') {
      lets.push('null');
      return;
    }
    const em = new Emitter();
    const low = new Lowering(scheme, names, em, 'let', new Set());
    const v = low.lower(l.expr, ROOT);
    const ey = scheme.dims === 2 ? 'e' : '0';
    out.push(
      `function let${k}(g, ctx, e) {`, ...prologue(scheme), ...em.offsetDecls(), ...em.hoisted,
      `for (let y = -${ey}; y < H + ${ey}; y++) {`, 'let i = (y + hy) * pw + hx - e;', 'for (let x = -e; x < W + e; x++, i++) {',
      ...em.lines, `l${k}[i] = ${v};`, '}', '}', '}',
    );
    lets.push(`let${k}`);
  });

  // All updates fused into one pixel loop, in evaluation order, with the monitors' min/max/non-finite tracking.
  const em = new Emitter();
  const ready = new Set<number>();
  const low = new Lowering(scheme, names, em, 'update', ready, dtype);
  const body: string[] = [];
  const monitorInit: string[] = [];
  const monitorStore: string[] = [];
  for (const u of scheme.updates) {
    const k = names.field.get(u.field);
    if (k === undefined) throw new EngineError('an update of an unknown field');
    em.lines = [];
    const v = low.lower(u.expr, ROOT);
    body.push(...em.lines, `const n${k} = ${v};`, `d${k}[i] = n${k};`);
    // Math.min/max propagate NaN and compile without branches (measured faster than compare-and-branch);
    // the monitors look at the value before Float32 rounding, and run.ts treats |v| > 3.4e38 as overflow.
    body.push(`mn${k} = Math.min(mn${k}, n${k});`, `mx${k} = Math.max(mx${k}, n${k});`);
    ready.add(k);
    monitorInit.push(`const d${k} = ctx.next[${k}];`, `let mn${k} = Infinity, mx${k} = -Infinity;`);
    monitorStore.push(`M.min[${k}] = mn${k};`, `M.max[${k}] = mx${k};`, `M.bad[${k}] = (mn${k} - mn${k}) + (mx${k} - mx${k});`);
  }
  out.push(
    'function update(g, ctx) {', ...prologue(scheme), 'const M = ctx.monitor;', ...monitorInit, ...em.offsetDecls(), ...em.hoisted,
    'for (let y = 0; y < H; y++) {', 'let i = (y + hy) * pw + hx;', 'for (let x = 0; x < W; x++, i++) {',
    ...body, '}', '}', ...monitorStore, '}',
  );
  out.push(`return { inits: [${inits.join(', ')}], lets: [${lets.join(', ')}], update };`);
  return { source: out.join('\n') };
}
