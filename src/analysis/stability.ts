// Static stability analysis of a checked scheme: classification (linear constant-coefficient, positivity,
// linearised), the largest stable dt by the matching method, diffusivity facts, and editor diagnostics.
// Pure: imports only src/notation and sibling analysis modules; never Node, vscode or the DOM.

import type { CallExpr } from '../notation/ast';
import type { Diagnostic, RelatedInfo } from '../notation/diagnostics';
import type { CheckedScheme } from '../notation/scheme';
import { SchemeEvaluator, decodeKey, type DiffusivityMode, type FieldReader } from './linearise';
import { boundFunction, fluxPeak, scalarFunction, intervalOf, negativeRanges, type Interval, type IntervalEnv } from './stabilityBounds';
import { fieldRanges, gridReader, initialState, randomReader, type FieldState, type GreyImage } from './stabilityState';
import {
  buildDtModel, isIdentity, positivityLimit, vonNeumann,
  type DtModel, type MatrixEntry, type MatrixStencil, type VonNeumannResult,
} from './stabilityVonNeumann';

export type StabilityMethod = 'von-neumann' | 'positivity' | 'linearised' | 'none';

export interface DiffusivityReport {
  readonly name: string;
  /** Argument intervals where g(s) < 0 (backward diffusion); empty when g ≥ 0 on all reals. */
  readonly negative: readonly Interval[];
  /** The s > 0 where the flux s·g(s) peaks, or null when it has no peak. */
  readonly fluxPeak: number | null;
  /** Safe bounds of g over the argument range the scheme produces (positivity class only). */
  readonly bound?: Interval;
  readonly argumentRange?: Interval;
}

/** The contracts.md §4 `stability` object, plus a few extra keys. */
export interface StabilityReport {
  readonly method: StabilityMethod;
  /** Largest stable dt in the scheme's dt units; null when none is stable, no bound was found, or every dt is. */
  readonly limit: number | null;
  readonly dt: number;
  readonly stable: boolean;
  readonly worst: { readonly theta: number[] } | { readonly x: number; readonly y: number } | null;
  readonly reason: string;
  readonly positivityLimit?: number | null;
  readonly diffusionLimit?: number | null;
  readonly unconditional?: boolean;
  /** True when dt equals the von Neumann limit within MARGINAL_REL: |G| = 1 at the worst frequency (numerics.md). */
  readonly marginal?: boolean;
  /** True for the linearised method: a local, frozen-coefficient estimate. */
  readonly estimate?: boolean;
  /** Modes the equations themselves make grow (Re μ > 0), excluded from the limit. */
  readonly growth?: { readonly modes: number; readonly maxRate: number; readonly theta: number[] } | null;
  readonly diffusivities: readonly DiffusivityReport[];
}

export interface AnalyseOptions {
  readonly image?: GreyImage;
}

const REL = 1e-9;
/**
 * dt within this relative distance of the von Neumann limit is "marginal" (numerics.md): the |G| tolerance
 * MARGIN = 1e-7 leaves the limit itself uncertain by about that much, so a looser window than REL is used.
 */
const MARGINAL_REL = 1e-6;

function fmt(v: number): string {
  return Number(v.toPrecision(6)).toString();
}

function fmtTheta(th: readonly number[]): string {
  return `(${th.map((a) => {
    const r = a / Math.PI;
    if (Math.abs(r) < 1e-9) return '0';
    if (Math.abs(Math.abs(r) - 1) < 1e-9) return r < 0 ? '−π' : 'π';
    return `${fmt(r)}π`;
  }).join(', ')})`;
}

/** Updated fields, in scheme order, and the map from field index to matrix index. */
function updatedFields(scheme: CheckedScheme): { names: string[]; index: Map<number, number> } {
  const names: string[] = [];
  const index = new Map<number, number>();
  for (const f of scheme.fields) {
    if (!f.updated) continue;
    index.set(f.index, names.length);
    names.push(f.name);
  }
  return { names, index };
}

