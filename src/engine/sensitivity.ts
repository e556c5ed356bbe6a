// The engine's sensitivity mode at run time: one Float64 tangent buffer per field, let and chosen name, the dual
// kernels (dualCodegen.ts) compiled once per (scheme, dtype, names), and the steps that carry tangents through lets,
// blurs (including the derivative of the normalised Gaussian taps with respect to sigma) and updates.
// Must not import vscode, the DOM or Node modules (it runs inside the engine worker too).

import type { CheckedScheme } from '../notation/scheme';
import { fillGhosts, type GhostPlan } from './boundary';
import { blurInto, gaussianTaps, separableInto } from './blur';
import { generateDualSource } from './dualCodegen';
import { canonicalScheme, EngineError, type HaloPlan } from './plan';
import type { DType, FieldArray, Geometry, KernelContext } from './types';

/**
 * The key under which a frame (Run's onFrame) carries d(field)/d(name) in sensitivity mode, beside the fields' own
 * values; it holds '∂' and '/', so it never equals a field name.
 */
export function sensitivityKey(field: string, name: string): string {
  return `∂${field}/∂${name}`;
}

/** What the dual kernels read besides the ordinary kernel context. */
export interface TangentContext {
  cur: Float64Array[][];
  next: Float64Array[][];
  lets: Float64Array[][];
  step: number;
}

type DualInit = (g: Geometry, ctx: KernelContext, T: TangentContext) => void;
type DualLet = (g: Geometry, ctx: KernelContext, T: TangentContext, e: number) => void;
type DualSigma = (ctx: KernelContext, T: TangentContext) => number[];
interface DualKernels {
  inits: (DualInit | null)[];
  lets: (DualLet | null)[];
  sigmas: (DualSigma | null)[];
  update: (g: Geometry, ctx: KernelContext, T: TangentContext) => void;
}

const cache = new Map<string, DualKernels>();
const CACHE_LIMIT = 32;

function compileDual(scheme: CheckedScheme, dtype: DType, wrt: readonly string[]): DualKernels {
  const key = `${dtype}\n${wrt.join(',')}\n${canonicalScheme(scheme)}`;
  const hit = cache.get(key);
  if (hit) return hit;
  const { source } = generateDualSource(scheme, dtype, wrt);
  const k = (new Function(source) as () => DualKernels)();
  cache.set(key, k);
  if (cache.size > CACHE_LIMIT) cache.delete(cache.keys().next().value as string);
  return k;
}

/**
 * d taps / d sigma for the normalised Gaussian taps w_k = e_k / Σe, e_k = exp(−k²/2σ²):
 * de_k/dσ = e_k·k²/σ³, so dw_k/dσ = w_k·(k² − Σ_j w_j j²)/σ³. The tap count ⌊4σ + 0.5⌋ is piecewise constant in σ,
 * so this is the derivative for the current count (one-sided at the jumps σ = (n − 0.5)/4). σ = 0 (identity) gives 0.
 */
export function gaussianTapsDerivative(sigma: number): Float64Array {
  const w = gaussianTaps(sigma);
  const r = (w.length - 1) >> 1;
  const out = new Float64Array(w.length);
  if (r === 0 || sigma === 0) return out;
  let m2 = 0;
  for (let k = -r; k <= r; k++) m2 += w[k + r] * k * k;
  const s3 = sigma * sigma * sigma;
  for (let k = -r; k <= r; k++) out[k + r] = (w[k + r] * (k * k - m2)) / s3;
  return out;
}

/** The tangent half of a run in sensitivity mode; the Run owns the values and calls in here. */
export class Tangents {
  readonly T: TangentContext;
  private readonly kernels: DualKernels;
  private readonly ghosts: GhostPlan[];
  private readonly scratch: Float64Array;
  private readonly scratch2: Float64Array;

  constructor(
    readonly scheme: CheckedScheme,
    readonly wrt: readonly string[],
    readonly g: Geometry,
    readonly halo: HaloPlan,
    dtype: DType,
    valueGhosts: readonly GhostPlan[],
  ) {
    if (wrt.length === 0) throw new EngineError('sensitivities need at least one parameter name');
    const seen = new Set<string>();
    for (const w of wrt) {
      if (seen.has(w)) throw new EngineError(`'${w}' is named twice for sensitivities`);
      seen.add(w);
      if (w !== 'dt' && !scheme.params.some(p => p.name === w)) {
        throw new EngineError(`no parameter '${w}' to differentiate by (parameters: ${[...scheme.params.map(p => p.name), 'dt'].join(', ')})`);
      }
    }
    this.kernels = compileDual(scheme, dtype, wrt);
    const size = g.pw * g.ph;
    const buf = () => new Float64Array(size);
    const cur = scheme.fields.map(() => wrt.map(buf));
    const next = scheme.fields.map((f, k) => (f.updated ? wrt.map(buf) : cur[k]));
    this.T = { cur, next, lets: scheme.lets.map(() => wrt.map(buf)), step: 0 };
    // Tangents of ghost cells: reflect and periodic copy the interior's tangents; a fixed value has tangent 0.
    this.ghosts = valueGhosts.map(p => (p.kind === 'constant' ? { kind: 'constant', value: 0 } : p));
    this.scratch = buf();
    this.scratch2 = buf();
  }

