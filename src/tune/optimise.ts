// Bounded derivative-free minimisers for `fluxel fit`: Nelder–Mead in a box (projection onto the box) and
// golden-section search on an interval. Pure: plain numbers in, plain numbers out, no Node, no engine.
// Objectives are asynchronous and evaluated in batches, so a caller can spread independent points over a worker pool.

/** Evaluates several points at once; returns one value per point, in order. NaN counts as +Infinity (worst). */
export type BatchObjective = (points: number[][]) => Promise<number[]>;

export interface Bounds {
  readonly lo: readonly number[];
  readonly hi: readonly number[];
}

export interface MinimiseResult {
  readonly x: number[];
  readonly f: number;
  readonly evaluations: number;
  readonly iterations: number;
  /** Why the search stopped. */
  readonly stop: 'tolerance' | 'max-evaluations';
}

export interface NelderMeadOptions {
  /** Starting point (projected onto the box). */
  readonly start: readonly number[];
  /** Initial simplex edge as a fraction of each box side (default 0.25). */
  readonly initialStep?: number;
  /** Stop when the simplex fits in a cube of this side, as a fraction of each box side (default 1e-3) ... */
  readonly xTolerance?: number;
  /** ... and the spread of values over the simplex is at most this (default 1e-6). */
  readonly fTolerance?: number;
  /** Hard limit on objective evaluations, cached repeats excluded (default 200). */
  readonly maxEvaluations?: number;
}

const worst = (v: number) => (Number.isNaN(v) ? Number.POSITIVE_INFINITY : v);

/**
 * Wraps a batch objective with a cache keyed by the exact coordinates, so points that projection maps onto
 * the same spot (common on the box faces) are evaluated once, and counts the real evaluations.
 */
function cached(f: BatchObjective) {
  const memo = new Map<string, number>();
  let count = 0;
  const evaluate = async (points: number[][]): Promise<number[]> => {
    const keys = points.map((p) => p.map((v) => v.toString()).join(','));
    const fresh: number[][] = [];
    const freshKeys: string[] = [];
    keys.forEach((k, i) => {
      if (!memo.has(k) && !freshKeys.includes(k)) {
        fresh.push(points[i]);
        freshKeys.push(k);
      }
    });
    if (fresh.length) {
      const values = await f(fresh);
      if (values.length !== fresh.length) throw new Error(`objective returned ${values.length} values for ${fresh.length} points`);
      freshKeys.forEach((k, i) => memo.set(k, worst(values[i])));
      count += fresh.length;
    }
    return keys.map((k) => memo.get(k) as number);
  };
  return { evaluate, count: () => count };
}

function checkBounds(b: Bounds, n: number): void {
  if (b.lo.length !== n || b.hi.length !== n) throw new Error(`bounds need ${n} entries, got ${b.lo.length} and ${b.hi.length}`);
  for (let i = 0; i < n; i++) {
    if (!(Number.isFinite(b.lo[i]) && Number.isFinite(b.hi[i]) && b.lo[i] < b.hi[i])) {
      throw new Error(`bound ${i} must be finite with lo < hi, got [${b.lo[i]}, ${b.hi[i]}]`);
    }
  }
}

/**
 * Nelder–Mead simplex search inside a box.
 *
 * Method: J. A. Nelder and R. Mead, "A simplex method for function minimization", The Computer Journal 7(4),
 * 308–313, 1965, with the standard coefficients reflection ρ = 1, expansion χ = 2, contraction γ = 1/2 and
 * shrink σ = 1/2, and the ordering and tie rules of J. C. Lagarias, J. A. Reeds, M. H. Wright and P. E. Wright,
 * "Convergence properties of the Nelder–Mead simplex method in low dimensions", SIAM J. Optim. 9(1), 1998
 * (inside and outside contractions, accept the reflected point when f1 ≤ fr < fn).
 *
 * Bounds: the search runs in coordinates scaled to the unit cube, and every trial point is projected
 * (clamped) onto it before evaluation. Projection keeps every evaluated point feasible; its cost is that a
 * simplex may flatten against a face, which the shrink step undoes. Lagarias et al.'s convergence results are
 * for the unbounded method; with projection we only claim what the tests show (minima inside and on the boundary).
 * Deterministic: the same objective gives the same sequence of points.
 */
