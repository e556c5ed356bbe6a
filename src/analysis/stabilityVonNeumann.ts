// Von Neumann analysis of a (frozen-coefficient) matrix stencil whose weights depend on dt: amplification
// matrix G(θ, dt), physically growing modes, and the largest stable dt (closed form or bisection).
// Pure: imports only stabilityEigen; never Node, vscode, the DOM or the notation.

import { cmatrix, eigenvalues, type CMatrix } from './stabilityEigen';

/** Weight of old field j at offset (dx, dy) in the new value of field i (indices among the updated fields). */
export interface MatrixEntry {
  readonly i: number;
  readonly j: number;
  readonly dx: number;
  readonly dy: number;
  readonly w: number;
}

export interface MatrixStencil {
  readonly n: number;
  readonly entries: readonly MatrixEntry[];
}

/** Weights as a function of dt, with the polynomial form when the dependence is polynomial (degree ≤ 3). */
export interface DtModel {
  readonly n: number;
  at(dt: number): MatrixStencil;
  /** Coefficients of dt^k, k = 0..degree, when the weights are a polynomial in dt; otherwise null. */
  readonly poly: readonly MatrixStencil[] | null;
  /** ∂W/∂dt at dt = 0: the semi-discrete operator M, with G = I + dt·M + O(dt²). */
  readonly rate: MatrixStencil;
}

/** |G| may exceed 1 by this much and still count as stable ("marginal"), per numerics.md. */
export const MARGIN = 1e-7;

function entryKey(e: { i: number; j: number; dx: number; dy: number }): string {
  return `${e.i},${e.j},${e.dx},${e.dy}`;
}

function scaleOf(ws: readonly MatrixStencil[]): number {
  let s = 0;
  for (const w of ws) for (const e of w.entries) s = Math.max(s, Math.abs(e.w));
  return s;
}

/**
 * Fits weights(dt) by a cubic through dt = 0, d, 2d, 3d and checks it at 1.5d and 4d; exact for the
 * polynomials that explicit schemes produce (degree 1, or 2–3 when primed updates compose).
 */
export function buildDtModel(n: number, weightsAt: (dt: number) => MatrixStencil, d: number): DtModel {
  const samples = [0, 1, 2, 3].map((s) => weightsAt(s * d));
  const keys = new Map<string, { i: number; j: number; dx: number; dy: number }>();
  for (const w of samples) for (const e of w.entries) keys.set(entryKey(e), e);
  const val = (w: MatrixStencil): Map<string, number> => {
    const m = new Map<string, number>();
    for (const e of w.entries) m.set(entryKey(e), (m.get(entryKey(e)) ?? 0) + e.w);
    return m;
  };
  const f = samples.map(val);
  const scale = Math.max(scaleOf(samples), 1e-300);
  const coef: MatrixEntry[][] = [[], [], [], []];
  for (const [k, e] of keys) {
    const [f0, f1, f2, f3] = f.map((m) => m.get(k) ?? 0);
    const d1 = f1 - f0;
    const d2 = f2 - 2 * f1 + f0;
    const d3 = f3 - 3 * f2 + 3 * f1 - f0;
    const a = [f0, d1 - d2 / 2 + d3 / 3, d2 / 2 - d3 / 2, d3 / 6];
    for (let p = 0; p < 4; p++) coef[p].push({ ...e, w: a[p] / Math.pow(d, p) });
  }
  const polyAt = (dt: number): MatrixStencil => {
    const out: MatrixEntry[] = [];
    for (let q = 0; q < coef[0].length; q++) {
      let w = 0;
      for (let p = 3; p >= 0; p--) w = w * dt + coef[p][q].w;
      out.push({ ...coef[0][q], w });
    }
    return { n, entries: out };
  };
  let polynomial = true;
  for (const s of [1.5, 4]) {
    const direct = val(weightsAt(s * d));
    const fitted = val(polyAt(s * d));
    const tol = 1e-8 * scale * Math.pow(s, 3);
    for (const k of new Set([...direct.keys(), ...fitted.keys()])) {
      if (Math.abs((direct.get(k) ?? 0) - (fitted.get(k) ?? 0)) > tol) polynomial = false;
    }
  }
  if (polynomial) {
    let degree = 0;
    for (let p = 1; p < 4; p++) {
      const cp = Math.max(0, ...coef[p].map((e) => Math.abs(e.w) * Math.pow(d, p)));
      if (cp > 1e-11 * scale) degree = p;
    }
    const poly = coef.slice(0, degree + 1).map((entries) => ({ n, entries: entries.filter((e) => e.w !== 0) }));
    return { n, at: polyAt, poly, rate: poly[1] ?? { n, entries: [] } };
  }
  const eps = 1e-6 * d;
  const plus = val(weightsAt(eps));
  const minus = val(weightsAt(-eps));
  const rate: MatrixEntry[] = [];
  for (const [k, e] of keys) rate.push({ ...e, w: ((plus.get(k) ?? 0) - (minus.get(k) ?? 0)) / (2 * eps) });
  return { n, at: weightsAt, poly: null, rate: { n, entries: rate } };
}