/** Weights of every updated field's new value over updated fields' old values, at one pixel. */
function matrixAt(ev: SchemeEvaluator, read: FieldReader, x: number, y: number, dt: number, t: number, mode: DiffusivityMode): MatrixStencil {
  const { names, index } = updatedFields(ev.scheme);
  const entries: MatrixEntry[] = [];
  names.forEach((name, i) => {
    const r = ev.evaluateUpdate(name, x, y, { read, dt, t, diffusivity: mode });
    for (const [k, w] of r.grad) {
      const { field, dx, dy } = decodeKey(k);
      const j = index.get(field);
      if (j !== undefined && w !== 0) entries.push({ i, j, dx, dy, w });
    }
  });
  return { n: names.length, entries };
}

/**
 * A cache key for the limit of a stencil: its entries in evaluation order with exact weights. Equal keys mean
 * equal stencils; a stencil reached in another order only costs a cache miss, never a wrong limit.
 */
function stencilSignature(w: MatrixStencil): string {
  let s = '';
  for (const e of w.entries) s += `${e.i},${e.j},${e.dx},${e.dy}:${e.w};`;
  return s;
}

function sameStencil(a: MatrixStencil, b: MatrixStencil): boolean {
  const m = new Map<string, number>();
  let scale = 0;
  for (const e of a.entries) { m.set(`${e.i},${e.j},${e.dx},${e.dy}`, e.w); scale = Math.max(scale, Math.abs(e.w)); }
  const seen = new Set<string>();
  for (const e of b.entries) {
    const k = `${e.i},${e.j},${e.dx},${e.dy}`;
    seen.add(k);
    if (!(Math.abs((m.get(k) ?? 0) - e.w) <= REL * (1 + scale))) return false;
  }
  for (const [k, w] of m) if (!seen.has(k) && Math.abs(w) > REL * (1 + scale)) return false;
  return true;
}

function finiteStencil(w: MatrixStencil): boolean {
  return w.entries.every((e) => Number.isFinite(e.w));
}

// ------------------------------------------------------------------------------------------------ linear class

/**
 * Linear constant-coefficient test: the full derivatives (weights) must be the same at two random states,
 * two positions and two times. Then the scheme is u_new = Σ W u_old + source, with W independent of the state.
 */
function linearModel(scheme: CheckedScheme, ev: SchemeEvaluator): DtModel | null {
  const dt = scheme.dt > 0 ? scheme.dt : 1;
  const pos = scheme.dims === 2 ? [[0, 0], [5, 3]] : [[0, 0], [5, 0]];
  const readers = [randomReader(scheme, 1, undefined), randomReader(scheme, 2, undefined)];
  let ref: MatrixStencil | null = null;
  for (let s = 0; s < 2; s++) {
    const w = matrixAt(ev, readers[s], pos[s][0], pos[s][1], dt, s * 0.7, { kind: 'full' });
    if (!finiteStencil(w)) return null;
    if (ref === null) ref = w;
    else if (!sameStencil(ref, w)) return null;
  }
  const read = readers[0];
  return buildDtModel(updatedFields(scheme).names.length, (d) => matrixAt(ev, read, 0, 0, d, 0, { kind: 'full' }), dt);
}

/**
 * The constant weights of a linear constant-coefficient scheme at its declared dt (matrix indices follow the
 * updated fields in scheme order), or null when the scheme is not of that class.
 */
export function linearStencil(scheme: CheckedScheme): MatrixStencil | null {
  try {
    const m = linearModel(scheme, new SchemeEvaluator(scheme));
    return m ? m.at(scheme.dt) : null;
  } catch {
    return null;
  }
}