  /** After the Run set the initial values: recompute `expr` fields with their tangents (image fields: tangent 0). */
  init(ctx: KernelContext, valueGhosts: readonly GhostPlan[]): void {
    const { g, scheme, T } = this;
    T.step = 0;
    scheme.fields.forEach((f, k) => {
      const fn = this.kernels.inits[k];
      if (f.init.kind === 'expr') {
        if (!fn) throw new EngineError('a field initialiser without a dual kernel');
        fn(g, ctx, T);
        fillGhosts(ctx.cur[k], g, valueGhosts[k]);
        if (ctx.next[k] !== ctx.cur[k]) fillGhosts(ctx.next[k], g, valueGhosts[k]);
      }
      for (let j = 0; j < this.wrt.length; j++) {
        fillGhosts(T.cur[k][j], g, this.ghosts[k]);
        if (T.next[k][j] !== T.cur[k][j]) fillGhosts(T.next[k][j], g, this.ghosts[k]);
      }
    });
  }

  /** One step's lets and updates, values and tangents together (the Run swaps the value buffers afterwards). */
  step(ctx: KernelContext, stepIndex: number, scratch: FieldArray | null): void {
    const { g, scheme, T } = this;
    T.step = stepIndex;
    for (let k = 0; k < scheme.lets.length; k++) {
      const l = scheme.lets[k];
      const extent = this.halo.letExtents[k];
      if (l.kind === 'blur') {
        const sig = (this.kernels.sigmas[k] as DualSigma)(ctx, T);
        const sigma = sig[0];
        const taps = gaussianTaps(sigma);
        const isLet = scheme.symbols.get(l.source) === 'let';
        const si = isLet ? scheme.lets.findIndex(x => x.name === l.source) : scheme.fields.findIndex(f => f.name === l.source);
        const src = isLet ? ctx.lets[si] : ctx.cur[si];
        const tsrc = isLet ? T.lets[si] : T.cur[si];
        const tmp = scratch ?? this.scratch;
        blurInto(ctx.lets[k], src, tmp, g, taps, extent, scheme.dims);
        // d blur/dσ applied to the source: (D_y ∘ B_x + B_y ∘ D_x) src, D the tap derivative (separable product rule).
        const needS = sig.slice(1).some(s => s !== 0);
        const dTaps = gaussianTapsDerivative(sigma);
        if (needS) {
          separableInto(this.scratch2, src, this.scratch, g, dTaps, taps, extent, scheme.dims);
          if (scheme.dims === 2) separableInto(this.scratch2, src, this.scratch, g, taps, dTaps, extent, scheme.dims, true);
        }
        for (let j = 0; j < this.wrt.length; j++) {
          const out = T.lets[k][j];
          blurInto(out, tsrc[j], this.scratch, g, taps, extent, scheme.dims);
          const ds = sig[1 + j];
          if (ds !== 0 && needS) {
            const ey = scheme.dims === 2 ? extent : 0;
            for (let y = -ey; y < g.height + ey; y++) {
              let i = (y + g.haloY) * g.pw + g.haloX - extent;
              for (let x = -extent; x < g.width + extent; x++, i++) out[i] += ds * this.scratch2[i];
            }
          }
        }
      } else {
        const fn = this.kernels.lets[k];
        if (!fn) throw new EngineError('a let without a dual kernel');
        fn(g, ctx, T, extent);
      }
    }
    this.kernels.update(g, ctx, T);
  }

  /** After the Run swapped field k's value buffers: swap its tangents too and refill their ghost cells. */
  swap(k: number): void {
    const { T } = this;
    const tmp = T.cur[k];
    T.cur[k] = T.next[k];
    T.next[k] = tmp;
    for (const b of T.cur[k]) fillGhosts(b, this.g, this.ghosts[k]);
  }

  /** Field k's tangent for chosen name j, interior only, row-major. */
  data(k: number, j: number): Float64Array {
    const g = this.g;
    const out = new Float64Array(g.width * g.height);
    const buf = this.T.cur[k][j];
    for (let y = 0; y < g.height; y++) {
      const o = (y + g.haloY) * g.pw + g.haloX;
      for (let x = 0; x < g.width; x++) out[y * g.width + x] = buf[o + x];
    }
    return out;
  }
}
