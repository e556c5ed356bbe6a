// Exact derivatives of the comparison metrics (MSE, PSNR, SSIM against a fixed clean reference) with respect to the
// compared image: the gradient image ∂metric/∂img[p], and directional derivatives Σ_p grad[p]·tangent[p] for the
// engine's sensitivity mode. Definitions as in metrics.ts / numerics.md "Metrics"; all sums in Float64.
// Pure: must not import Node modules, vscode, the DOM or other Fluxel folders.

import { gaussianTaps, MetricError, mse, psnrFromMse, ssim, SSIM_WINDOW, type MetricImage, type SsimOptions } from './metrics';

const RADIUS = (SSIM_WINDOW - 1) / 2;

function sameSize(ref: MetricImage, img: MetricImage): void {
  if (ref.width !== img.width || ref.height !== img.height || ref.data.length !== img.data.length) {
    throw new MetricError(`Image sizes differ: reference is ${ref.width}×${ref.height}, compared image is ${img.width}×${img.height}.`);
  }
}

/** ∂MSE/∂img[p] = 2·(img[p] − ref[p])/N. */
export function mseGradient(ref: MetricImage, img: MetricImage): Float64Array {
  sameSize(ref, img);
  const n = img.data.length;
  const g = new Float64Array(n);
  for (let i = 0; i < n; i++) g[i] = (2 * (img.data[i] - ref.data[i])) / n;
  return g;
}

/**
 * Mean SSIM and its gradient with respect to the compared image `img` (the reference is fixed).
 *
 * With x = ref, y = img, per valid window w (Gaussian weights G, Σ G = 1): μx, μy, σy² = G∗y² − μy², σxy = G∗(xy) − μxμy,
 * S_w = A1·A2/(B1·B2), A1 = 2μxμy + C1, A2 = 2σxy + C2, B1 = μx² + μy² + C1, B2 = σx² + σy² + C2
 * (Wang, Bovik, Sheikh, Simoncelli 2004, eq. 13 with C3 = C2/2). The chain rule through the window moments gives
 *   ∂S/∂μy = 2μx·A2/(B1B2) − 2μy·S/B1,   ∂S/∂σy² = −S/B2,   ∂S/∂σxy = 2·A1/(B1B2),
 * and ∂μy/∂y_p = G(p − w), ∂σy²/∂y_p = 2G(p − w)(y_p − μy), ∂σxy/∂y_p = G(p − w)(x_p − μx), so
 *   ∂SSIM/∂y_p = (1/M) Σ_w G(p − w)·[a_w + 2·b_w·y_p + c_w·x_p]
 * with a = ∂S/∂μy − 2μy·∂S/∂σy² − μx·∂S/∂σxy, b = ∂S/∂σy², c = ∂S/∂σxy over the M valid windows: three maps
 * spread back over their windows by the transposed (full) Gaussian filter.
 */
export function ssimGradient(ref: MetricImage, img: MetricImage, options: SsimOptions = {}): { ssim: number; gradient: Float64Array } {
  sameSize(ref, img);
  const { width: W, height: H } = ref;
  if (W < SSIM_WINDOW || H < SSIM_WINDOW) {
    throw new MetricError(`Image is ${W}×${H}, smaller than the ${SSIM_WINDOW}×${SSIM_WINDOW} SSIM window; SSIM is undefined for it.`);
  }
  const range = options.dataRange ?? 1;
  const c1 = ((options.k1 ?? 0.01) * range) ** 2;
  const c2 = ((options.k2 ?? 0.03) * range) ** 2;
  const w = gaussianTaps(1.5, RADIUS);
  const x = ref.data, y = img.data;
  const ow = W - SSIM_WINDOW + 1, oh = H - SSIM_WINDOW + 1;
  const M = ow * oh;
  // Moments about per-image offsets (cancellation, as in metrics.ts): μ = offset + G∗(v − offset).
  const cx = mid(x), cy = mid(y);
  const u = new Float64Array(W * H), v = new Float64Array(W * H);
  for (let i = 0; i < W * H; i++) {
    u[i] = x[i] - cx;
    v[i] = y[i] - cy;
  }
  const prod = (a: Float64Array, b: Float64Array) => a.map((q, i) => q * b[i]);
  const mx = valid(u, W, H, w), my = valid(v, W, H, w);
  const mxx = valid(prod(u, u), W, H, w), myy = valid(prod(v, v), W, H, w), mxy = valid(prod(u, v), W, H, w);
  const A = new Float64Array(M), B = new Float64Array(M), C = new Float64Array(M);
  for (let k = 0; k < M; k++) {
    const vx = mxx[k] - mx[k] * mx[k], vy = myy[k] - my[k] * my[k], cov = mxy[k] - mx[k] * my[k];
    const mux = mx[k] + cx, muy = my[k] + cy;
    const a1 = 2 * mux * muy + c1, a2 = 2 * cov + c2, b1 = mux * mux + muy * muy + c1, b2 = vx + vy + c2;
    const s = (a1 * a2) / (b1 * b2);
    const dMu = (2 * mux * a2) / (b1 * b2) - (2 * muy * s) / b1;
    const dVar = -s / b2;
    const dCov = (2 * a1) / (b1 * b2);
    // Written about the offsets: y_p − μy = v_p − my, x_p − μx = u_p − mx.
    A[k] = dMu - 2 * my[k] * dVar - mx[k] * dCov;
    B[k] = dVar;
    C[k] = dCov;
  }
  const fa = full(A, ow, oh, W, H, w), fb = full(B, ow, oh, W, H, w), fc = full(C, ow, oh, W, H, w);
  const gradient = new Float64Array(W * H);
  for (let p = 0; p < W * H; p++) gradient[p] = (fa[p] + 2 * fb[p] * v[p] + fc[p] * u[p]) / M;
  return { ssim: ssim(ref, img, options), gradient };
}