export async function nelderMead(f: BatchObjective, bounds: Bounds, opts: NelderMeadOptions): Promise<MinimiseResult> {
  const n = opts.start.length;
  if (n < 1) throw new Error('Nelder–Mead needs at least one variable');
  checkBounds(bounds, n);
  const span = bounds.lo.map((lo, i) => bounds.hi[i] - lo);
  const toBox = (u: number[]) => u.map((v, i) => bounds.lo[i] + Math.min(1, Math.max(0, v)) * span[i]);
  const project = (u: number[]) => u.map((v) => Math.min(1, Math.max(0, v)));
  const { evaluate, count } = cached((us) => f(us.map(toBox)));
  const step = opts.initialStep ?? 0.25;
  const xTol = opts.xTolerance ?? 1e-3;
  const fTol = opts.fTolerance ?? 1e-6;
  const maxEvals = opts.maxEvaluations ?? 200;

  // Initial simplex: the start and one point per axis, stepping inwards when the start sits near the upper face.
  const u0 = project(opts.start.map((v, i) => (v - bounds.lo[i]) / span[i]));
  let simplex: number[][] = [u0];
  for (let i = 0; i < n; i++) {
    const p = u0.slice();
    p[i] = p[i] + step <= 1 ? p[i] + step : p[i] - step;
    simplex.push(project(p));
  }
  let values = await evaluate(simplex);
  let iterations = 0;
  const order = () => {
    // Stable sort by value keeps the older vertex first on ties (Lagarias et al.'s ordering rule).
    const idx = simplex.map((_, i) => i).sort((a, b) => values[a] - values[b] || a - b);
    simplex = idx.map((i) => simplex[i]);
    values = idx.map((i) => values[i]);
  };
  order();
  let stop: MinimiseResult['stop'] = 'max-evaluations';
  while (count() < maxEvals) {
    const size = Math.max(...simplex.slice(1).map((p) => Math.max(...p.map((v, i) => Math.abs(v - simplex[0][i])))));
    const spread = values[n] - values[0];
    if (size <= xTol && spread <= fTol) {
      stop = 'tolerance';
      break;
    }
    iterations++;
    const centroid = new Array<number>(n).fill(0);
    for (let k = 0; k < n; k++) for (let i = 0; i < n; i++) centroid[i] += simplex[k][i] / n;
    const along = (t: number) => project(centroid.map((c, i) => c + t * (c - simplex[n][i])));
    const xr = along(1);
    const [fr] = await evaluate([xr]);
    let accepted: { x: number[]; f: number } | null = null;
    if (fr < values[0]) {
      const xe = along(2);
      const [fe] = await evaluate([xe]);
      accepted = fe < fr ? { x: xe, f: fe } : { x: xr, f: fr };
    } else if (fr < values[n - 1]) {
      accepted = { x: xr, f: fr };
    } else if (fr < values[n]) {
      const xc = along(0.5);
      const [fc] = await evaluate([xc]);
      if (fc <= fr) accepted = { x: xc, f: fc };
    } else {
      const xcc = along(-0.5);
      const [fcc] = await evaluate([xcc]);
      if (fcc < values[n]) accepted = { x: xcc, f: fcc };
    }
    if (accepted) {
      simplex[n] = accepted.x;
      values[n] = accepted.f;
    } else {
      // Shrink towards the best vertex; the n new points are independent, so they go out as one batch.
      const moved = simplex.slice(1).map((p) => project(p.map((v, i) => simplex[0][i] + 0.5 * (v - simplex[0][i]))));
      const fv = await evaluate(moved);
      simplex = [simplex[0], ...moved];
      values = [values[0], ...fv];
    }
    order();
  }
  return { x: toBox(simplex[0]), f: values[0], evaluations: count(), iterations, stop };
}

export interface GoldenOptions {
  /** Stop when the bracket is shorter than this fraction of the interval (default 1e-3). */
  readonly xTolerance?: number;
  readonly maxEvaluations?: number;
}

