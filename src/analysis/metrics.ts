// Image quality and image-size metrics (MSE, PSNR, SSIM, min/max/mean, total variation, Dirichlet energy).
// Owns the numeric definitions fixed in numerics.md "Metrics"; every sum is done in Float64.
// Pure: must not import Node modules, vscode, the DOM or other Fluxel folders.

/** A grey image, row-major: pixel (x, y) is data[y * width + x]. */
export interface MetricImage {
  readonly width: number;
  readonly height: number;
  readonly data: Float32Array | Float64Array;
}

/** Raised for inputs a metric cannot be computed on (size mismatch, too small for SSIM, bad options). */
export class MetricError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'MetricError';
  }
}

/** Side of the SSIM window: 11 taps, radius 5 (Wang et al. 2004, Section III-C). */
export const SSIM_WINDOW = 11;
const SSIM_RADIUS = (SSIM_WINDOW - 1) / 2;
const SSIM_SIGMA = 1.5;

function checkImage(img: MetricImage, role: string): void {
  const { width, height, data } = img;
  if (!Number.isInteger(width) || !Number.isInteger(height) || width < 1 || height < 1) {
    throw new MetricError(`${role} image has an invalid size ${width}×${height}; width and height must be positive integers.`);
  }
  if (data.length !== width * height) {
    throw new MetricError(`${role} image claims ${width}×${height} = ${width * height} pixels but holds ${data.length} values.`);
  }
}

function checkPair(ref: MetricImage, img: MetricImage): void {
  checkImage(ref, 'Reference');
  checkImage(img, 'Compared');
  if (ref.width !== img.width || ref.height !== img.height) {
    throw new MetricError(
      `Image sizes differ: reference is ${ref.width}×${ref.height}, compared image is ${img.width}×${img.height}.`,
    );
  }
}

/** Mean squared error (1/N) Σ (ref − img)². */
export function mse(ref: MetricImage, img: MetricImage): number {
  checkPair(ref, img);
  const a = ref.data;
  const b = img.data;
  const n = a.length;
  let sum = 0;
  for (let i = 0; i < n; i++) {
    const d = a[i] - b[i];
    sum += d * d;
  }
  return sum / n;
}

/** PSNR from an already computed MSE: 10·log10(peak²/MSE); +Infinity when MSE is 0. */
export function psnrFromMse(meanSquaredError: number, peak = 1): number {
  if (!(peak > 0) || !Number.isFinite(peak)) {
    throw new MetricError(`PSNR peak must be a positive finite number, got ${peak}.`);
  }
  // Written out so that identical images give exactly +Infinity rather than relying on log10(x/0).
  if (meanSquaredError === 0) return Number.POSITIVE_INFINITY;
  return 10 * Math.log10((peak * peak) / meanSquaredError);
}

/** Peak signal-to-noise ratio in dB, 10·log10(peak²/MSE); peak = 1 for [0, 1] data; identical images give +Infinity. */
export function psnr(ref: MetricImage, img: MetricImage, peak = 1): number {
  return psnrFromMse(mse(ref, img), peak);
}

export interface SsimOptions {
  /** L, the dynamic range of the data (1 for [0, 1] images). */
  readonly dataRange?: number;
  /** K1 of Wang et al. 2004, default 0.01. */
  readonly k1?: number;
  /** K2 of Wang et al. 2004, default 0.03. */
  readonly k2?: number;
}

/**
 * Normalised Gaussian taps exp(−k²/(2σ²)) for k = −radius..radius.
 * NB: radius is taken as given; SSIM uses radius 5 with σ = 1.5 (11 taps).
 */
export function gaussianTaps(sigma: number, radius: number): Float64Array {
  const taps = new Float64Array(2 * radius + 1);
  let sum = 0;
  for (let k = -radius; k <= radius; k++) {
    const w = Math.exp(-(k * k) / (2 * sigma * sigma));
    taps[k + radius] = w;
    sum += w;
  }
  for (let i = 0; i < taps.length; i++) taps[i] /= sum;
  return taps;
}

