// Separable Gaussian blur on padded buffers, for `let w = blur(field, sigma)` (numerics.md, "blur").
// Taps exp(-k²/2σ²) for |k| ≤ ⌊4σ + 0.5⌋, normalised to sum 1; σ = 0 is the identity.
// Must not import vscode, the DOM or Node modules.

import { blurRadius } from './plan';
import type { FieldArray, Geometry } from './types';

export function gaussianTaps(sigma: number): Float64Array {
  const r = blurRadius(sigma);
  const taps = new Float64Array(2 * r + 1);
  if (r === 0) {
    taps[0] = 1;
    return taps;
  }
  let sum = 0;
  for (let k = -r; k <= r; k++) {
    const w = Math.exp(-(k * k) / (2 * sigma * sigma));
    taps[k + r] = w;
    sum += w;
  }
  for (let k = 0; k < taps.length; k++) taps[k] /= sum;
  return taps;
}

/**
 * dst = blur(src) over the image extended by `extent` cells (destination first; `tmp` is caller-owned scratch
 * of the same geometry). The source's halo must already be filled to extent + radius: its boundary rule,
 * not the let's, decides what lies outside the image.
 * NB: in 1d schemes only the x pass runs (rows are independent).
 */
export function blurInto(dst: FieldArray, src: FieldArray, tmp: FieldArray, g: Geometry, taps: Float64Array, extent: number, dims: 1 | 2): void {
  separableInto(dst, src, tmp, g, taps, taps, extent, dims);
}

/**
 * dst = (ty ∘ tx) src over the image extended by `extent` (x pass first; 1d: only the x pass), or dst += that with
 * `add`; tx and ty have the same length. blurInto is the case tx = ty; the sensitivity mode also filters with the
 * taps' derivative along one axis.
 */
export function separableInto(dst: FieldArray, src: FieldArray, tmp: FieldArray, g: Geometry, tx: Float64Array, ty: Float64Array, extent: number, dims: 1 | 2, add = false): void {
  const r = (tx.length - 1) >> 1;
  const { width: W, height: H, pw, haloX: hx, haloY: hy } = g;
  const ey = dims === 2 ? extent : 0;
  const ry = dims === 2 ? r : 0;
  // The x pass also covers the rows the y pass will read.
  const xOut = dims === 2 ? tmp : dst;
  for (let y = -ey - ry; y < H + ey + ry; y++) {
    let i = (y + hy) * pw + hx - extent;
    for (let x = -extent; x < W + extent; x++, i++) {
      let s = 0;
      for (let k = 0, j = i - r; k < tx.length; k++, j++) s += tx[k] * src[j];
      if (dims === 1 && add) xOut[i] += s;
      else xOut[i] = s;
    }
  }
  if (dims === 1) return;
  for (let y = -ey; y < H + ey; y++) {
    let i = (y + hy) * pw + hx - extent;
    for (let x = -extent; x < W + extent; x++, i++) {
      let s = 0;
      for (let k = 0, j = i - r * pw; k < ty.length; k++, j += pw) s += ty[k] * tmp[j];
      if (add) dst[i] += s;
      else dst[i] = s;
    }
  }
}