function vonNeumannReport(scheme: CheckedScheme, model: DtModel, diffusivities: DiffusivityReport[]): StabilityReport {
  const vn = vonNeumann(model, scheme.dims, scheme.dt > 0 ? scheme.dt : 1);
  const pl = positivityLimit(model, scheme.dt > 0 ? scheme.dt : 1);
  const base = {
    method: 'von-neumann' as const,
    dt: scheme.dt,
    worst: { theta: vn.worstTheta },
    positivityLimit: pl === Infinity ? null : pl,
    growth: vn.growth,
    diffusivities,
  };
  const growthNote = vn.growth ? `; ${vn.growth.modes} frequencies grow physically (Re μ > 0) and are excluded` : '';
  if (vn.limit === Infinity) {
    return { ...base, limit: null, stable: true, unconditional: true, reason: `Von Neumann: |G(θ)| ≤ 1 at every frequency for every dt > 0${growthNote}.` };
  }
  if (vn.limit <= 0) {
    return { ...base, limit: null, stable: false, unconditional: false, reason: `Von Neumann: |G(θ)| > 1 near θ = ${fmtTheta(vn.worstTheta)} for every dt > 0${growthNote}.` };
  }
  const stable = scheme.dt <= vn.limit * (1 + REL);
  const marginal = Math.abs(scheme.dt - vn.limit) <= MARGINAL_REL * vn.limit;
  const marginalNote = marginal
    ? `; dt is at the limit, which is marginal: |G| = 1 at θ = ${fmtTheta(vn.worstTheta)}, so that mode neither decays nor grows${model.n > 1 ? ' (or grows linearly, where two eigenvalues meet on the unit circle)' : ''}`
    : '';
  return {
    ...base, limit: vn.limit, stable, unconditional: false, marginal,
    reason: `Von Neumann: |G(θ)| ≤ 1 for dt ≤ ${fmt(vn.limit)}, first exceeded at θ = ${fmtTheta(vn.worstTheta)}${growthNote}${marginalNote}.`,
  };
}

// ------------------------------------------------------------------------------------------------ positivity class

interface PositivityForm {
  /** Per updated field: Σ of off-centre constant weights per unit dt, and per diffusivity call the summed coefficient per unit dt. */
  readonly perField: { readonly a: number; readonly calls: { readonly site: CallExpr; readonly b: number }[] }[];
}

/**
 * Decides the positivity class on the frozen weights (numerics.md): with each diffusivity call's value c_k as
 * a free number, every weight must be affine in the c_k, every off-centre weight dt·(a + Σ b_k c_k) with
 * a, b_k ≥ 0 the same at every state and dt, the weights summing to 1 and no source term.
 */
