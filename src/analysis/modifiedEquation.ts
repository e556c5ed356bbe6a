// What a stencil approximates: the moments of the spatial operator L = (update − identity)/dt and the modified
// equation of the whole step (Warming & Hyett 1974), from the weights (exact for linear schemes, frozen
// coefficients at a pixel otherwise), with a summary in words, the leading error term, the orders in space and
// time, and the diagnostics they support (source term, unexpected drift, anisotropic diffusion, coefficients
// that change with h).
//
// API (stable; the panel and `fluxel check` use it):
// - modifiedEquation(scheme, opts?: FrozenOptions): ModifiedEquation — per updated field the operator terms
//   (source, drift velocity, diffusion tensor), the moments of L by order, the leading error, the orders.
// - modifiedEquationDiagnostics(scheme, me): Diagnostic[] — codes in WHY_CODES, ranged on the update.
// - termText(terms, field, dims): the terms as text, e.g. "1·Δu" or "(h²/12)(u_xxxx + u_yyyy)".
//
// Method. For u'(x) = Σ_o W(o) u(x + o·h) and u = e^{s·x}, one step multiplies by G(s) = Σ_o W(o) e^{h s·o}.
// A PDE u_t = Σ_α c_α ∂^α u multiplies by e^{dt Σ c_α s^α}, so c_α are the coefficients of log G(s)/dt as a
// power series in s (the modified equation with the time error included; Warming & Hyett, J. Comput. Phys. 14,
// 1974). The moments of L are the coefficients of (G(s) − 1)/dt: M_α = Σ_o a(o) (h·o)^α/α!, a = (W − δ)/dt.
// Series are truncated at total degree 6. Systems (several updated fields) get the moments of L per block only.
// Pure: imports only the notation types and sibling analysis modules.

import type { Diagnostic } from '../notation/diagnostics';
import type { CheckedScheme } from '../notation/scheme';
import { frozenStencil, type FrozenOptions, type FrozenStencil } from './frozen';

/** Highest total degree of the series. */
export const MAX_ORDER = 6;
const D = MAX_ORDER;

/** One term c·∂x^i ∂y^j u (in 1d j = 0). */
export interface Term {
  readonly i: number;
  readonly j: number;
  readonly coef: number;
}

export interface ErrorTerm {
  /** Total derivative order of the leading error. */
  readonly order: number;
  /** The coefficients at the declared h and dt. */
  readonly terms: readonly Term[];
  /** The part that vanishes as h → 0 (at fixed dt), and the part that vanishes as dt → 0 (at fixed h). */
  readonly spacePart: readonly Term[];
  readonly timePart: readonly Term[];
  readonly text: string;
}

export interface FieldEquation {
  readonly field: string;
  /** Zeroth moment of L on the field itself: u_t = … + source·u (0 for pure transport/diffusion). */
  readonly source: number;
  /** Drift velocity v in u_t + v·∇u = … (minus the first moments). */
  readonly drift: readonly number[];
  /** Second moments as the diffusion tensor D in u_t = ∇·(D∇u) = D:∇∇u; [[Dxx, Dxy], [Dxy, Dyy]] or [[D]]. */
  readonly diffusion: readonly (readonly number[])[];
  /** Eigenvalues of D (largest first) and their relative spread (0 for isotropic diffusion). */
  readonly diffusionEigen: readonly number[];
  readonly anisotropy: number;
  /** Moments of L on the field itself by order 0..MAX_ORDER, each the list of its non-zero terms. */
  readonly moments: readonly (readonly Term[])[];
  /** Coefficients of the modified equation (log G/dt) by order, single-field schemes only. */
  readonly modified: readonly (readonly Term[])[] | null;
  /** Order-0 couplings to other fields (u_t = … + k·v) and their second moments, for systems. */
  readonly coupling: readonly { readonly field: string; readonly order: number; readonly terms: readonly Term[] }[];
  /** The lowest derivative order ≥ 1 with a non-zero moment: 1 transport, 2 diffusion; null when none. */
  readonly leadingOrder: number | null;
  /** Orders that make up the approximated equation. */
  readonly principalOrders: readonly number[];
  readonly principal: readonly Term[];
  readonly leadingError: ErrorTerm | null;
  /** Order of accuracy in space and time (powers of h and dt of the leading error), null when not found. */
  readonly orderSpace: number | null;
  readonly orderTime: number | null;
  /** How the leading coefficient scales with h (0: it does not; 2: like h², e.g. a missing /h²). */
  readonly leadingScaling: number | null;
  /** How the source term scales with dt (−1: like 1/dt, i.e. a term not multiplied by dt). */
  readonly sourceScaling: number | null;
  /** Whether the stencil's offsets are symmetric (o in it ⇒ −o in it) and invariant under quarter turns (2d). */
  readonly symmetricSupport: boolean;
  readonly rotationSupport: boolean;
  /** The equation in words and numbers, e.g. "u_t = 1·Δu (isotropic diffusion)". */
  readonly text: string;
  /** Kind words: "isotropic diffusion", "transport", "source" … */
  readonly kind: string;
}