function ssimConstants(options: SsimOptions): { c1: number; c2: number } {
  const range = options.dataRange ?? 1;
  const k1 = options.k1 ?? 0.01;
  const k2 = options.k2 ?? 0.03;
  if (!(range > 0) || !Number.isFinite(range)) {
    throw new MetricError(`SSIM dataRange must be a positive finite number, got ${range}.`);
  }
  if (!(k1 >= 0) || !(k2 >= 0) || !Number.isFinite(k1) || !Number.isFinite(k2)) {
    throw new MetricError(`SSIM constants K1, K2 must be finite and non-negative, got ${k1}, ${k2}.`);
  }
  return { c1: (k1 * range) ** 2, c2: (k2 * range) ** 2 };
}

/**
 * Local SSIM at every position where the whole 11×11 window fits ('valid'), written into dest
 * (length (width − 10)·(height − 10), row-major); dest[oy·(width−10) + ox] belongs to the window
 * whose top-left pixel is (ox, oy), i.e. centred on (ox + 5, oy + 5). Returns dest.
 *
 * Separable: each input row is filtered horizontally once into a ring of 11 rows for the five
 * moments (x, y, x², y², xy), then every output row is one vertical 11-tap pass over the ring,
 * so the cost is about 2·11 multiply-adds per moment and pixel instead of 121.
 */
export function ssimMapInto(dest: Float64Array, ref: MetricImage, img: MetricImage, options: SsimOptions = {}): Float64Array {
  checkPair(ref, img);
  const { width, height } = ref;
  if (width < SSIM_WINDOW || height < SSIM_WINDOW) {
    throw new MetricError(
      `Image is ${width}×${height}, smaller than the ${SSIM_WINDOW}×${SSIM_WINDOW} SSIM window; SSIM is undefined for it.`,
    );
  }
  const { c1, c2 } = ssimConstants(options);
  const ow = width - SSIM_WINDOW + 1;
  const oh = height - SSIM_WINDOW + 1;
  if (dest.length !== ow * oh) {
    throw new MetricError(`SSIM map destination holds ${dest.length} values; ${ow}×${oh} = ${ow * oh} are needed.`);
  }
  const w = gaussianTaps(SSIM_SIGMA, SSIM_RADIUS);
  const a = ref.data;
  const b = img.data;
  // Moments are taken about a constant offset per image (the middle of its range): variances are
  // E[x²] − E[x]², and shifting the data towards zero shrinks E[x²] and with it the cancellation error,
  // which otherwise reaches ~1e-12 in flat regions of [0, 1] images. Means get the offset added back.
  const cx = midRange(a);
  const cy = midRange(b);
  // Ring of horizontally filtered rows: slot s holds input row y with y % 11 === s.
  const ringX = new Float64Array(SSIM_WINDOW * ow);
  const ringY = new Float64Array(SSIM_WINDOW * ow);
  const ringXX = new Float64Array(SSIM_WINDOW * ow);
  const ringYY = new Float64Array(SSIM_WINDOW * ow);
  const ringXY = new Float64Array(SSIM_WINDOW * ow);
  for (let y = 0; y < height; y++) {
    const rowIn = y * width;
    const slot = (y % SSIM_WINDOW) * ow;
    for (let ox = 0; ox < ow; ox++) {
      let sx = 0;
      let sy = 0;
      let sxx = 0;
      let syy = 0;
      let sxy = 0;
      const base = rowIn + ox;
      for (let k = 0; k < SSIM_WINDOW; k++) {
        const wk = w[k];
        const u = a[base + k] - cx;
        const v = b[base + k] - cy;
        sx += wk * u;
        sy += wk * v;
        sxx += wk * u * u;
        syy += wk * v * v;
        sxy += wk * u * v;
      }
      ringX[slot + ox] = sx;
      ringY[slot + ox] = sy;
      ringXX[slot + ox] = sxx;
      ringYY[slot + ox] = syy;
      ringXY[slot + ox] = sxy;
    }
    if (y < SSIM_WINDOW - 1) continue;
    const oy = y - (SSIM_WINDOW - 1);
    const rowOut = oy * ow;
    for (let ox = 0; ox < ow; ox++) {
      let mx = 0;
      let my = 0;
      let mxx = 0;
      let myy = 0;
      let mxy = 0;
      for (let k = 0; k < SSIM_WINDOW; k++) {
        const wk = w[k];
        const i = ((oy + k) % SSIM_WINDOW) * ow + ox;
        mx += wk * ringX[i];
        my += wk * ringY[i];
        mxx += wk * ringXX[i];
        myy += wk * ringYY[i];
        mxy += wk * ringXY[i];
      }
      // Population (weighted) moments: the weights sum to 1, so no N/(N−1) factor (Wang et al. 2004, eqs. 14–16).
      const vx = mxx - mx * mx;
      const vy = myy - my * my;
      const cxy = mxy - mx * my;
      const mux = mx + cx;
      const muy = my + cy;
      // Eq. 13 of Wang et al. 2004 with C3 = C2/2 folded in.
      dest[rowOut + ox] = ((2 * mux * muy + c1) * (2 * cxy + c2)) / ((mux * mux + muy * muy + c1) * (vx + vy + c2));
    }
  }
  return dest;
}