function positivityForm(scheme: CheckedScheme, ev: SchemeEvaluator, ranges: readonly Interval[]): PositivityForm | null {
  const dt = scheme.dt > 0 ? scheme.dt : 1;
  const perField: PositivityForm['perField'] = [];
  const readers = [randomReader(scheme, 11, ranges), randomReader(scheme, 12, ranges)];
  for (const field of updatedFields(scheme).names) {
    const self = ev.fieldIndexOf(field);
    const probe = ev.evaluateUpdate(field, 0, 0, { read: readers[0], dt, diffusivity: { kind: 'probe', values: [] } });
    const sites = probe.calls.map((c) => c.site);
    const K = sites.length;
    let ref: { a: Map<number, number>; b: Map<number, number>[] } | null = null;
    for (let s = 0; s < 2; s++) {
      for (const d of [dt, 2 * dt]) {
        const run = (values: number[]): Map<number, number> | null => {
          const r = ev.evaluateUpdate(field, 0, 0, { read: readers[s], dt: d, diffusivity: { kind: 'probe', values } });
          if (r.calls.length !== K) return null;
          let sum = 0;
          let lin = 0;
          for (const [k, w] of r.grad) {
            if (!Number.isFinite(w)) return null;
            const { field: f, dx, dy } = decodeKey(k);
            sum += w;
            lin += w * readers[s](f, dx, dy);
          }
          // Weights sum to 1 and the value is exactly Σ w·u: a convex combination once the centre is ≥ 0.
          if (Math.abs(sum - 1) > 1e-9 || Math.abs(r.value - lin) > 1e-9 * (1 + Math.abs(r.value))) return null;
          return r.grad;
        };
        const zero = new Array<number>(K).fill(0);
        const w0 = run(zero);
        if (!w0) return null;
        const centre = (k: number): boolean => {
          const { field: f, dx, dy } = decodeKey(k);
          return f === self && dx === 0 && dy === 0;
        };
        const a = new Map<number, number>();
        for (const [k, w] of w0) if (!centre(k)) a.set(k, w / d);
        const bs: Map<number, number>[] = [];
        for (let k = 0; k < K; k++) {
          const e = zero.slice();
          e[k] = 1;
          const wk = run(e);
          if (!wk) return null;
          const b = new Map<number, number>();
          for (const [key, w] of wk) if (!centre(key)) b.set(key, (w - (w0.get(key) ?? 0)) / d);
          bs.push(b);
        }
        // Affine in the c_k: a random combination must match the sum of the separate effects.
        const c = zero.map((_, k) => 0.3 + 0.5 * ((k * 0.618034) % 1));
        const wc = run(c);
        if (!wc) return null;
        for (const [key, w] of wc) {
          if (centre(key)) continue;
          let pred = (a.get(key) ?? 0) * d;
          for (let k = 0; k < K; k++) pred += c[k] * (bs[k].get(key) ?? 0) * d;
          if (Math.abs(w - pred) > 1e-9 * (1 + Math.abs(w))) return null;
        }
        for (const v of a.values()) if (v < -1e-12) return null;
        for (const b of bs) for (const v of b.values()) if (v < -1e-12) return null;
        if (ref === null) ref = { a, b: bs };
        else {
          const same = (m1: Map<number, number>, m2: Map<number, number>): boolean => {
            for (const k of new Set([...m1.keys(), ...m2.keys()])) {
              const x = m1.get(k) ?? 0;
              const y = m2.get(k) ?? 0;
              if (Math.abs(x - y) > 1e-9 * (1 + Math.abs(x))) return false;
            }
            return true;
          };
          if (!same(ref.a, a) || ref.b.some((b, k) => !same(b, bs[k]))) return null;
        }
      }
    }
    if (!ref) return null;
    let aSum = 0;
    for (const v of ref.a.values()) aSum += v;
    perField.push({ a: aSum, calls: ref.b.map((b, k) => ({ site: sites[k], b: [...b.values()].reduce((p, q) => p + q, 0) })) });
  }
  return { perField };
}

// ------------------------------------------------------------------------------------------------ linearised

interface LocalResult { readonly vn: VonNeumannResult; readonly diffusion: number | null; readonly x: number; readonly y: number }

/** Keeps the neighbour couplings of M and sets each offset-0 block so every row of blocks sums to zero: the diffusion part. */
function diffusionPart(rate: MatrixStencil): MatrixStencil {
  const off = rate.entries.filter((e) => e.dx !== 0 || e.dy !== 0);
  const sums = new Map<string, { i: number; j: number; s: number }>();
  for (const e of off) {
    const k = `${e.i},${e.j}`;
    const z = sums.get(k) ?? { i: e.i, j: e.j, s: 0 };
    z.s += e.w;
    sums.set(k, z);
  }
  const centre: MatrixEntry[] = [...sums.values()].map((z) => ({ i: z.i, j: z.j, dx: 0, dy: 0, w: -z.s }));
  return { n: rate.n, entries: [...off, ...centre] };
}

function affineModel(n: number, rate: MatrixStencil): DtModel {
  const id: MatrixEntry[] = [];
  for (let i = 0; i < n; i++) id.push({ i, j: i, dx: 0, dy: 0, w: 1 });
  const at = (dt: number): MatrixStencil => ({ n, entries: [...id, ...rate.entries.map((e) => ({ ...e, w: e.w * dt }))] });
  return { n, at, poly: [{ n, entries: id }, rate], rate };
}

