// Interval arithmetic over notation expressions, and the diffusivity facts the stability analysis needs:
// safe bounds over an argument range, where a diffusivity is negative (backward diffusion), where its flux peaks.
// Pure: imports only src/notation types and linearise.ts; never Node, vscode or the DOM.

import type { Expr } from '../notation/ast';
import type { CheckedScheme, Offset } from '../notation/scheme';
import { applyBuiltin } from '../notation/builtins';
import type { SchemeEvaluator } from './linearise';

/** A closed interval [lo, hi]; infinite ends allowed. */
export type Interval = readonly [number, number];

const ALL: Interval = [-Infinity, Infinity];

function iv(lo: number, hi: number): Interval {
  return Number.isNaN(lo) || Number.isNaN(hi) ? ALL : [lo, hi];
}

function hull(a: Interval, b: Interval): Interval {
  return [Math.min(a[0], b[0]), Math.max(a[1], b[1])];
}

/** Product that takes 0·∞ as 0, which is right for bounds of finite quantities. */
function safeMul(a: number, b: number): number {
  return a === 0 || b === 0 ? 0 : a * b;
}

function mul(a: Interval, b: Interval): Interval {
  const p = [safeMul(a[0], b[0]), safeMul(a[0], b[1]), safeMul(a[1], b[0]), safeMul(a[1], b[1])];
  return iv(Math.min(...p), Math.max(...p));
}

function div(a: Interval, b: Interval): Interval {
  if (b[0] <= 0 && b[1] >= 0) return ALL;
  return mul(a, [1 / b[1], 1 / b[0]]);
}

function pow(a: Interval, b: Interval): Interval {
  if (b[0] === b[1] && Number.isInteger(b[0])) {
    const n = b[0];
    if (n === 0) return [1, 1];
    if (n < 0) return div([1, 1], pow(a, [-n, -n]));
    const pl = Math.pow(a[0], n);
    const ph = Math.pow(a[1], n);
    if (n % 2 === 1) return iv(pl, ph);
    if (a[0] >= 0) return iv(pl, ph);
    if (a[1] <= 0) return iv(ph, pl);
    return iv(0, Math.max(pl, ph));
  }
  if (a[0] < 0) return ALL;
  const c = [Math.pow(a[0], b[0]), Math.pow(a[0], b[1]), Math.pow(a[1], b[0]), Math.pow(a[1], b[1])];
  return iv(Math.min(...c), Math.max(...c));
}

function monotone(a: Interval, f: (x: number) => number): Interval {
  return iv(f(a[0]), f(a[1]));
}

type IScope = ReadonlyMap<string, Interval | { readonly offset: Offset }>;

export interface IntervalEnv {
  readonly scheme: CheckedScheme;
  /** Range of each field's values (by name). */
  readonly fieldRanges: ReadonlyMap<string, Interval>;
  readonly params: ReadonlyMap<string, number>;
  readonly dt: number;
  /** Range of t over the run. */
  readonly time: Interval;
}

/**
 * An enclosure of `e` over all states with fields in their ranges. Neighbour offsets do not matter (every
 * value of a field lies in its range); primed values are taken in the field's range too, which is right for
 * the schemes with a maximum principle that the positivity class admits.
 */