/** G(θ) = Σ W(o) e^{i o·θ}, for u'(x) = Σ_o W(o) u(x + o) and u(x) = e^{i x·θ}. */
export function symbol(w: MatrixStencil, theta: readonly number[], out?: CMatrix): CMatrix {
  const m = out ?? cmatrix(w.n);
  m.re.fill(0);
  m.im.fill(0);
  const tx = theta[0] ?? 0;
  const ty = theta[1] ?? 0;
  for (const e of w.entries) {
    const phi = e.dx * tx + e.dy * ty;
    const k = e.i * w.n + e.j;
    m.re[k] += e.w * Math.cos(phi);
    m.im[k] += e.w * Math.sin(phi);
  }
  return m;
}

/** Frequencies on [−π, π] per axis with 0 and ±π included (numerics.md). */
export function thetaGrid(dims: 1 | 2, perHalf: number): number[][] {
  const axis: number[] = [];
  for (let k = -perHalf; k <= perHalf; k++) axis.push((Math.PI * k) / perHalf);
  if (dims === 1) return axis.map((a) => [a]);
  const out: number[][] = [];
  for (const a of axis) for (const b of axis) out.push([a, b]);
  return out;
}

/** Local pattern search from `start`, minimising f; steps shrink from `step` to 1e-7. */
function refine(f: (th: number[]) => number, start: number[], step: number): { theta: number[]; value: number } {
  let best = start.slice();
  let fb = f(best);
  for (let s = step; s > 1e-7; s /= 2) {
    let improved = true;
    while (improved) {
      improved = false;
      for (let a = 0; a < best.length; a++) {
        for (const sg of [1, -1]) {
          const cand = best.slice();
          cand[a] = Math.max(-Math.PI, Math.min(Math.PI, cand[a] + sg * s));
          const fc = f(cand);
          if (fc < fb) {
            fb = fc;
            best = cand;
            improved = true;
          }
        }
      }
    }
  }
  return { theta: best, value: fb };
}

export interface GrowthInfo {
  /** Number of grid frequencies with a mode the equations themselves make grow (Re μ > 0). */
  readonly modes: number;
  readonly maxRate: number;
  readonly theta: number[];
}

export interface VonNeumannResult {
  /** Largest stable dt; Infinity when every dt > 0 is stable; 0 when none is. */
  readonly limit: number;
  readonly worstTheta: number[];
  readonly growth: GrowthInfo | null;
  readonly closedForm: boolean;
}

/** True when the stencil is exactly the identity on every field (offset 0, weight 1, nothing else). */
export function isIdentity(w: MatrixStencil): boolean {
  const acc = new Map<string, number>();
  for (const e of w.entries) acc.set(entryKey(e), (acc.get(entryKey(e)) ?? 0) + e.w);
  for (const [k, v] of acc) {
    const [i, j, dx, dy] = k.split(',').map(Number);
    const want = i === j && dx === 0 && dy === 0 ? 1 : 0;
    if (Math.abs(v - want) > 1e-12) return false;
  }
  // Every diagonal term must be present (a field absent from its own update is not the identity).
  for (let i = 0; i < w.n; i++) if (!acc.has(`${i},${i},0,0`)) return false;
  return true;
}