export interface ModifiedEquation {
  readonly dims: 1 | 2;
  readonly spacing: number;
  readonly dt: number;
  /** True: exact (linear constant-coefficient); false: frozen coefficients at `at`. */
  readonly linear: boolean;
  readonly at: { readonly x: number; readonly y: number } | null;
  readonly fields: readonly FieldEquation[];
  /** One line for people: "approximates u_t = 1·Δu (isotropic diffusion), leading error …; order 2 in space, 1 in time". */
  readonly summary: string;
}

// ------------------------------------------------------------------------------------------------ series algebra

type Series = Float64Array; // coefficient of sx^i sy^j at i*(D+1)+j, i + j ≤ D

const idx = (i: number, j: number): number => i * (D + 1) + j;
const newSeries = (): Series => new Float64Array((D + 1) * (D + 1));

function factorial(n: number): number {
  let f = 1;
  for (let k = 2; k <= n; k++) f *= k;
  return f;
}

/** Σ_o w(o) e^{h s·o} truncated: coefficient of s^α is Σ w(o) (h o)^α / α!. */
function momentSeries(ws: readonly { dx: number; dy: number; w: number }[], h: number, dims: 1 | 2): Series {
  const s = newSeries();
  for (const e of ws) {
    for (let i = 0; i <= D; i++) {
      for (let j = 0; i + j <= D; j++) {
        if (dims === 1 && j > 0) break;
        s[idx(i, j)] += (e.w * Math.pow(h * e.dx, i) * Math.pow(h * e.dy, j)) / (factorial(i) * factorial(j));
      }
    }
  }
  return s;
}

function mul(a: Series, b: Series): Series {
  const out = newSeries();
  for (let i = 0; i <= D; i++) for (let j = 0; i + j <= D; j++) {
    const av = a[idx(i, j)];
    if (av === 0) continue;
    for (let k = 0; i + k <= D; k++) for (let l = 0; i + j + k + l <= D; l++) out[idx(i + k, j + l)] += av * b[idx(k, l)];
  }
  return out;
}

/** log of a series with a positive constant term; null otherwise. */
function logSeries(g: Series): Series | null {
  const g0 = g[0];
  if (!(g0 > 0)) return null;
  const x = newSeries();
  for (let k = 1; k < x.length; k++) x[k] = g[k] / g0;
  x[0] = 0;
  const out = newSeries();
  let p: Series = x;
  for (let k = 1; k <= D; k++) {
    const c = (k % 2 === 1 ? 1 : -1) / k;
    for (let q = 0; q < out.length; q++) out[q] += c * p[q];
    p = mul(p, x);
  }
  out[0] = Math.log(g0);
  return out;
}

function groupsOf(s: Series, dims: 1 | 2, scale: readonly number[]): Term[][] {
  const out: Term[][] = [];
  for (let q = 0; q <= D; q++) {
    const terms: Term[] = [];
    for (let i = q; i >= 0; i--) {
      const j = q - i;
      if (dims === 1 && j > 0) continue;
      const c = s[idx(i, j)];
      if (Math.abs(c) > scale[q]) terms.push({ i, j, coef: c });
    }
    out.push(terms);
  }
  return out;
}

// ------------------------------------------------------------------------------------------------ formatting

function fmt(v: number, digits = 4): string {
  if (v === 0) return '0';
  const r = Number(v.toPrecision(digits));
  return String(r).replace('-', '−');
}

/** A simple fraction p/q (q ≤ 720) equal to v within 1e-9 relative, as text; null when none. */
function fraction(v: number): string | null {
  for (let q = 1; q <= 360; q++) {
    const p = Math.round(v * q);
    if (p !== 0 && Math.abs(p) <= 12 && Math.abs(p / q - v) <= 1e-9 * Math.abs(v)) return q === 1 ? String(p) : `${p}/${q}`;
  }
  return null;
}