/** The 'valid' SSIM map as an image of size (width − 10)×(height − 10); see ssimMapInto. */
export function ssimMap(ref: MetricImage, img: MetricImage, options: SsimOptions = {}): MetricImage {
  checkPair(ref, img);
  const ow = Math.max(0, ref.width - SSIM_WINDOW + 1);
  const oh = Math.max(0, ref.height - SSIM_WINDOW + 1);
  const data = ssimMapInto(new Float64Array(ow * oh), ref, img, options);
  return { width: ow, height: oh, data };
}

/**
 * Mean SSIM (Wang, Bovik, Sheikh, Simoncelli 2004): 11×11 Gaussian window σ = 1.5, K1 = 0.01,
 * K2 = 0.03, population statistics, valid windows only, no downsampling.
 * Throws MetricError for images smaller than 11×11 in either dimension.
 */
export function ssim(ref: MetricImage, img: MetricImage, options: SsimOptions = {}): number {
  const map = ssimMap(ref, img, options).data;
  // Row-by-row partial sums keep the rounding error of the mean near that of a pairwise sum.
  return meanOf(map);
}

function midRange(data: ArrayLike<number>): number {
  let min = Number.POSITIVE_INFINITY;
  let max = Number.NEGATIVE_INFINITY;
  for (let i = 0; i < data.length; i++) {
    const v = data[i];
    if (v < min) min = v;
    if (v > max) max = v;
  }
  // Non-finite data: no useful offset; NaN or Infinity then propagate through the moments as they should.
  const mid = 0.5 * (min + max);
  return Number.isFinite(mid) ? mid : 0;
}

function meanOf(data: ArrayLike<number>): number {
  const n = data.length;
  const block = 1024;
  let total = 0;
  for (let start = 0; start < n; start += block) {
    const end = Math.min(n, start + block);
    let partial = 0;
    for (let i = start; i < end; i++) partial += data[i];
    total += partial;
  }
  return total / n;
}

export interface ImageStats {
  readonly min: number;
  readonly max: number;
  readonly mean: number;
}

/** Minimum, maximum and mean of all pixels (NaN propagates into min/max/mean). */
export function stats(img: MetricImage): ImageStats {
  checkImage(img, 'Input');
  const d = img.data;
  let min = Number.POSITIVE_INFINITY;
  let max = Number.NEGATIVE_INFINITY;
  let sawNaN = false;
  for (let i = 0; i < d.length; i++) {
    const v = d[i];
    if (v !== v) sawNaN = true;
    if (v < min) min = v;
    if (v > max) max = v;
  }
  // Comparisons skip NaN silently; report it instead so a blown-up field is never shown as healthy.
  if (sawNaN) return { min: Number.NaN, max: Number.NaN, mean: Number.NaN };
  return { min, max, mean: meanOf(d) };
}

export type TotalVariationKind = 'isotropic' | 'anisotropic';

/**
 * Total variation with forward differences dx = u(x+1,y) − u(x,y), dy = u(x,y+1) − u(x,y),
 * both zero across the last column / row: isotropic Σ√(dx² + dy²) (default) or anisotropic Σ(|dx| + |dy|).
 */