function linearised(scheme: CheckedScheme, ev: SchemeEvaluator, state: FieldState): { best: LocalResult | null; diffusion: number | null } {
  const dtRef = scheme.dt > 0 ? scheme.dt : 1;
  const read = gridReader(scheme, state);
  const t = state.t ?? 0;
  const n = updatedFields(scheme).names.length;
  const step = Math.max(1, Math.ceil(Math.sqrt((state.width * state.height) / 256)));
  const pixels: [number, number][] = [];
  for (let y = 0; y < state.height; y += scheme.dims === 2 ? step : 1) for (let x = 0; x < state.width; x += step) pixels.push([x, y]);
  const perHalf = scheme.dims === 1 ? 32 : 8;
  // Whether the weights are affine in dt is a property of the scheme's shape: decide it once, at the first pixel.
  const first = buildDtModel(n, (d) => matrixAt(ev, read, pixels[0][0], pixels[0][1], d, t, { kind: 'full' }), dtRef);
  // With W = I + dt·M (the usual explicit form) one evaluation per pixel gives M = (W(dtRef) − I)/dtRef.
  const affineInDt = first.poly !== null && first.poly.length <= 2 && isIdentity(first.poly[0]);
  const cache = new Map<string, { limit: number }>();
  const diffusionCache = new Map<string, number>();
  let best: { limit: number; x: number; y: number; model: DtModel } | null = null;
  let diffusion: number | null = null;
  for (const [x, y] of pixels) {
    let model: DtModel;
    if (affineInDt) {
      const w1 = matrixAt(ev, read, x, y, dtRef, t, { kind: 'full' });
      const entries: MatrixEntry[] = [];
      for (const e of w1.entries) {
        const w = (e.w - (e.i === e.j && e.dx === 0 && e.dy === 0 ? 1 : 0)) / dtRef;
        if (w !== 0) entries.push({ ...e, w });
      }
      model = affineModel(n, { n, entries });
    } else {
      model = buildDtModel(n, (d) => matrixAt(ev, read, x, y, d, t, { kind: 'full' }), dtRef);
    }
    if (!finiteStencil(model.rate)) continue;
    const sig = stencilSignature(model.rate) + (affineInDt ? '' : stencilSignature(model.at(dtRef)));
    let hit = cache.get(sig);
    if (!hit) {
      hit = { limit: vonNeumann(model, scheme.dims, dtRef, perHalf, false).limit };
      cache.set(sig, hit);
    }
    const diff = diffusionPart(model.rate);
    const dsig = stencilSignature(diff);
    let dl = diffusionCache.get(dsig);
    if (dl === undefined) {
      dl = vonNeumann(affineModel(n, diff), scheme.dims, dtRef, perHalf, false).limit;
      diffusionCache.set(dsig, dl);
    }
    if (Number.isFinite(dl)) diffusion = diffusion === null ? dl : Math.min(diffusion, dl);
    if (!best || hit.limit < best.limit) best = { limit: hit.limit, x, y, model };
  }
  if (!best) return { best: null, diffusion };
  // Redo the worst pixel on the fine frequency grid with refinement, with its full dt model: a pixel whose
  // weights are not I + dt·M after all (a branch taken only there) is then still analysed correctly.
  if (affineInDt) {
    const full = buildDtModel(n, (d) => matrixAt(ev, read, best!.x, best!.y, d, t, { kind: 'full' }), dtRef);
    if (finiteStencil(full.rate)) best = { ...best, model: full };
  }
  const vn = vonNeumann(best.model, scheme.dims, dtRef);
  const dl = vonNeumann(affineModel(n, diffusionPart(best.model.rate)), scheme.dims, dtRef).limit;
  if (Number.isFinite(dl)) diffusion = diffusion === null ? dl : Math.min(diffusion, dl);
  return { best: { vn, diffusion: dl, x: best.x, y: best.y }, diffusion };
}

/**
 * The linearised method alone, whatever the class: the frozen-coefficient local limit over the initial state
 * (or `state`). Used to cross-check the other methods (numerics.md).
 */