export function intervalOf(env: IntervalEnv, e: Expr, scope: IScope = new Map()): Interval {
  const rec = (x: Expr, s: IScope = scope): Interval => intervalOf(env, x, s);
  switch (e.kind) {
    case 'number': return [e.value, e.value];
    case 'name': {
      const s = scope.get(e.name);
      if (s) return 'offset' in s ? ALL : s;
      return nameRange(env, e.name);
    }
    case 'access': return nameRange(env, e.target);
    case 'unary': {
      const a = rec(e.operand);
      if (e.op === '-') return [-a[1], -a[0]];
      if (e.op === '+') return a;
      return [0, 1];
    }
    case 'binary': {
      const a = rec(e.left);
      const b = rec(e.right);
      switch (e.op) {
        case '+': return iv(a[0] + b[0], a[1] + b[1]);
        case '-': return iv(a[0] - b[1], a[1] - b[0]);
        case '*': return mul(a, b);
        case '/': return div(a, b);
        case '^': return pow(a, b);
        default: return [0, 1];
      }
    }
    case 'if': {
      const c = rec(e.cond);
      if (c[0] === c[1]) return rec(c[0] !== 0 ? e.then : e.otherwise);
      return hull(rec(e.then), rec(e.otherwise));
    }
    case 'reduce': {
      const set = env.scheme.neighbourSets.get(e.set) ?? [];
      let acc: Interval | null = null;
      for (const off of set) {
        const inner = new Map(scope);
        inner.set(e.variable, { offset: off });
        const b = rec(e.body, inner);
        if (acc === null) acc = b;
        else if (e.op === 'sum') acc = iv(acc[0] + b[0], acc[1] + b[1]);
        else if (e.op === 'max') acc = [Math.max(acc[0], b[0]), Math.max(acc[1], b[1])];
        else acc = [Math.min(acc[0], b[0]), Math.min(acc[1], b[1])];
      }
      return acc ?? [0, 0];
    }
    case 'call': {
      if (e.callee === 'len') {
        const a = e.args[0];
        const s = a && a.kind === 'name' ? scope.get(a.name) : undefined;
        if (s && 'offset' in s) { const l = Math.hypot(...s.offset); return [l, l]; }
        return [0, Infinity];
      }
      const fn = env.scheme.functions.get(e.callee);
      const args = e.args.map((a) => rec(a));
      if (fn) {
        const inner = new Map<string, Interval>();
        fn.params.forEach((p, i) => inner.set(p, args[i] ?? ALL));
        return intervalOf(env, fn.body, inner);
      }
      return builtinInterval(e.callee, args);
    }
    case 'error': return ALL;
  }
}

function builtinInterval(name: string, a: Interval[]): Interval {
  const x = a[0];
  switch (name) {
    case 'abs':
      if (x[0] >= 0) return x;
      if (x[1] <= 0) return [-x[1], -x[0]];
      return [0, Math.max(-x[0], x[1])];
    case 'sqrt': return x[1] < 0 ? ALL : [Math.sqrt(Math.max(0, x[0])), Math.sqrt(x[1])];
    case 'exp': return monotone(x, Math.exp);
    case 'log': return x[1] <= 0 ? ALL : [x[0] <= 0 ? -Infinity : Math.log(x[0]), Math.log(x[1])];
    case 'tanh': return monotone(x, Math.tanh);
    case 'sign': return monotone(x, Math.sign);
    case 'sin': case 'cos': return [-1, 1];
    case 'min': return [Math.min(x[0], a[1][0]), Math.min(x[1], a[1][1])];
    case 'max': return [Math.max(x[0], a[1][0]), Math.max(x[1], a[1][1])];
    case 'clamp': return [Math.min(Math.max(x[0], a[1][0]), a[2][1]), Math.min(Math.max(x[1], a[1][1]), a[2][1])];
    default: return ALL;
  }
}

function nameRange(env: IntervalEnv, name: string): Interval {
  const f = env.fieldRanges.get(name);
  if (f) return f;
  const p = env.params.get(name);
  if (p !== undefined) return [p, p];
  const l = env.scheme.lets.find((z) => z.name === name);
  if (l) {
    // A blur is a convex combination of its source's values, so it stays in the source's range.
    if (l.kind === 'blur') return nameRange(env, l.source);
    return intervalOf(env, l.expr);
  }
  switch (name) {
    case 'pi': return [Math.PI, Math.PI];
    case 'h': return [env.scheme.spacing, env.scheme.spacing];
    case 'dt': return [env.dt, env.dt];
    case 't': return env.time;
    default: return ALL;
  }
}

/**
 * Compiles a one-argument function's body to a closure on numbers, for the thousands of samples the sign and
 * flux checks take; falls back to the tree evaluator for bodies that read fields or reduce over sets.
 */