function derivative(field: string, i: number, j: number): string {
  if (i === 0 && j === 0) return field;
  return `${field}_${'x'.repeat(i)}${'y'.repeat(j)}`;
}

const POWERS = ['', '', '²', '³', '⁴', '⁵', '⁶'];

/** A coefficient as "h²/12" when it is a simple fraction times h^p (p the space order), else a number. */
function coefText(c: number, h: number, p: number | null): string {
  if (p !== null && p > 0 && h > 0) {
    const f = fraction(c / Math.pow(h, p));
    if (f) {
      const neg = f.startsWith('-');
      const body = neg ? f.slice(1) : f;
      const [num, den] = body.split('/');
      const hp = `h${POWERS[p] ?? `^${p}`}`;
      const t = num === '1' ? hp : `${num}${hp}`;
      return `${neg ? '−' : ''}${den ? `${t}/${den}` : t}`;
    }
  }
  return fmt(c);
}

/** Coefficients with h (h²/12) in parentheses; plain numbers as they are. */
function paren(c: string): string {
  return c.includes('h') ? `(${c})` : c;
}

/**
 * Terms as text, recognising Δu (c_20 = c_02, c_11 = 0) and Δ²u (c_40 = c_04 = c_22/2, odd terms 0), and a
 * common factor: "(h²/12)(u_xxxx + u_yyyy)".
 */
export function termText(terms: readonly Term[], field: string, dims: 1 | 2, h = 1, p: number | null = null): string {
  if (terms.length === 0) return '0';
  const get = (i: number, j: number) => terms.find((t) => t.i === i && t.j === j)?.coef ?? 0;
  const close = (a: number, b: number) => Math.abs(a - b) <= 1e-9 * Math.max(Math.abs(a), Math.abs(b));
  const order = terms[0].i + terms[0].j;
  if (dims === 2 && terms.every((t) => t.i + t.j === order)) {
    if (order === 2 && terms.length === 2 && close(get(2, 0), get(0, 2))) return `${coefText(get(2, 0), h, p)}·Δ${field}`;
    if (order === 4 && terms.length === 3 && close(get(4, 0), get(0, 4)) && close(get(2, 2), 2 * get(4, 0))) {
      return `${paren(coefText(get(4, 0), h, p))}·Δ²${field}`;
    }
  }
  const c0 = terms[0].coef;
  if (terms.length > 1 && terms.every((t) => close(t.coef, c0))) {
    return `${paren(coefText(c0, h, p))}(${terms.map((t) => derivative(field, t.i, t.j)).join(' + ')})`;
  }
  return terms.map((t, k) => {
    const c = coefText(t.coef, h, p);
    const neg = c.startsWith('−');
    const body = neg ? c.slice(1) : c;
    const d = derivative(field, t.i, t.j);
    const piece = body === '1' ? d : `${paren(body)}·${d}`;
    return k === 0 ? `${neg ? '−' : ''}${piece}` : `${neg ? ' − ' : ' + '}${piece}`;
  }).join('');
}

// ------------------------------------------------------------------------------------------------ analysis

interface BlockSeries {
  /** Moments of L for block (i ← j). */
  readonly L: Series;
  /** Σ|a(o)| and the reach, for tolerances. */
  readonly abs: number;
  readonly reach: number;
}

function blocks(w: FrozenStencil, dims: 1 | 2): Map<string, BlockSeries> {
  const per = new Map<string, { dx: number; dy: number; w: number }[]>();
  for (const e of w.entries) {
    const k = `${e.i},${e.j}`;
    let list = per.get(k);
    if (!list) per.set(k, (list = []));
    list.push({ dx: e.dx, dy: e.dy, w: e.w });
  }
  const out = new Map<string, BlockSeries>();
  for (let i = 0; i < w.n; i++) {
    const k = `${i},${i}`;
    const list = per.get(k) ?? [];
    // a = (W − δ)/dt on the diagonal block.
    const centre = list.find((e) => e.dx === 0 && e.dy === 0);
    if (centre) centre.w -= 1;
    else list.push({ dx: 0, dy: 0, w: -1 });
    per.set(k, list);
  }
  for (const [k, list] of per) {
    const a = list.map((e) => ({ ...e, w: e.w / w.dt }));
    let abs = 0, reach = 0;
    for (const e of a) { abs += Math.abs(e.w); reach = Math.max(reach, Math.abs(e.dx), Math.abs(e.dy)); }
    out.set(k, { L: momentSeries(a, w.spacing, dims), abs, reach });
  }
  return out;
}