/**
 * The frequency grid of thetaGrid with conjugate pairs folded and phase factors cached. Weights are real, so
 * G(−θ) is the complex conjugate of G(θ) and has the same eigenvalue moduli: only one of θ, −θ is scanned.
 * −π and π are the same frequency on an integer grid, so each axis holds the 2·perHalf values in (−π, π].
 */
interface FreqGrid {
  readonly dims: 1 | 2;
  readonly perHalf: number;
  /** Axis values θ_k = π·k/perHalf for k = −perHalf+1..perHalf, at index k + perHalf − 1. */
  readonly axis: Float64Array;
  /** Representatives: axis indices per frequency, their θ, and 1 or 2 (a frequency and its mirror). */
  readonly ix: Int32Array;
  readonly iy: Int32Array;
  readonly thetas: number[][];
  readonly mult: Uint8Array;
  /** cos(o·θ_k), sin(o·θ_k) for |o| ≤ reach, at (o + reach)·axis.length + k; grown on demand. */
  reach: number;
  cos: Float64Array;
  sin: Float64Array;
}

const GRIDS = new Map<string, FreqGrid>();

function freqGrid(dims: 1 | 2, perHalf: number): FreqGrid {
  const key = `${dims}:${perHalf}`;
  const hit = GRIDS.get(key);
  if (hit) return hit;
  const A = 2 * perHalf;
  const axis = new Float64Array(A);
  for (let k = -perHalf + 1; k <= perHalf; k++) axis[k + perHalf - 1] = (Math.PI * k) / perHalf;
  // The mirror of axis index k (value k − perHalf + 1) is −value, with −perHalf wrapped to perHalf.
  const mirror = (i: number): number => {
    const v = i - perHalf + 1;
    const m = v === perHalf ? perHalf : -v;
    return m + perHalf - 1;
  };
  const ix: number[] = [];
  const iy: number[] = [];
  const mult: number[] = [];
  const ys = dims === 2 ? A : 1;
  for (let b = 0; b < ys; b++) {
    for (let a = 0; a < A; a++) {
      const ma = mirror(a);
      const mb = dims === 2 ? mirror(b) : 0;
      const self = a * ys + b;
      const other = ma * ys + mb;
      if (other < self) continue;
      ix.push(a);
      iy.push(b);
      mult.push(other === self ? 1 : 2);
    }
  }
  const g: FreqGrid = {
    dims, perHalf, axis,
    ix: Int32Array.from(ix), iy: Int32Array.from(iy), mult: Uint8Array.from(mult),
    thetas: ix.map((a, k) => (dims === 2 ? [axis[a], axis[iy[k]]] : [axis[a]])),
    reach: -1, cos: new Float64Array(0), sin: new Float64Array(0),
  };
  GRIDS.set(key, g);
  return g;
}

function ensureReach(g: FreqGrid, reach: number): void {
  if (reach <= g.reach) return;
  const A = g.axis.length;
  const cos = new Float64Array((2 * reach + 1) * A);
  const sin = new Float64Array((2 * reach + 1) * A);
  for (let o = -reach; o <= reach; o++) {
    for (let k = 0; k < A; k++) {
      cos[(o + reach) * A + k] = Math.cos(o * g.axis[k]);
      sin[(o + reach) * A + k] = Math.sin(o * g.axis[k]);
    }
  }
  g.reach = reach;
  g.cos = cos;
  g.sin = sin;
}