export function scalarFunction(scheme: CheckedScheme, params: ReadonlyMap<string, number>, fnName: string, evaluator: SchemeEvaluator): (s: number) => number {
  const fn = scheme.functions.get(fnName);
  const fallback = (s: number): number => evaluator.callFunction(fnName, [s]);
  if (!fn) return fallback;
  type C = (env: Float64Array) => number;
  const compile = (e: Expr, args: readonly string[], depth: number): C | null => {
    if (depth > 32) return null;
    switch (e.kind) {
      case 'number': { const v = e.value; return () => v; }
      case 'name': {
        const i = args.indexOf(e.name);
        if (i >= 0) return (env) => env[i];
        const p = params.get(e.name);
        if (p !== undefined) return () => p;
        if (e.name === 'pi') return () => Math.PI;
        if (e.name === 'h') { const h = scheme.spacing; return () => h; }
        if (e.name === 'dt') { const d = scheme.dt; return () => d; }
        return null;
      }
      case 'unary': {
        const a = compile(e.operand, args, depth);
        if (!a) return null;
        if (e.op === '-') return (env) => -a(env);
        if (e.op === '+') return a;
        return (env) => (a(env) !== 0 ? 0 : 1);
      }
      case 'binary': {
        const a = compile(e.left, args, depth);
        const b = compile(e.right, args, depth);
        if (!a || !b) return null;
        switch (e.op) {
          case '+': return (env) => a(env) + b(env);
          case '-': return (env) => a(env) - b(env);
          case '*': return (env) => a(env) * b(env);
          case '/': return (env) => a(env) / b(env);
          case '^': return (env) => Math.pow(a(env), b(env));
          case '<': return (env) => (a(env) < b(env) ? 1 : 0);
          case '<=': return (env) => (a(env) <= b(env) ? 1 : 0);
          case '>': return (env) => (a(env) > b(env) ? 1 : 0);
          case '>=': return (env) => (a(env) >= b(env) ? 1 : 0);
          case '==': return (env) => (a(env) === b(env) ? 1 : 0);
          case '!=': return (env) => (a(env) !== b(env) ? 1 : 0);
          case 'and': return (env) => (a(env) !== 0 && b(env) !== 0 ? 1 : 0);
          case 'or': return (env) => (a(env) !== 0 || b(env) !== 0 ? 1 : 0);
        }
        return null;
      }
      case 'if': {
        const c = compile(e.cond, args, depth);
        const t = compile(e.then, args, depth);
        const o = compile(e.otherwise, args, depth);
        if (!c || !t || !o) return null;
        return (env) => (c(env) !== 0 ? t(env) : o(env));
      }
      case 'call': {
        const cs = e.args.map((a) => compile(a, args, depth));
        if (cs.some((c) => c === null)) return null;
        const ca = cs as C[];
        const callee = scheme.functions.get(e.callee);
        if (callee) {
          const body = compile(callee.body, callee.params, depth + 1);
          if (!body) return null;
          return (env) => body(Float64Array.from(ca, (c) => c(env)));
        }
        const name = e.callee;
        return (env) => applyBuiltin(name, ca.map((c) => c(env)));
      }
      default:
        return null;
    }
  };
  const body = compile(fn.body, fn.params, 0);
  if (!body) return fallback;
  const env = new Float64Array(1);
  return (s) => { env[0] = s; return body(env); };
}

/** Bounds of a one-argument function over an argument interval: `safe` encloses it, `sampled` is attained. */
export interface FunctionBound {
  readonly safe: Interval;
  readonly sampled: Interval;
}

/**
 * Encloses f over `arg` by interval arithmetic on many sub-intervals (which tames the dependency problem of
 * plain interval arithmetic) and samples it densely for the attained range. Infinite ends are split off.
 */