/**
 * Golden-section search for a minimum of a one-variable function on [lo, hi] (J. Kiefer, "Sequential minimax
 * search for a maximum", Proc. AMS 4(3), 1953). Exact for unimodal functions; for others it finds a local
 * minimum. The end points are evaluated as well, so a minimum on the boundary is returned exactly.
 */
export async function goldenSection(f: BatchObjective, lo: number, hi: number, opts: GoldenOptions = {}): Promise<MinimiseResult> {
  checkBounds({ lo: [lo], hi: [hi] }, 1);
  const { evaluate, count } = cached(f);
  const tol = (opts.xTolerance ?? 1e-3) * (hi - lo);
  const maxEvals = opts.maxEvaluations ?? 100;
  const invPhi = (Math.sqrt(5) - 1) / 2;
  let a = lo, b = hi;
  let c = b - invPhi * (b - a), d = a + invPhi * (b - a);
  // The two interior points are independent of each other and of the ends: one batch of four.
  const ends = await evaluate([[a], [b], [c], [d]]);
  let [fc, fd] = [ends[2], ends[3]];
  let best = { x: a, f: ends[0] };
  const note = (x: number, v: number) => {
    if (v < best.f) best = { x, f: v };
  };
  note(b, ends[1]);
  note(c, fc);
  note(d, fd);
  let iterations = 0;
  let stop: MinimiseResult['stop'] = 'max-evaluations';
  while (count() < maxEvals) {
    if (b - a <= tol) {
      stop = 'tolerance';
      break;
    }
    iterations++;
    if (fc <= fd) {
      b = d; d = c; fd = fc;
      c = b - invPhi * (b - a);
      [fc] = await evaluate([[c]]);
      note(c, fc);
    } else {
      a = c; c = d; fc = fd;
      d = a + invPhi * (b - a);
      [fd] = await evaluate([[d]]);
      note(d, fd);
    }
  }
  return { x: [best.x], f: best.f, evaluations: count(), iterations, stop };
}

/** Evaluates several points at once, each with its value and gradient (one entry per variable). */
export type BatchGradientObjective = (points: number[][]) => Promise<{ f: number; g: number[] }[]>;

export interface ProjectedGradientOptions {
  /** Starting point (projected onto the box). */
  readonly start: readonly number[];
  /** Stop when the projected gradient, in coordinates scaled to the unit cube, is at most this (default 1e-4) ... */
  readonly gTolerance?: number;
  /** ... or when an accepted step moves less than this fraction of every box side (default 1e-4). */
  readonly xTolerance?: number;
  /** Hard limit on objective evaluations (each with its gradient), cached repeats excluded (default 40). */
  readonly maxEvaluations?: number;
  /** First trial step as a fraction of the box when there is no previous step to learn from (default 0.1). */
  readonly initialStep?: number;
}

export interface ProjectedGradientResult extends MinimiseResult {
  /** The projected gradient's largest component (unit-cube coordinates) at the returned point. */
  readonly projectedGradient: number;
}

/**
 * Projected gradient descent in a box with the Armijo rule along the projection arc: D. P. Bertsekas, "On the
 * Goldstein–Levitin–Polyak gradient projection method", IEEE Trans. Automatic Control 21(2), 174–184, 1976.
 * From x, with gradient g, trial points x(α) = P[x − α·g] (P clamps onto the box) are accepted when
 *   f(x(α)) ≤ f(x) + σ·g·(x(α) − x),   σ = 1e-4,
 * else α is halved (β = 1/2). The first trial α of each iteration is the Barzilai–Borwein step s·s/s·y from the last
 * move s and gradient change y (J. Barzilai and J. M. Borwein, "Two-point step size gradient methods", IMA J. Numer.
 * Anal. 8, 141–148, 1988), or `initialStep`/max|g| when there is none or s·y ≤ 0.
 *
 * Runs in coordinates scaled to the unit cube (so the parameters' units do not matter) and stops when the projected
 * gradient x − P[x − g] is small (a stationary point of the box-constrained problem: a zero gradient inside, or a
 * gradient pushing outward on a face), when a step moves less than `xTolerance`, or after `maxEvaluations`.
 * Deterministic. Every evaluated point lies inside the box.
 */