/** Symbols of `w` at every representative frequency: re/im at f·n² + i·n + j (allocation-free inner loop). */
function symbolTable(w: MatrixStencil, g: FreqGrid, out?: { re: Float64Array; im: Float64Array }): { re: Float64Array; im: Float64Array } {
  const n2 = w.n * w.n;
  const F = g.ix.length;
  const re = out?.re ?? new Float64Array(F * n2);
  const im = out?.im ?? new Float64Array(F * n2);
  re.fill(0);
  im.fill(0);
  let reach = 0;
  for (const e of w.entries) reach = Math.max(reach, Math.abs(e.dx), Math.abs(e.dy));
  ensureReach(g, reach);
  const A = g.axis.length;
  const R = g.reach;
  const { cos, sin, ix, iy } = g;
  for (const e of w.entries) {
    const k = e.i * w.n + e.j;
    const bx = (e.dx + R) * A;
    const by = (e.dy + R) * A;
    const wv = e.w;
    if (g.dims === 1 || e.dy === 0) {
      for (let f = 0; f < F; f++) {
        re[f * n2 + k] += wv * cos[bx + ix[f]];
        im[f * n2 + k] += wv * sin[bx + ix[f]];
      }
    } else {
      // e^{i(a+b)} = (cos a cos b − sin a sin b) + i (sin a cos b + cos a sin b).
      for (let f = 0; f < F; f++) {
        const ca = cos[bx + ix[f]];
        const sa = sin[bx + ix[f]];
        const cb = cos[by + iy[f]];
        const sb = sin[by + iy[f]];
        re[f * n2 + k] += wv * (ca * cb - sa * sb);
        im[f * n2 + k] += wv * (sa * cb + ca * sb);
      }
    }
  }
  return { re, im };
}

/**
 * Eigenvalues of the n×n complex matrix at offset `off` of (re, im), written as pairs into `out`; closed forms
 * for n ≤ 2 without allocation, the general solver beyond.
 */
function eigInto(n: number, re: Float64Array, im: Float64Array, off: number, out: Float64Array, scratch: CMatrix): void {
  if (n === 1) {
    out[0] = re[off];
    out[1] = im[off];
    return;
  }
  if (n === 2) {
    const ar = re[off], ai = im[off], br = re[off + 1], bi = im[off + 1];
    const cr = re[off + 2], ci = im[off + 2], dr = re[off + 3], di = im[off + 3];
    const tr = ar + dr, ti = ai + di;
    // disc = tr² − 4(ad − bc)
    const detr = ar * dr - ai * di - (br * cr - bi * ci);
    const deti = ar * di + ai * dr - (br * ci + bi * cr);
    // Principal square root of the discriminant, inline (as csqrt) so the hot loop allocates nothing.
    const qr = tr * tr - ti * ti - 4 * detr;
    const qi = 2 * tr * ti - 4 * deti;
    const qm = Math.hypot(qr, qi);
    let sr = 0;
    let si = 0;
    if (qm !== 0) {
      const a = Math.sqrt((qm + Math.abs(qr)) / 2);
      if (qr >= 0) { sr = a; si = qi / (2 * a); } else { sr = Math.abs(qi) / (2 * a); si = qi >= 0 ? a : -a; }
    }
    out[0] = (tr + sr) / 2;
    out[1] = (ti + si) / 2;
    out[2] = (tr - sr) / 2;
    out[3] = (ti - si) / 2;
    return;
  }
  const n2 = n * n;
  for (let k = 0; k < n2; k++) {
    scratch.re[k] = re[off + k];
    scratch.im[k] = im[off + k];
  }
  const ev = eigenvalues(scratch);
  for (let k = 0; k < n; k++) {
    out[2 * k] = ev[k][0];
    out[2 * k + 1] = ev[k][1];
  }
}

/** The `skip`-th largest modulus among the n eigenvalue pairs in `ev` (0 = the spectral radius). */
function modulusRank(ev: Float64Array, n: number, skip: number): number {
  if (skip >= n) return 0;
  if (n === 1) return Math.hypot(ev[0], ev[1]);
  if (n === 2) {
    const a = Math.hypot(ev[0], ev[1]);
    const b = Math.hypot(ev[2], ev[3]);
    return skip === 0 ? Math.max(a, b) : Math.min(a, b);
  }
  const mods: number[] = [];
  for (let k = 0; k < n; k++) mods.push(Math.hypot(ev[2 * k], ev[2 * k + 1]));
  mods.sort((p, q) => q - p);
  return mods[skip];
}