export function boundFunction(env: IntervalEnv, fnName: string, evaluator: SchemeEvaluator, arg: Interval, pieces = 256): FunctionBound {
  const fn = env.scheme.functions.get(fnName);
  if (!fn) return { safe: ALL, sampled: ALL };
  const param = fn.params[0];
  const enclose = (a: Interval): Interval => intervalOf(env, fn.body, new Map([[param, a]]));
  const parts: Interval[] = [];
  let lo = arg[0];
  let hi = arg[1];
  const big = Math.max(1e6, Math.abs(Number.isFinite(lo) ? lo : 0), Math.abs(Number.isFinite(hi) ? hi : 0));
  if (lo === -Infinity) { parts.push([-Infinity, -big]); lo = -big; }
  if (hi === Infinity) { parts.push([big, Infinity]); hi = big; }
  const samples: number[] = [];
  if (lo === hi) {
    parts.push([lo, hi]);
    samples.push(lo);
  } else {
    // Finer pieces near zero when the range is wide: diffusivities vary on the scale of their contrast parameter.
    const edges = wideEdges(lo, hi, pieces);
    for (let k = 0; k + 1 < edges.length; k++) parts.push([edges[k], edges[k + 1]]);
    for (let k = 0; k < edges.length; k++) {
      samples.push(edges[k]);
      if (k + 1 < edges.length) samples.push((edges[k] + edges[k + 1]) / 2);
    }
  }
  let safe: Interval | null = null;
  for (const p of parts) safe = safe ? hull(safe, enclose(p)) : enclose(p);
  let smin = Infinity;
  let smax = -Infinity;
  const g = scalarFunction(env.scheme, env.params, fnName, evaluator);
  for (const s of samples) {
    const v = g(s);
    if (Number.isNaN(v)) continue;
    smin = Math.min(smin, v);
    smax = Math.max(smax, v);
  }
  return { safe: safe ?? ALL, sampled: [smin, smax] };
}

function wideEdges(lo: number, hi: number, pieces: number): number[] {
  const edges = new Set<number>();
  for (let k = 0; k <= pieces; k++) edges.add(lo + ((hi - lo) * k) / pieces);
  if (lo < 0 && hi > 0) {
    edges.add(0);
    const m = Math.max(-lo, hi);
    for (let k = -9; k <= Math.log10(m); k += 0.1) {
      const v = Math.pow(10, k);
      if (v < hi) edges.add(v);
      if (-v > lo) edges.add(-v);
    }
  }
  return [...edges].sort((a, b) => a - b);
}

/** Arguments on a symmetric logarithmic grid over ±[1e-6, 1e6] and 0: where sign and flux are sampled. */
function realSamples(): number[] {
  const out: number[] = [0];
  for (let k = -6; k <= 6 + 1e-9; k += 0.02) {
    const v = Math.pow(10, k);
    out.push(v, -v);
  }
  return out.sort((a, b) => a - b);
}

/** Where f(s) < 0 on the real line, as sampled intervals with refined ends (Infinity for an open end). */
export function negativeRanges(f: (s: number) => number): Interval[] {
  const s = realSamples();
  const out: [number, number][] = [];
  let start: number | null = null;
  const edge = (a: number, b: number): number => {
    // a and b straddle a sign change; bisect to 1e-10 relative.
    const na = f(a) < 0;
    for (let k = 0; k < 80; k++) {
      const m = (a + b) / 2;
      if ((f(m) < 0) === na) a = m;
      else b = m;
    }
    return (a + b) / 2;
  };
  for (let k = 0; k < s.length; k++) {
    const neg = f(s[k]) < 0;
    if (neg && start === null) start = k === 0 ? -Infinity : edge(s[k - 1], s[k]);
    if (!neg && start !== null) {
      out.push([start, edge(s[k - 1], s[k])]);
      start = null;
    }
  }
  if (start !== null) out.push([start, Infinity]);
  return out;
}

/**
 * The argument s > 0 where the flux s·g(s) is largest (the edge threshold of Perona–Malik type diffusivities),
 * or null when the flux keeps growing over the sampled range (no edge-preserving peak).
 */
export function fluxPeak(g: (s: number) => number): number | null {
  const flux = (s: number): number => s * g(s);
  const s = realSamples().filter((v) => v > 0);
  let k = 0;
  for (let i = 1; i < s.length; i++) if (flux(s[i]) > flux(s[k])) k = i;
  if (k === 0 || k === s.length - 1) return null;
  // Golden-section search between the neighbours of the best sample.
  let a = s[k - 1];
  let b = s[k + 1];
  const gr = (Math.sqrt(5) - 1) / 2;
  for (let it = 0; it < 200 && b - a > 1e-14 * b; it++) {
    const c = b - gr * (b - a);
    const d = a + gr * (b - a);
    if (flux(c) > flux(d)) b = d;
    else a = c;
  }
  return (a + b) / 2;
}