/** Per-order tolerance: 1e-9 of the natural size Σ|a|·(h·reach)^q/q! of the order-q moment. */
function tolerances(abs: number, reach: number, h: number): number[] {
  const out: number[] = [];
  for (let q = 0; q <= D; q++) out.push(1e-9 * abs * Math.pow(h * Math.max(1, reach), q) / factorial(q) + 1e-300);
  return out;
}

function groupNorm(terms: readonly Term[]): number {
  return terms.reduce((m, t) => Math.max(m, Math.abs(t.coef)), 0);
}

function coefOf(terms: readonly Term[], i: number, j: number): number {
  return terms.find((t) => t.i === i && t.j === j)?.coef ?? 0;
}

interface Sample {
  readonly h: number;
  readonly dt: number;
  readonly L: Term[][];
  readonly c: Term[][] | null;
}

function sampleAt(scheme: CheckedScheme, base: FrozenOptions, field: number, h: number, dt: number): Sample {
  const w = frozenStencil(scheme, { ...base, spacing: h, dt });
  const b = blocks(w, scheme.dims).get(`${field},${field}`) as BlockSeries;
  const tol = tolerances(b.abs, b.reach, h).map((t) => t * 1e-3);
  const L = groupsOf(b.L, scheme.dims, tol);
  let c: Term[][] | null = null;
  if (w.n === 1) {
    // G(s) = 1 + dt·M(s).
    const g = newSeries();
    for (let k = 0; k < g.length; k++) g[k] = b.L[k] * dt;
    g[0] += 1;
    const lg = logSeries(g);
    if (lg) {
      for (let k = 0; k < lg.length; k++) lg[k] /= dt;
      c = groupsOf(lg, scheme.dims, tol);
    }
  }
  return { h, dt, L, c };
}

/** Coefficient-wise a − b over the union of terms of one order. */
function diffTerms(a: readonly Term[], b: readonly Term[]): Term[] {
  const keys = new Map<string, { i: number; j: number }>();
  for (const t of [...a, ...b]) keys.set(`${t.i},${t.j}`, t);
  return [...keys.values()].map(({ i, j }) => ({ i, j, coef: coefOf(a, i, j) - coefOf(b, i, j) })).sort((x, y) => y.i - x.i);
}

function scaleTerms(a: readonly Term[], f: number): Term[] {
  return a.map((t) => ({ ...t, coef: t.coef * f }));
}

/** The power p with |e(x) − e(x/2)| / |e(x/2) − e(x/4)| = 2^p, rounded; null when e does not change. */
function refinementPower(e1: readonly Term[], e2: readonly Term[], e4: readonly Term[], tol: number): { p: number; part: Term[] } | null {
  const d1 = diffTerms(e1, e2);
  const d2 = diffTerms(e2, e4);
  const n1 = groupNorm(d1), n2 = groupNorm(d2);
  if (n1 <= tol || n2 <= tol * 1e-3) return null;
  const p = Math.round(Math.log2(n1 / n2));
  if (p <= 0) return null;
  // e(x) = C + A x^p: the part that vanishes is A x^p = (e(x) − e(x/2)) / (1 − 2^−p).
  return { p, part: scaleTerms(d1, 1 / (1 - Math.pow(2, -p))) };
}

function cleanTerms(ts: readonly Term[], tol: number): Term[] {
  return ts.filter((t) => Math.abs(t.coef) > tol);
}

function supportOf(w: FrozenStencil, i: number): { symmetric: boolean; rotation: boolean } {
  const set = new Set<string>();
  for (const e of w.entries) if (e.i === i && e.j === i && !(e.dx === 0 && e.dy === 0)) set.add(`${e.dx},${e.dy}`);
  let symmetric = true, rotation = true;
  for (const k of set) {
    const [dx, dy] = k.split(',').map(Number);
    if (!set.has(`${-dx},${-dy}`)) symmetric = false;
    if (!set.has(`${-dy},${dx}`)) rotation = false;
  }
  return { symmetric: symmetric && set.size > 0, rotation: rotation && set.size > 0 };
}