export function totalVariation(img: MetricImage, kind: TotalVariationKind = 'isotropic'): number {
  checkImage(img, 'Input');
  const { width, height, data } = img;
  let sum = 0;
  for (let y = 0; y < height; y++) {
    const row = y * width;
    const lastRow = y === height - 1;
    for (let x = 0; x < width; x++) {
      const i = row + x;
      const u = data[i];
      const dx = x === width - 1 ? 0 : data[i + 1] - u;
      const dy = lastRow ? 0 : data[i + width] - u;
      sum += kind === 'isotropic' ? Math.sqrt(dx * dx + dy * dy) : Math.abs(dx) + Math.abs(dy);
    }
  }
  return sum;
}

/** Anisotropic total variation Σ(|dx| + |dy|); same differences as totalVariation. */
export function anisotropicTotalVariation(img: MetricImage): number {
  return totalVariation(img, 'anisotropic');
}

/** Dirichlet energy ½Σ(dx² + dy²) with the forward differences of totalVariation. */
export function dirichletEnergy(img: MetricImage): number {
  checkImage(img, 'Input');
  const { width, height, data } = img;
  let sum = 0;
  for (let y = 0; y < height; y++) {
    const row = y * width;
    const lastRow = y === height - 1;
    for (let x = 0; x < width; x++) {
      const i = row + x;
      const u = data[i];
      const dx = x === width - 1 ? 0 : data[i + 1] - u;
      const dy = lastRow ? 0 : data[i + width] - u;
      sum += dx * dx + dy * dy;
    }
  }
  return 0.5 * sum;
}

export interface ImageComparison {
  readonly width: number;
  readonly height: number;
  readonly mse: number;
  /** dB; +Infinity for identical images (print with formatMetric, JSON has no Infinity). */
  readonly psnr: number;
  /** Mean SSIM, or null when the image is smaller than the 11×11 window (see ssimNote). */
  readonly ssim: number | null;
  readonly ssimNote?: string;
  /** Largest |ref − img| over all pixels. */
  readonly maxAbsError: number;
  /** Mean of (img − ref): a non-zero value shows a brightness shift. */
  readonly meanError: number;
}

export interface CompareOptions {
  /** Peak for PSNR and L for SSIM; 1 for [0, 1] data. */
  readonly dataRange?: number;
}

/**
 * All comparison metrics at once, for `fluxel compare`. A size mismatch throws MetricError; an
 * image too small for SSIM still gets MSE and PSNR, with ssim = null and the reason in ssimNote.
 */
export function compareImages(ref: MetricImage, img: MetricImage, options: CompareOptions = {}): ImageComparison {
  checkPair(ref, img);
  const range = options.dataRange ?? 1;
  const m = mse(ref, img);
  const a = ref.data;
  const b = img.data;
  let maxAbs = 0;
  let sumErr = 0;
  for (let i = 0; i < a.length; i++) {
    const d = b[i] - a[i];
    const ad = Math.abs(d);
    // NaN must win, so a blown-up result is never reported as a small error.
    // Once maxAbs is NaN every later comparison is false, so it stays NaN.
    if (ad !== ad) maxAbs = Number.NaN;
    else if (ad > maxAbs) maxAbs = ad;
    sumErr += d;
  }
  const base = {
    width: ref.width,
    height: ref.height,
    mse: m,
    psnr: psnrFromMse(m, range),
    maxAbsError: maxAbs,
    meanError: sumErr / a.length,
  };
  if (ref.width < SSIM_WINDOW || ref.height < SSIM_WINDOW) {
    return {
      ...base,
      ssim: null,
      ssimNote: `SSIM needs at least ${SSIM_WINDOW}×${SSIM_WINDOW} pixels; the images are ${ref.width}×${ref.height}.`,
    };
  }
  return { ...base, ssim: ssim(ref, img, { dataRange: range }) };
}

/**
 * Text for a metric value: "inf" / "-inf" / "nan" for non-finite values (JSON cannot hold them),
 * otherwise the number with `digits` significant digits (default: shortest round-trip form).
 */
export function formatMetric(value: number | null, digits?: number): string {
  if (value === null) return 'n/a';
  if (Number.isNaN(value)) return 'nan';
  if (value === Number.POSITIVE_INFINITY) return 'inf';
  if (value === Number.NEGATIVE_INFINITY) return '-inf';
  return digits === undefined ? String(value) : Number(value.toPrecision(digits)).toString();
}