/**
 * Largest dt with every non-growing eigenvalue of G(θ, dt) within 1 + MARGIN, over a grid of θ refined near
 * the worst frequency. When G = I + dt·M exactly, |1 + dt·μ| ≤ 1 gives dt ≤ −2 Re μ / |μ|² per eigenvalue μ
 * of M(θ) (closed form); otherwise bisection on dt, with the symbols of the dt-polynomial's coefficients
 * tabulated once so a bisection step costs a few multiply-adds and one small eigenproblem per frequency.
 */
export function vonNeumann(model: DtModel, dims: 1 | 2, dtRef: number, perHalf = dims === 1 ? 64 : 16, refineWorst = true): VonNeumannResult {
  const g = freqGrid(dims, perHalf);
  const F = g.ix.length;
  const n = model.n;
  const n2 = n * n;
  const step = Math.PI / perHalf;
  const scratch = cmatrix(n);
  const ev = new Float64Array(2 * Math.max(n, 1));

  // Eigenvalues μ of M(θ) at every representative frequency, kept for the growth test and the closed form.
  const M = symbolTable(model.rate, g);
  const mus = new Float64Array(F * 2 * n);
  let muScale = 0;
  for (let f = 0; f < F; f++) {
    eigInto(n, M.re, M.im, f * n2, ev, scratch);
    for (let k = 0; k < 2 * n; k++) mus[f * 2 * n + k] = ev[k];
    for (let k = 0; k < n; k++) muScale = Math.max(muScale, Math.hypot(ev[2 * k], ev[2 * k + 1]));
  }
  // Relative to the largest rate; when every rate is zero, rounding noise must not count as growth.
  const growTol = muScale > 0 ? 1e-10 * muScale : 1e-14;
  let growth: GrowthInfo | null = null;
  const growingAt = new Int32Array(F);
  for (let f = 0; f < F; f++) {
    let count = 0;
    let rate = -Infinity;
    for (let k = 0; k < n; k++) {
      const re = mus[f * 2 * n + 2 * k];
      if (re > growTol) { count++; rate = Math.max(rate, re); }
    }
    growingAt[f] = count;
    if (count > 0) {
      const gi: { modes: number; maxRate: number; theta: number[] } = growth ?? { modes: 0, maxRate: rate, theta: g.thetas[f] };
      gi.modes += g.mult[f];
      if (rate > gi.maxRate) { gi.maxRate = rate; gi.theta = g.thetas[f]; }
      growth = gi;
    }
  }

  const affine = model.poly !== null && model.poly.length <= 2 && isIdentity(model.poly[0]);
  if (affine) {
    // The closed-form limit at one frequency from the eigenvalues μ of M(θ); Infinity when none restricts dt.
    const limitOfPairs = (mu: ArrayLike<number>, base: number): number => {
      let lim = Infinity;
      for (let k = 0; k < n; k++) {
        const re = mu[base + 2 * k];
        const im = mu[base + 2 * k + 1];
        const a = Math.hypot(re, im);
        if (re > growTol || a <= 1e-9 * muScale) continue;
        lim = Math.min(lim, re >= -1e-12 * a ? 0 : (-2 * re) / (a * a));
      }
      return lim;
    };
    let best = Infinity;
    let at = g.thetas[0];
    for (let f = 0; f < F; f++) {
      const v = limitOfPairs(mus, f * 2 * n);
      if (v < best) { best = v; at = g.thetas[f]; }
    }
    if (best === Infinity || !refineWorst) return { limit: best, worstTheta: at, growth, closedForm: true };
    const rs = cmatrix(n);
    const limitAt = (th: number[]): number => {
      const e = eigenvalues(symbol(model.rate, th, rs));
      const flat: number[] = [];
      for (const [a, b] of e) flat.push(a, b);
      return limitOfPairs(flat, 0);
    };
    const r = refine(limitAt, at, step / 2);
    return { limit: Math.min(best, r.value), worstTheta: r.value < best ? r.theta : at, growth, closedForm: true };
  }

  // ρ(dt, θ): the largest modulus among non-growing eigenvalues of G; the growing ones (as many as M has at
  // that θ) are taken to be the largest moduli and set aside.
  const tables = model.poly ? model.poly.map((w) => symbolTable(w, g)) : null;
  const G = { re: new Float64Array(F * n2), im: new Float64Array(F * n2) };
  let tabledDt = NaN;
  const tabulate = (dt: number): void => {
    if (dt === tabledDt) return;
    tabledDt = dt;
    if (!tables) {
      symbolTable(model.at(dt), g, G);
      return;
    }
    G.re.fill(0);
    G.im.fill(0);
    let p = 1;
    for (const t of tables) {
      for (let k = 0; k < G.re.length; k++) {
        G.re[k] += p * t.re[k];
        G.im[k] += p * t.im[k];
      }
      p *= dt;
    }
  };
  const rhoGrid = (f: number): number => {
    eigInto(n, G.re, G.im, f * n2, ev, scratch);
    return modulusRank(ev, n, growingAt[f]);
  };
  const rs = cmatrix(n);
  const gs = cmatrix(n);
  const growingOf = (th: number[]): number => {
    let c = 0;
    for (const [re] of eigenvalues(symbol(model.rate, th, rs))) if (re > growTol) c++;
    return c;
  };
  const rhoTheta = (dt: number, th: number[], growing: number): number => {
    const mods = eigenvalues(symbol(model.at(dt), th, gs)).map(([a, b]) => Math.hypot(a, b)).sort((a, b) => b - a);
    return mods[growing] ?? 0;
  };
  // The frequency that failed last is tried first: bisection steps above the limit then stop at once.
  let lastBad = 0;
  const stableOnGrid = (dt: number): boolean => {
    tabulate(dt);
    if (rhoGrid(lastBad) > 1 + MARGIN) return false;
    for (let f = 0; f < F; f++) {
      if (rhoGrid(f) > 1 + MARGIN) { lastBad = f; return false; }
    }
    return true;
  };
  const worstOnGrid = (dt: number): number[] => {
    tabulate(dt);
    let best = -1;
    let at = 0;
    for (let f = 0; f < F; f++) {
      const v = rhoGrid(f);
      if (v > best) { best = v; at = f; }
    }
    return g.thetas[at];
  };
  const search = (stable: (dt: number) => boolean): { limit: number; hi: number } => {
    let lo: number;
    let hi: number;
    if (stable(dtRef)) {
      lo = dtRef;
      hi = dtRef * 2;
      let k = 0;
      while (stable(hi)) {
        lo = hi;
        hi *= 2;
        if (++k > 40) return { limit: Infinity, hi };
      }
    } else {
      hi = dtRef;
      lo = dtRef / 2;
      let k = 0;
      while (!stable(lo)) {
        hi = lo;
        lo /= 2;
        if (++k > 40) return { limit: 0, hi };
      }
    }
    for (let k = 0; k < 60 && hi - lo > 1e-12 * hi; k++) {
      const mid = (lo + hi) / 2;
      if (stable(mid)) lo = mid;
      else hi = mid;
    }
    return { limit: lo, hi };
  };
  // Bisection on the grid, then on the refined worst frequency alone: the limit over both sets is the smaller.
  const first = search(stableOnGrid);
  const firstWorst = worstOnGrid(first.hi);
  if (!Number.isFinite(first.limit) || first.limit === 0 || !refineWorst) {
    return { limit: first.limit, worstTheta: firstWorst, growth, closedForm: false };
  }
  const r = refine((th) => -rhoTheta(first.hi, th, growingOf(th)), firstWorst, step / 2);
  const grow = growingOf(r.theta);
  const second = search((dt) => rhoTheta(dt, r.theta, grow) <= 1 + MARGIN);
  if (second.limit < first.limit) return { limit: second.limit, worstTheta: r.theta, growth, closedForm: false };
  return { limit: first.limit, worstTheta: firstWorst, growth, closedForm: false };
}