function eigenSym2(a: number, b: number, d: number): number[] {
  const m = (a + d) / 2;
  const r = Math.hypot((a - d) / 2, b);
  return [m + r, m - r];
}

function kindWords(eq: { source: number; drift: readonly number[]; diffusionNorm: number; anisotropy: number; principal: readonly number[]; dims: 1 | 2 }): string {
  const parts: string[] = [];
  if (eq.principal.includes(1) && eq.drift.some((v) => v !== 0)) parts.push(`transport at velocity ${eq.dims === 2 ? `(${eq.drift.map((v) => fmt(v)).join(', ')})` : fmt(eq.drift[0])}`);
  if (eq.principal.includes(2) && eq.diffusionNorm > 0) {
    parts.push(eq.dims === 1 ? 'diffusion' : eq.anisotropy <= 1e-9 ? 'isotropic diffusion' : 'anisotropic diffusion');
  }
  if (eq.principal.some((q) => q > 2)) parts.push(`order-${Math.max(...eq.principal)} operator`);
  if (eq.principal.includes(0) && eq.source !== 0) parts.push(eq.source > 0 ? 'growth (source)' : 'decay (sink)');
  return parts.join(' with ') || 'no change';
}

/** The modified equation of every updated field; for nonlinear schemes at the frozen coefficients of `opts`. */
export function modifiedEquation(scheme: CheckedScheme, opts: FrozenOptions = {}): ModifiedEquation {
  const h = opts.spacing ?? scheme.spacing;
  const dt = opts.dt ?? (scheme.dt !== 0 ? scheme.dt : 1);
  const base = { ...opts };
  const w = frozenStencil(scheme, { ...base, spacing: h, dt });
  const bl = blocks(w, scheme.dims);
  const fields: FieldEquation[] = [];
  for (let fi = 0; fi < w.n; fi++) {
    const name = w.fields[fi];
    const b = bl.get(`${fi},${fi}`) as BlockSeries;
    const tol = tolerances(b.abs, b.reach, h);
    const s0 = sampleAt(scheme, base, fi, h, dt);
    const M = s0.L.map((g, q) => cleanTerms(g, tol[q]));
    const C = s0.c ? s0.c.map((g, q) => cleanTerms(g, tol[q])) : null;
    const E = C ?? M; // what the error and orders are read from
    let leadingOrder: number | null = null;
    for (let q = 1; q <= D; q++) if (M[q].length) { leadingOrder = q; break; }

    // Refinements: h/2, h/4 at fixed dt; dt/2, dt/4 at fixed h; and both halved (for the order-2 test).
    const sh2 = sampleAt(scheme, base, fi, h / 2, dt);
    const sh4 = sampleAt(scheme, base, fi, h / 4, dt);
    const st2 = sampleAt(scheme, base, fi, h, dt / 2);
    const st4 = sampleAt(scheme, base, fi, h, dt / 4);
    const both = sampleAt(scheme, base, fi, h / 2, dt / 2);
    const pick = (s: Sample) => s.c ?? s.L;
    // Does the scheme read h at all? Pixel-unit schemes do not: their weights are the same at every spacing.
    const wh2 = frozenStencil(scheme, { ...base, spacing: h / 2, dt });
    const readsH = !(wh2.entries.length === w.entries.length && wh2.entries.every((e, k) => e.w === w.entries[k].w && e.dx === w.entries[k].dx && e.dy === w.entries[k].dy));

    let leadingScaling: number | null = null;
    if (leadingOrder !== null) {
      const a = groupNorm(M[leadingOrder]);
      const a2 = groupNorm(sh2.L[leadingOrder]);
      if (a > 0 && a2 > 0) leadingScaling = Math.round(Math.log2(a / a2) * 1000) / 1000;
    }
    const source = coefOf(M[0], 0, 0);
    let sourceScaling: number | null = null;
    if (source !== 0) {
      const s2 = coefOf(st2.L[0], 0, 0);
      if (s2 !== 0) sourceScaling = Math.round(Math.log2(Math.abs(source / s2)) * 1000) / 1000;
    }

    const principalOrders: number[] = [];
    if (M[0].length) principalOrders.push(0);
    // In systems (no log G) a leading term that vanishes as dt → 0 is a time error (e.g. dt·c²Δu in u' = u + dt·v').
    let errorFrom = leadingOrder === null ? null : leadingOrder + 1;
    if (leadingOrder !== null) {
      const ts = C ? null : refinementPower(M[leadingOrder], st2.L[leadingOrder], st4.L[leadingOrder], tol[leadingOrder]);
      if (ts && groupNorm(diffTerms(ts.part, M[leadingOrder])) <= 1e-6 * groupNorm(M[leadingOrder])) errorFrom = leadingOrder;
      else principalOrders.push(leadingOrder);
    }
    if (leadingOrder === 1 && E[2].length) {
      let keep: boolean;
      if (readsH) {
        // The part of the order-2 coefficient that survives h, dt → 0 together (Richardson, first order).
        const rich = diffTerms(scaleTerms(pick(both)[2], 2), E[2]);
        keep = groupNorm(rich) > 0.1 * groupNorm(E[2]) && groupNorm(rich) > tol[2];
      } else keep = supportOf(w, fi).symmetric;
      if (keep) principalOrders.push(2);
    }
    const principal = principalOrders.flatMap((q) => M[q]);

    // Leading error: the lowest non-principal order above the leading one with a non-zero coefficient.
    let leadingError: ErrorTerm | null = null;
    let orderSpace: number | null = null;
    let orderTime: number | null = null;
    if (leadingOrder !== null && errorFrom !== null) {
      for (let q = errorFrom; q <= D; q++) {
        if (principalOrders.includes(q) || E[q].length === 0) continue;
        const hs = refinementPower(E[q], pick(sh2)[q], pick(sh4)[q], tol[q]);
        const ts = refinementPower(E[q], pick(st2)[q], pick(st4)[q], tol[q]);
        let spacePart: Term[];
        let timePart: Term[] = ts ? cleanTerms(ts.part, tol[q]) : [];
        if (readsH) {
          spacePart = hs ? cleanTerms(hs.part, tol[q]) : [];
          orderSpace = hs ? hs.p : null;
        } else {
          // Pixel units: every coefficient scales with h like its order; the space order is the gap in orders.
          spacePart = cleanTerms(diffTerms(E[q], timePart), tol[q]);
          orderSpace = spacePart.length ? q - (principalOrders.filter((o) => o > 0)[0] ?? leadingOrder) : null;
        }
        orderTime = ts ? ts.p : null;
        const pS = readsH || h === 1 ? orderSpace : null;
        const pieces: string[] = [];
        if (spacePart.length) pieces.push(termText(spacePart, name, scheme.dims, h, pS));
        if (timePart.length) pieces.push(`${termText(timePart, name, scheme.dims)} from the time step`);
        const text = pieces.length ? pieces.join(', ') : termText(E[q], name, scheme.dims);
        leadingError = { order: q, terms: E[q], spacePart, timePart, text };
        break;
      }
      // Time order from a later order when the leading error has no dt part (single-field schemes).
      if (C && orderTime === null) {
        for (let q = 0; q <= D && orderTime === null; q++) {
          const ts = refinementPower(E[q], pick(st2)[q], pick(st4)[q], tol[q]);
          if (ts) orderTime = ts.p;
        }
      }
    }

    const neg = (v: number) => (v === 0 ? 0 : -v);
    const drift = scheme.dims === 2 ? [neg(coefOf(M[1], 1, 0)), neg(coefOf(M[1], 0, 1))] : [neg(coefOf(M[1], 1, 0))];
    // Diffusion tensor: u_t = Dxx u_xx + 2 Dxy u_xy + Dyy u_yy; the xy moment is 2·Dxy.
    const D2 = M[2];
    const diffusion = scheme.dims === 2
      ? [[coefOf(D2, 2, 0), coefOf(D2, 1, 1) / 2], [coefOf(D2, 1, 1) / 2, coefOf(D2, 0, 2)]]
      : [[coefOf(D2, 2, 0)]];
    const diffusionEigen = scheme.dims === 2 ? eigenSym2(diffusion[0][0], diffusion[0][1], diffusion[1][1]) : [diffusion[0][0]];
    const dn = Math.max(...diffusionEigen.map(Math.abs));
    const anisotropy = dn > 0 && scheme.dims === 2 ? Math.abs(diffusionEigen[0] - diffusionEigen[1]) / dn : 0;

    const coupling: FieldEquation['coupling'][number][] = [];
    for (let j = 0; j < w.n; j++) {
      if (j === fi) continue;
      const cb = bl.get(`${fi},${j}`);
      if (!cb) continue;
      const ctol = tolerances(cb.abs, cb.reach, h);
      const groups = groupsOf(cb.L, scheme.dims, ctol);
      for (let q = 0; q <= 2; q++) if (groups[q].length) coupling.push({ field: w.fields[j], order: q, terms: groups[q] });
    }
    const sym = supportOf(w, fi);
    const rhs: string[] = [];
    for (const q of principalOrders) {
      const ts = M[q];
      rhs.push(termText(ts, name, scheme.dims));
    }
    for (const c of coupling) rhs.push(termText(c.terms, c.field, scheme.dims));
    let text = `${name}_t = ${rhs.length ? rhs.join(' + ').replace(/\+ −/g, '− ') : '0'}`;
    let kind = kindWords({ source, drift, diffusionNorm: dn, anisotropy, principal: principalOrders, dims: scheme.dims });
    if (coupling.length) kind = `${kind === 'no change' ? '' : `${kind}, `}coupled to ${[...new Set(coupling.map((c) => c.field))].join(', ')}`;
    text += ` (${kind})`;
    fields.push({
      field: name, source, drift, diffusion, diffusionEigen, anisotropy, moments: M, modified: C, coupling,
      leadingOrder, principalOrders, principal, leadingError, orderSpace, orderTime, leadingScaling, sourceScaling,
      symmetricSupport: sym.symmetric, rotationSupport: scheme.dims === 1 ? sym.symmetric : sym.rotation, text, kind,
    });
  }
  const summary = fields.map((f) => {
    const err = f.leadingError ? `, leading error ${f.leadingError.text}` : '';
    const o: string[] = [];
    if (f.orderSpace !== null) o.push(`order ${f.orderSpace} in space`);
    if (f.orderTime !== null) o.push(`${f.orderSpace !== null ? '' : 'order '}${f.orderTime} in time`);
    else if (w.n > 1) o.push('time error of the system not analysed');
    const orders = o.length ? `; ${o.join(', ')}` : '';
    return `approximates ${f.text}${err}${orders}`;
  }).join('; ') + (w.linear ? '' : ` (frozen coefficients at (${w.x}, ${w.y}))`);
  return { dims: scheme.dims, spacing: h, dt, linear: w.linear, at: w.linear ? null : { x: w.x, y: w.y }, fields, summary };
}