export function linearisedEstimate(scheme: CheckedScheme, opts: AnalyseOptions & { state?: FieldState } = {}): { limit: number; x: number; y: number; diffusionLimit: number | null } | null {
  const ev = new SchemeEvaluator(scheme);
  const { best, diffusion } = linearised(scheme, ev, opts.state ?? initialState(scheme, opts.image));
  return best ? { limit: best.vn.limit, x: best.x, y: best.y, diffusionLimit: diffusion } : null;
}

// ------------------------------------------------------------------------------------------------ entry point

function intervalEnv(scheme: CheckedScheme, ranges: readonly Interval[]): IntervalEnv {
  const fr = new Map<string, Interval>();
  scheme.fields.forEach((f, i) => fr.set(f.name, ranges[i]));
  const params = new Map<string, number>();
  for (const p of scheme.params) params.set(p.name, p.value);
  return { scheme, fieldRanges: fr, params, dt: scheme.dt, time: [0, Math.max(0, scheme.steps * scheme.dt)] };
}

function diffusivityFacts(scheme: CheckedScheme, ev: SchemeEvaluator): DiffusivityReport[] {
  const out: DiffusivityReport[] = [];
  for (const fn of scheme.functions.values()) {
    if (!fn.diffusivity || fn.params.length !== 1) continue;
    let negative: Interval[] = [];
    let peak: number | null = null;
    try {
      const params = new Map(scheme.params.map((p) => [p.name, p.value] as const));
      const g = scalarFunction(scheme, params, fn.name, ev);
      negative = negativeRanges(g);
      peak = fluxPeak(g);
    } catch {
      // A body the evaluator cannot handle gives no facts rather than a failed analysis.
    }
    out.push({ name: fn.name, negative, fluxPeak: peak });
  }
  return out;
}

/** Classifies the scheme and computes its stability limit; never throws (failures give method 'none'). */
export function analyseStability(scheme: CheckedScheme, opts: AnalyseOptions = {}): StabilityReport {
  const ev = new SchemeEvaluator(scheme);
  let diffusivities: DiffusivityReport[] = [];
  try {
    diffusivities = diffusivityFacts(scheme, ev);
    if (scheme.updates.length === 0) {
      return { method: 'none', limit: null, dt: scheme.dt, stable: true, worst: null, reason: 'The scheme has no update, so nothing can become unstable.', diffusivities };
    }
    const lin = linearModel(scheme, ev);
    if (lin) return vonNeumannReport(scheme, lin, diffusivities);

    const state = initialState(scheme, opts.image);
    const ranges = fieldRanges(scheme, state, opts.image !== undefined);
    const form = positivityForm(scheme, ev, ranges);
    if (form) {
      const r = positivityReport(scheme, ev, form, ranges, diffusivities);
      if (r) return r;
    }

    const { best, diffusion } = linearised(scheme, ev, state);
    if (!best) {
      return { method: 'none', limit: null, dt: scheme.dt, stable: false, worst: null, reason: 'The linearised weights are not finite at any sampled pixel of the initial state.', diffusionLimit: diffusion, diffusivities };
    }
    const base = {
      method: 'linearised' as const, dt: scheme.dt, worst: { x: best.x, y: best.y }, estimate: true,
      diffusionLimit: diffusion, growth: best.vn.growth, diffusivities,
    };
    const where = `at pixel (${best.x}, ${best.y}) of the initial state`;
    if (best.vn.limit === Infinity) {
      return { ...base, limit: null, stable: true, unconditional: true, reason: `Linearised estimate: the frozen-coefficient amplification stays ≤ 1 for every dt > 0 ${where}.` };
    }
    if (best.vn.limit <= 0) {
      return { ...base, limit: null, stable: false, unconditional: false, reason: `Linearised estimate: the frozen-coefficient amplification exceeds 1 for every dt > 0 ${where}.` };
    }
    return {
      ...base, limit: best.vn.limit, stable: scheme.dt <= best.vn.limit * (1 + REL), unconditional: false,
      reason: `Linearised estimate: local von Neumann bound dt ≤ ${fmt(best.vn.limit)} ${where} (frozen coefficients, not a proof).`,
    };
  } catch (err) {
    const msg = err instanceof Error ? err.message : String(err);
    return { method: 'none', limit: null, dt: scheme.dt, stable: false, worst: null, reason: `The analysis could not evaluate the scheme (${msg}).`, diffusivities };
  }
}