export async function projectedGradient(f: BatchGradientObjective, bounds: Bounds, opts: ProjectedGradientOptions): Promise<ProjectedGradientResult> {
  const n = opts.start.length;
  if (n < 1) throw new Error('projected gradient needs at least one variable');
  checkBounds(bounds, n);
  const span = bounds.lo.map((lo, i) => bounds.hi[i] - lo);
  const toBox = (u: number[]) => u.map((v, i) => bounds.lo[i] + Math.min(1, Math.max(0, v)) * span[i]);
  const project = (u: number[]) => u.map((v) => Math.min(1, Math.max(0, v)));
  const gTol = opts.gTolerance ?? 1e-4;
  const xTol = opts.xTolerance ?? 1e-4;
  const maxEvals = opts.maxEvaluations ?? 40;
  const sigma = 1e-4;
  const memo = new Map<string, { f: number; g: number[] }>();
  let count = 0;
  const evaluate = async (u: number[]): Promise<{ f: number; g: number[] }> => {
    const key = u.map((v) => v.toString()).join(',');
    const hit = memo.get(key);
    if (hit) return hit;
    const [r] = await f([toBox(u)]);
    count++;
    // Gradient in unit-cube coordinates: ∂f/∂u_i = ∂f/∂x_i · span_i. A NaN value or gradient counts as the worst.
    const bad = !(r.f === r.f) || r.g.some((v) => !(v === v));
    const out = bad ? { f: Number.POSITIVE_INFINITY, g: new Array<number>(n).fill(0) } : { f: r.f, g: r.g.map((v, i) => v * span[i]) };
    memo.set(key, out);
    return out;
  };
  const projGrad = (u: number[], g: number[]) => Math.max(...project(u.map((v, i) => v - g[i])).map((p, i) => Math.abs(u[i] - p)));

  let u = project(opts.start.map((v, i) => (v - bounds.lo[i]) / span[i]));
  let cur = await evaluate(u);
  let prev: { u: number[]; g: number[] } | null = null;
  let iterations = 0;
  let stop: MinimiseResult['stop'] = 'max-evaluations';
  while (count < maxEvals) {
    if (cur.f === Number.POSITIVE_INFINITY || projGrad(u, cur.g) <= gTol) {
      stop = 'tolerance';
      break;
    }
    iterations++;
    const gmax = Math.max(...cur.g.map(Math.abs));
    let alpha = (opts.initialStep ?? 0.1) / gmax;
    if (prev) {
      const s = u.map((v, i) => v - (prev as { u: number[] }).u[i]);
      const y = cur.g.map((v, i) => v - (prev as { g: number[] }).g[i]);
      const sy = s.reduce((a, v, i) => a + v * y[i], 0);
      const ss = s.reduce((a, v) => a + v * v, 0);
      if (sy > 0) alpha = Math.min(ss / sy, 1 / gmax);
    }
    let accepted: { u: number[]; r: { f: number; g: number[] } } | null = null;
    let tooSmall = false;
    while (count < maxEvals) {
      const trial = project(u.map((v, i) => v - alpha * cur.g[i]));
      const move = Math.max(...trial.map((v, i) => Math.abs(v - u[i])));
      if (move < xTol) {
        tooSmall = true;
        break;
      }
      const r = await evaluate(trial);
      const decrease = cur.g.reduce((a, g, i) => a + g * (trial[i] - u[i]), 0);
      if (r.f <= cur.f + sigma * decrease) {
        accepted = { u: trial, r };
        break;
      }
      alpha /= 2;
    }
    if (!accepted) {
      if (tooSmall) stop = 'tolerance';
      break;
    }
    prev = { u, g: cur.g };
    u = accepted.u;
    cur = accepted.r;
  }
  return { x: toBox(u), f: cur.f, evaluations: count, iterations, stop, projectedGradient: projGrad(u, cur.g) };
}
