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

function isIdentity(w: MatrixStencil): boolean {
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
 * Largest dt with every non-growing eigenvalue of G(θ, dt) within 1 + MARGIN, over a grid of θ refined near
 * the worst frequency. When G = I + dt·M exactly, |1 + dt·μ| ≤ 1 gives dt ≤ −2 Re μ / |μ|² per eigenvalue μ
 * of M(θ) (closed form); otherwise bisection on dt.
 */
export function vonNeumann(model: DtModel, dims: 1 | 2, dtRef: number, perHalf = dims === 1 ? 64 : 16, refineWorst = true): VonNeumannResult {
  const grid = thetaGrid(dims, perHalf);
  const step = Math.PI / perHalf;
  const rs = cmatrix(model.n);
  const mus = grid.map((th) => eigenvalues(symbol(model.rate, th, rs)));
  let muScale = 0;
  for (const mu of mus) for (const [a, b] of mu) muScale = Math.max(muScale, Math.hypot(a, b));
  const growTol = 1e-10 * Math.max(muScale, 1e-300);
  let growth: { modes: number; maxRate: number; theta: number[] } | null = null;
  const growingAt = mus.map((mu, k) => {
    let count = 0;
    let rate = -Infinity;
    for (const [re] of mu) if (re > growTol) { count++; rate = Math.max(rate, re); }
    if (count > 0) {
      if (!growth) growth = { modes: 0, maxRate: rate, theta: grid[k] };
      growth.modes++;
      if (rate > growth.maxRate) { growth.maxRate = rate; growth.theta = grid[k]; }
    }
    return count;
  });

  const affine = model.poly !== null && model.poly.length <= 2 && isIdentity(model.poly[0]);
  if (affine) {
    // The closed-form limit at one frequency from the eigenvalues μ of M(θ); Infinity when none restricts dt.
    const limitOf = (mu: [number, number][]): number => {
      let lim = Infinity;
      for (const [re, im] of mu) {
        const a = Math.hypot(re, im);
        if (re > growTol || a <= 1e-9 * muScale) continue;
        lim = Math.min(lim, re >= -1e-12 * a ? 0 : (-2 * re) / (a * a));
      }
      return lim;
    };
    let best = Infinity;
    let at = grid[0];
    mus.forEach((mu, k) => {
      const v = limitOf(mu);
      if (v < best) { best = v; at = grid[k]; }
    });
    if (best === Infinity || !refineWorst) return { limit: best, worstTheta: at, growth, closedForm: true };
    const r = refine((th) => limitOf(eigenvalues(symbol(model.rate, th, rs))), at, step / 2);
    return { limit: Math.min(best, r.value), worstTheta: r.value < best ? r.theta : at, growth, closedForm: true };
  }

  // ρ(dt): the largest modulus among non-growing eigenvalues of G over the frequencies `ths`; the growing ones
  // (as many as M has at that θ) are taken to be the largest moduli and set aside.
  const g = cmatrix(model.n);
  const rhoAt = (w: MatrixStencil, th: number[], growing: number): number => {
    const mods = eigenvalues(symbol(w, th, g)).map(([a, b]) => Math.hypot(a, b)).sort((a, b) => b - a);
    return mods[growing] ?? 0;
  };
  const growingOf = (th: number[]): number => {
    let c = 0;
    for (const [re] of eigenvalues(symbol(model.rate, th, rs))) if (re > growTol) c++;
    return c;
  };
  let ths = grid;
  let grow = growingAt;
  const rho = (dt: number): { value: number; theta: number[] } => {
    const w = model.at(dt);
    let best = -1;
    let at = ths[0];
    ths.forEach((th, k) => {
      const v = rhoAt(w, th, grow[k]);
      if (v > best) { best = v; at = th; }
    });
    return { value: best, theta: at };
  };
  const search = (): { limit: number; hi: number } => {
    const stable = (dt: number): boolean => rho(dt).value <= 1 + MARGIN;
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
  const first = search();
  if (!Number.isFinite(first.limit) || first.limit === 0 || !refineWorst) {
    return { limit: first.limit, worstTheta: rho(first.hi).theta, growth, closedForm: false };
  }
  const w = model.at(first.hi);
  const r = refine((th) => -rhoAt(w, th, growingOf(th)), rho(first.hi).theta, step / 2);
  ths = [r.theta];
  grow = [growingOf(r.theta)];
  const second = search();
  if (second.limit < first.limit) return { limit: second.limit, worstTheta: r.theta, growth, closedForm: false };
  ths = grid;
  grow = growingAt;
  return { limit: first.limit, worstTheta: rho(first.hi).theta, growth, closedForm: false };
}

/** Smallest t > 0 where p(t) = Σ c_k t^k turns negative (Infinity if never); 0 when negative just after 0. */
function firstNegative(c: readonly number[], scale: number, dtRef: number): number {
  const tol = 1e-12 * Math.max(scale, 1e-300);
  let low = -1;
  for (let k = 0; k < c.length; k++) if (Math.abs(c[k]) * Math.pow(dtRef, k) > tol) { low = k; break; }
  if (low < 0) return Infinity;
  if (c[low] < 0) return 0;
  const deg = c.length - 1;
  if (deg <= 1) return c[1] < 0 && low === 0 ? -c[0] / c[1] : Infinity;
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