function positivityReport(
  scheme: CheckedScheme, ev: SchemeEvaluator, form: PositivityForm, ranges: readonly Interval[], facts: DiffusivityReport[],
): StabilityReport | null {
  const env = intervalEnv(scheme, ranges);
  const boundCache = new Map<string, { arg: Interval; safe: Interval; sampled: Interval }>();
  let worstDen = 0;
  let unbounded: string | null = null;
  const perName = new Map<string, { arg: Interval; bound: Interval }>();
  for (const pf of form.perField) {
    let den = pf.a;
    for (const { site, b } of pf.calls) {
      if (b === 0) continue;
      const arg = site.args[0] ? intervalOf(env, site.args[0]) : ([-Infinity, Infinity] as Interval);
      const key = `${site.callee}|${arg[0]}|${arg[1]}`;
      let bd = boundCache.get(key);
      if (!bd) {
        const fb = boundFunction(env, site.callee, ev, arg);
        bd = { arg, safe: fb.safe, sampled: fb.sampled };
        boundCache.set(key, bd);
      }
      // A diffusivity negative on the range the scheme produces gives negative weights: not this class.
      if (bd.sampled[0] < 0) return null;
      const prev = perName.get(site.callee);
      perName.set(site.callee, prev
        ? { arg: [Math.min(prev.arg[0], arg[0]), Math.max(prev.arg[1], arg[1])], bound: [Math.min(prev.bound[0], bd.safe[0]), Math.max(prev.bound[1], bd.safe[1])] }
        : { arg, bound: bd.safe });
      if (!Number.isFinite(bd.safe[1])) unbounded ??= `${site.callee} is unbounded for arguments in [${fmt(arg[0])}, ${fmt(arg[1])}]`;
      den += b * bd.safe[1];
    }
    worstDen = Math.max(worstDen, den);
  }
  const diffusivities = facts.map((f) => {
    const p = perName.get(f.name);
    return p ? { ...f, bound: p.bound, argumentRange: p.arg } : f;
  });
  const base = { method: 'positivity' as const, dt: scheme.dt, worst: null, diffusivities };
  if (unbounded) {
    return { ...base, limit: null, stable: false, unconditional: false, reason: `Positivity: no step keeps the centre weight ≥ 0 for sure, since ${unbounded}.` };
  }
  if (worstDen <= 0) {
    return { ...base, limit: null, stable: true, unconditional: true, reason: 'Positivity: every weight stays ≥ 0 for every dt > 0.' };
  }
  const limit = 1 / worstDen;
  return {
    ...base, limit, stable: scheme.dt <= limit * (1 + REL), unconditional: false,
    reason: `Positivity: the weights are non-negative and sum to 1 for dt ≤ ${fmt(limit)} (centre weight 1 − dt·${fmt(worstDen)} with each diffusivity at its bound).`,
  };
}

// ------------------------------------------------------------------------------------------------ diagnostics

/** Codes this module emits (the notation's catalogue already uses `step-not-positive` for dt ≤ 0). */
export const STABILITY_CODES = {
  'step-over-limit': 'the declared dt exceeds the stability limit',
  'step-limit': 'the stability limit, for information',
  'step-over-positivity-limit': 'dt is von Neumann stable but some weights are negative (overshoots possible)',
  'no-stable-step': 'no dt > 0 is stable, or no bound could be found',
  'stability-unknown': 'the analysis could not classify the scheme',
  'backward-diffusion': 'a diffusivity negative for some arguments (ill-posed backward diffusion)',
  'physical-growth': 'modes the equations themselves make grow, excluded from the limit',
  'flux-peak': 'where the flux s·g(s) of a diffusivity peaks: larger contrasts are sharpened, not smoothed',
} as const;