// ------------------------------------------------------------------------------------------------ diagnostics

/** Codes this module emits, beside the stability analysis' own (STABILITY_CODES). */
export const WHY_CODES = {
  'source-term': 'the spatial operator\'s weights do not sum to 0: a source or sink term',
  'unexpected-drift': 'a symmetric stencil whose weights are not symmetric: a small drift',
  'anisotropic-diffusion': 'a neighbourhood symmetric under quarter turns with an anisotropic diffusion tensor',
  'coefficient-scales-with-h': 'the leading coefficient changes with the spacing h (e.g. a missing /h^2)',
} as const;

export function modifiedEquationDiagnostics(scheme: CheckedScheme, me: ModifiedEquation): Diagnostic[] {
  const out: Diagnostic[] = [];
  for (const f of me.fields) {
    const update = scheme.updates.find((u) => u.field === f.field);
    if (!update) continue;
    const range = update.range;
    const where = me.linear ? '' : ` (frozen coefficients at (${me.at?.x}, ${me.at?.y}))`;
    if (f.source !== 0) {
      const perDt = f.sourceScaling !== null && Math.abs(f.sourceScaling + 1) < 0.01;
      const single = me.fields.length === 1;
      out.push({
        // A warning for linear single-field schemes and for any term that scales like 1/dt (a slip); information for
        // systems and for the linearised reaction of nonlinear schemes (e.g. u − u³), which are sources on purpose.
        range, severity: perDt || (single && me.linear) ? 'warning' : 'info', code: 'source-term', data: { field: f.field, source: f.source },
        message: `The weights of ${f.field}'s spatial operator sum to ${fmt(f.source)} instead of 0: a ${f.source > 0 ? 'source' : 'sink'} term ${fmt(f.source)}·${f.field} (${f.field} ${f.source > 0 ? 'grows' : 'decays'} like e^(${fmt(f.source)}·t))${perDt ? `; it scales like 1/dt, so a term is probably not multiplied by dt (a stray ${fmt(f.source * me.dt)}·${f.field}?)` : ''}${where}.`,
      });
    }
    const dn = Math.max(...f.diffusionEigen.map(Math.abs));
    const vn = Math.hypot(...f.drift);
    if (f.symmetricSupport && vn > 0 && dn > 0 && (vn * me.spacing) / dn < 0.5) {
      out.push({
        range, severity: 'warning', code: 'unexpected-drift', data: { field: f.field, drift: f.drift },
        message: `The stencil of ${f.field} reaches symmetrically, but its weights are not symmetric: a drift of velocity (${f.drift.map((v) => fmt(v)).join(', ')}) next to diffusion ${fmt(dn)}; check the signs and coefficients of opposite neighbours${where}.`,
      });
    }
    if (scheme.dims === 2 && f.rotationSupport && f.principalOrders.includes(2) && f.anisotropy > 1e-6) {
      const [[a, b], [, d]] = f.diffusion;
      out.push({
        range, severity: 'warning', code: 'anisotropic-diffusion', data: { field: f.field, diffusion: f.diffusion },
        message: `The neighbourhood of ${f.field} is symmetric under quarter turns, but the diffusion tensor is anisotropic: Dxx = ${fmt(a)}, Dyy = ${fmt(d)}, Dxy = ${fmt(b)} (eigenvalues ${f.diffusionEigen.map((v) => fmt(v)).join(', ')}), so edges are bent along the grid${where}.`,
      });
    }
    const k = f.leadingScaling;
    if (f.leadingOrder !== null && k !== null && Math.abs(k) > 1e-3 && (scheme.spacing !== 1 || Math.abs(k - f.leadingOrder) > 1e-3)) {
      const what = f.leadingOrder === 2 ? 'diffusion coefficient' : f.leadingOrder === 1 ? 'drift velocity' : `order-${f.leadingOrder} coefficient`;
      const kr = Math.round(k);
      const power = Math.abs(k - kr) < 1e-3 ? (kr === 1 ? 'h' : `h^${kr}`) : `h^${fmt(k, 3)}`;
      const fix = Math.abs(k - kr) < 1e-3 && kr > 0 ? `; divide by ${power} (a missing /${power}?)` : '';
      out.push({
        range, severity: 'warning', code: 'coefficient-scales-with-h', data: { field: f.field, scaling: k, order: f.leadingOrder },
        message: `The ${what} of ${f.field} changes with the spacing like ${power}: ${fmt(groupNorm(f.moments[f.leadingOrder]))} at h = ${fmt(me.spacing)}, so the scheme approximates a different equation on a finer grid${fix}.`,
      });
    }
  }
  return out;
}