/** Smallest t > 0 where p(t) = Σ c_k t^k turns negative (Infinity if never); 0 when negative just after 0. */
function firstNegative(c: readonly number[], scale: number, dtRef: number): number {
  const tol = 1e-12 * Math.max(scale, 1e-300);
  let low = -1;
  for (let k = 0; k < c.length; k++) if (Math.abs(c[k]) * Math.pow(dtRef, k) > tol) { low = k; break; }
  if (low < 0) return Infinity;
  if (c[low] < 0) return 0;
  let deg = c.length - 1;
  while (deg > low && Math.abs(c[deg]) * Math.pow(dtRef, deg) <= tol) deg--;
  if (deg <= 1) return deg === 1 && c[1] < 0 && low === 0 ? -c[0] / c[1] : Infinity;
  if (deg === 2) {
    // c0 + c1 t + c2 t² with c[low] > 0: the smallest positive root, where the sign first turns negative.
    const [a, b, q] = [c[2], c[1], c[0]];
    if (low === 2) return Infinity;
    if (low === 1) return a < 0 ? -b / a : Infinity;
    const disc = b * b - 4 * a * q;
    if (disc < 0) return Infinity;
    // Roots by the cancellation-free form: r1 = (−b − sign(b)√disc)/2a, r2 = q/(a·r1).
    const sq = Math.sqrt(disc);
    const m = -0.5 * (b + (b >= 0 ? sq : -sq));
    const roots = [m / a, m !== 0 ? q / m : Infinity].filter((r) => r > 0 && Number.isFinite(r)).sort((x, y) => x - y);
    if (a < 0) return roots[0] ?? Infinity;
    // a > 0: p is negative only between two positive roots; a (near-)double root only touches 0, which the
    // value at the vertex, within the tolerance, tells more reliably than the sign of a rounded discriminant.
    if (q - (b * b) / (4 * a) >= -tol) return Infinity;
    return roots.length === 2 ? roots[0] : Infinity;
  }
  const p = (t: number): number => { let v = 0; for (let k = deg; k >= 0; k--) v = v * t + c[k]; return v; };
  // Scan a logarithmic grid for the first sign change, then bisect.
  let prev = dtRef * 1e-9;
  for (let e = -9; e <= 9; e += 0.01) {
    const t = dtRef * Math.pow(10, e);
    if (p(t) < -tol) {
      let a = prev;
      let b = t;
      for (let k = 0; k < 100; k++) { const m = (a + b) / 2; if (p(m) < -tol) b = m; else a = m; }
      return a;
    }
    prev = t;
  }
  return Infinity;
}