function relatedRanges(scheme: CheckedScheme, report: StabilityReport): RelatedInfo[] {
  const rel: RelatedInfo[] = scheme.updates.map((u) => ({ range: u.range, message: `update of ${u.field} analysed` }));
  for (const d of report.diffusivities) {
    const fn = scheme.functions.get(d.name);
    if (fn) rel.push({ range: fn.decl.range, message: `diffusivity ${d.name}` });
  }
  return rel;
}

function intervalText(iv: Interval): string {
  const lo = iv[0] === -Infinity ? '−∞' : fmt(iv[0]);
  const hi = iv[1] === Infinity ? '∞' : fmt(iv[1]);
  return `(${lo}, ${hi})`;
}

export function stabilityDiagnostics(scheme: CheckedScheme, report: StabilityReport): Diagnostic[] {
  const out: Diagnostic[] = [];
  const related = relatedRanges(scheme, report);
  const data = { limit: report.limit, method: report.method, dt: report.dt };
  if (report.method === 'none') {
    out.push({ range: scheme.stepRange, severity: 'info', code: 'stability-unknown', message: report.reason, related, data });
  } else if (report.unconditional) {
    out.push({ range: scheme.stepRange, severity: 'info', code: 'step-limit', message: report.reason, related, data });
  } else if (report.limit === null) {
    out.push({ range: scheme.stepRange, severity: 'warning', code: 'no-stable-step', message: report.reason, related, data });
  } else if (!report.stable) {
    out.push({
      range: scheme.stepRange, severity: 'warning', code: 'step-over-limit', related, data,
      message: `dt = ${fmt(report.dt)} exceeds the ${report.method} limit dt ≤ ${fmt(report.limit)}. ${report.reason}`,
    });
  } else {
    out.push({
      range: scheme.stepRange, severity: 'info', code: 'step-limit', related, data,
      message: `Stable for dt ≤ ${fmt(report.limit)} (${report.method}${report.estimate ? ' estimate' : ''}). ${report.reason}`,
    });
  }
  const pl = report.positivityLimit;
  if (pl !== undefined && pl !== null && report.stable && report.dt > pl * (1 + REL)) {
    out.push({
      range: scheme.stepRange, severity: 'info', code: 'step-over-positivity-limit', related, data: { ...data, positivityLimit: pl },
      message: `dt = ${fmt(report.dt)} is stable but above ${fmt(pl)}, where some weights turn negative: expect overshoots at edges.`,
    });
  }
  if (report.growth) {
    out.push({
      range: scheme.stepRange, severity: 'info', code: 'physical-growth', related,
      message: `Some modes grow because the equations make them grow (largest rate ${fmt(report.growth.maxRate)} at θ = ${fmtTheta(report.growth.theta)}); they do not count against the limit.`,
    });
  }
  for (const d of report.diffusivities) {
    const fn = scheme.functions.get(d.name);
    if (!fn || d.fluxPeak === null) continue;
    out.push({
      range: fn.decl.range, severity: 'info', code: 'flux-peak',
      related: scheme.updates.map((u) => ({ range: u.range, message: `update using ${d.name}` })),
      data: { name: d.name, fluxPeak: d.fluxPeak },
      message: `The flux s·${d.name}(s) peaks at |s| = ${fmt(d.fluxPeak)}: contrasts below it are smoothed, contrasts above it are kept or sharpened (forward–backward behaviour).`,
    });
  }
  for (const d of report.diffusivities) {
    if (d.negative.length === 0) continue;
    const fn = scheme.functions.get(d.name);
    if (!fn) continue;
    out.push({
      range: fn.decl.range, severity: 'warning', code: 'backward-diffusion',
      related: scheme.updates.map((u) => ({ range: u.range, message: `update using ${d.name}` })),
      data: { name: d.name, negative: d.negative },
      message: `${d.name}(s) < 0 for s in ${d.negative.map(intervalText).join(' ∪ ')}: backward diffusion there (ill-posed).`,
    });
  }
  return out;
}