/** modifiedEquation and its diagnostics for `fluxel check` and the editor; never throws (null when it cannot evaluate). */
export function analyseWhy(scheme: CheckedScheme, opts: FrozenOptions = {}): { equation: ModifiedEquation | null; diagnostics: Diagnostic[]; error?: string } {
  if (scheme.updates.length === 0) return { equation: null, diagnostics: [] };
  try {
    const equation = modifiedEquation(scheme, opts);
    return { equation, diagnostics: modifiedEquationDiagnostics(scheme, equation) };
  } catch (err) {
    return { equation: null, diagnostics: [], error: err instanceof Error ? err.message : String(err) };
  }
}

/** The JSON form of a modified equation for `fluxel check --json` ("approximates"): plain numbers and text. */
export function modifiedEquationJson(me: ModifiedEquation): Record<string, unknown> {
  const terms = (ts: readonly Term[]) => ts.map((t) => ({ dx: t.i, dy: t.j, coef: t.coef }));
  return {
    summary: me.summary, linear: me.linear, at: me.at, spacing: me.spacing, dt: me.dt,
    fields: me.fields.map((f) => ({
      field: f.field, equation: f.text, kind: f.kind, source: f.source, drift: f.drift, diffusion: f.diffusion, anisotropy: f.anisotropy,
      leadingError: f.leadingError && { order: f.leadingError.order, text: f.leadingError.text, terms: terms(f.leadingError.terms), spacePart: terms(f.leadingError.spacePart), timePart: terms(f.leadingError.timePart) },
      orderSpace: f.orderSpace, orderTime: f.orderTime,
      moments: f.moments.map(terms),
      modified: f.modified ? f.modified.map(terms) : null,
    })),
  };
}