function mid(d: ArrayLike<number>): number {
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < d.length; i++) {
    if (d[i] < lo) lo = d[i];
    if (d[i] > hi) hi = d[i];
  }
  const m = 0.5 * (lo + hi);
  return Number.isFinite(m) ? m : 0;
}

/** 'valid' separable correlation with the 11-tap window: out[oy·ow + ox] = Σ G(i)G(j) d[(oy + j)·W + ox + i]. */
function valid(d: Float64Array, W: number, H: number, w: Float64Array): Float64Array {
  const n = w.length, ow = W - n + 1, oh = H - n + 1;
  const tmp = new Float64Array(ow * H);
  for (let yy = 0; yy < H; yy++) {
    for (let ox = 0; ox < ow; ox++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += w[k] * d[yy * W + ox + k];
      tmp[yy * ow + ox] = s;
    }
  }
  const out = new Float64Array(ow * oh);
  for (let oy = 0; oy < oh; oy++) {
    for (let ox = 0; ox < ow; ox++) {
      let s = 0;
      for (let k = 0; k < n; k++) s += w[k] * tmp[(oy + k) * ow + ox];
      out[oy * ow + ox] = s;
    }
  }
  return out;
}

/** The transpose of `valid`: spreads each window's value back over its 11×11 pixels with the same weights. */
function full(m: Float64Array, ow: number, oh: number, W: number, H: number, w: Float64Array): Float64Array {
  const n = w.length;
  const tmp = new Float64Array(ow * H);
  for (let oy = 0; oy < oh; oy++) {
    for (let ox = 0; ox < ow; ox++) {
      const val = m[oy * ow + ox];
      for (let k = 0; k < n; k++) tmp[(oy + k) * ow + ox] += w[k] * val;
    }
  }
  const out = new Float64Array(W * H);
  for (let yy = 0; yy < H; yy++) {
    for (let ox = 0; ox < ow; ox++) {
      const val = tmp[yy * ow + ox];
      for (let k = 0; k < n; k++) out[yy * W + ox + k] += w[k] * val;
    }
  }
  return out;
}

function dot(a: ArrayLike<number>, b: ArrayLike<number>): number {
  let s = 0;
  for (let i = 0; i < a.length; i++) s += a[i] * b[i];
  return s;
}

export interface MetricSensitivity {
  readonly mse: number;
  /** dB per unit of the name; NaN when MSE is 0 (PSNR is +∞ there). */
  readonly psnr: number;
  /** Absent for images under 11×11 (no SSIM). */
  readonly ssim?: number;
}

/**
 * Derivatives of MSE, PSNR and SSIM of `img` against `ref` along each tangent image (d img / d name):
 * dMSE = Σ ∂MSE/∂img·t, dPSNR = −10/ln 10 · dMSE/MSE (PSNR = 10·log10(1/MSE), L = 1), dSSIM = Σ ∂SSIM/∂img·t.
 */
export function metricSensitivities(ref: MetricImage, img: MetricImage, tangents: readonly ArrayLike<number>[], withSsim = true): MetricSensitivity[] {
  sameSize(ref, img);
  const m = mse(ref, img);
  const gm = mseGradient(ref, img);
  const gs = withSsim && ref.width >= SSIM_WINDOW && ref.height >= SSIM_WINDOW ? ssimGradient(ref, img).gradient : null;
  return tangents.map(t => {
    const dm = dot(gm, t);
    const dp = m === 0 ? Number.NaN : (-10 / Math.LN10) * (dm / m);
    return gs ? { mse: dm, psnr: dp, ssim: dot(gs, t) } : { mse: dm, psnr: dp };
  });
}

/** PSNR from MSE (re-exported for callers that pair values with their derivatives). */
export { psnrFromMse };