/** Largest dt keeping every weight ≥ 0; Infinity when every dt does; null when no dt > 0 does. */
export function positivityLimit(model: DtModel, dtRef: number): number | null {
  if (model.poly) {
    const acc = new Map<string, number[]>();
    model.poly.forEach((w, k) => {
      for (const e of w.entries) {
        const key = entryKey(e);
        const c = acc.get(key) ?? new Array<number>(model.poly!.length).fill(0);
        c[k] += e.w;
        acc.set(key, c);
      }
    });
    const scale = scaleOf([model.at(dtRef)]);
    let lim = Infinity;
    for (const c of acc.values()) lim = Math.min(lim, firstNegative(c, scale, dtRef));
    return lim > 0 ? lim : null;
  }
  const ok = (dt: number): boolean => {
    const acc = new Map<string, number>();
    for (const e of model.at(dt).entries) acc.set(entryKey(e), (acc.get(entryKey(e)) ?? 0) + e.w);
    for (const v of acc.values()) if (v < -1e-12) return false;
    return true;
  };
  let lo: number;
  let hi: number;
  if (ok(dtRef)) {
    lo = dtRef;
    hi = dtRef * 2;
    let k = 0;
    while (ok(hi)) {
      lo = hi;
      hi *= 2;
      if (++k > 40) return Infinity;
    }
  } else {
    hi = dtRef;
    lo = dtRef / 2;
    let k = 0;
    while (!ok(lo)) {
      hi = lo;
      lo /= 2;
      if (++k > 40) return null;
    }
  }
  for (let k = 0; k < 60 && hi - lo > 1e-13 * hi; k++) {
    const mid = (lo + hi) / 2;
    if (ok(mid)) lo = mid;
    else hi = mid;
  }
  return lo;
}
