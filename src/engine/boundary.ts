// Ghost cells: padded-buffer geometry and the per-field boundary rules (reflect, periodic, fixed).
// Owns the index maps that fill a field's halo from its interior; kernels then read neighbours without branches.
// Must not import vscode, the DOM or Node modules.
//
// The rules, for a row `a b c d` with a halo of three cells (numerics.md, "Boundaries and ghost cells"):
//
//   reflect   d c b a | a b c d | d c b a     zero flux, cell-centred: the edge pixel is repeated
//   periodic  b c d   | a b c d | a b c       the row wraps around
//   fixed v   v v v   | a b c d | v v v       a constant outside (corners too)
//
// A halo wider than the image keeps folding (reflect) or wrapping (periodic), as scipy.ndimage does,
// so the rule is defined for any offset, e.g. a 1×1 image reflects to its single value everywhere.

import type { Boundary } from '../notation/scheme';
import type { FieldArray, Geometry } from './types';

export function makeGeometry(width: number, height: number, halo: number, dims: 1 | 2): Geometry {
  const haloX = halo;
  // A 1d scheme runs each row on its own, so nothing is read above or below a row.
  const haloY = dims === 2 ? halo : 0;
  return { width, height, haloX, haloY, pw: width + 2 * haloX, ph: height + 2 * haloY };
}

/** Maps an integer coordinate that may lie outside [0, n) to the interior coordinate whose value it takes. */
export function foldIndex(i: number, n: number, kind: 'reflect' | 'periodic'): number {
  if (kind === 'periodic') return ((i % n) + n) % n;
  // Reflection about the cell edges has period 2n: ... d c b a | a b c d | d c b a ...
  const p = 2 * n;
  const m = ((i % p) + p) % p;
  return m < n ? m : p - 1 - m;
}

/**
 * The halo of one field: for reflect and periodic a gather list (ghost index, interior index),
 * for fixed a constant that is written once, since kernels never write ghost cells.
 */
export type GhostPlan =
  | { readonly kind: 'gather'; readonly dst: Int32Array; readonly src: Int32Array }
  | { readonly kind: 'constant'; readonly value: number };

export function planGhosts(g: Geometry, boundary: Boundary): GhostPlan {
  if (boundary.kind === 'fixed') return { kind: 'constant', value: boundary.value };
  const count = g.pw * g.ph - g.width * g.height;
  const dst = new Int32Array(count);
  const src = new Int32Array(count);
  let k = 0;
  for (let py = 0; py < g.ph; py++) {
    const y = py - g.haloY;
    const sy = foldIndex(y, g.height, boundary.kind) + g.haloY;
    for (let px = 0; px < g.pw; px++) {
      const x = px - g.haloX;
      if (y >= 0 && y < g.height && x >= 0 && x < g.width) continue;
      const sx = foldIndex(x, g.width, boundary.kind) + g.haloX;
      dst[k] = py * g.pw + px;
      src[k] = sy * g.pw + sx;
      k++;
    }
  }
  return { kind: 'gather', dst, src };
}

/** Fills the halo of `buf` (destination first). Gather sources are interior cells, so the order does not matter. */
export function fillGhosts(buf: FieldArray, g: Geometry, plan: GhostPlan): void {
  if (plan.kind === 'gather') {
    const { dst, src } = plan;
    for (let k = 0, n = dst.length; k < n; k++) buf[dst[k]] = buf[src[k]];
    return;
  }
  const v = plan.value;
  const { pw, ph, haloX, haloY, width, height } = g;
  for (let py = 0; py < ph; py++) {
    const row = py * pw;
    if (py < haloY || py >= haloY + height) {
      buf.fill(v, row, row + pw);
    } else {
      buf.fill(v, row, row + haloX);
      buf.fill(v, row + haloX + width, row + pw);
    }
  }
}

/** Copies a row-major width×height image into the interior of a padded buffer. */
export function writeInterior(buf: FieldArray, g: Geometry, img: ArrayLike<number>): void {
  for (let y = 0; y < g.height; y++) {
    const o = (y + g.haloY) * g.pw + g.haloX;
    for (let x = 0; x < g.width; x++) buf[o + x] = img[y * g.width + x];
  }
}

/** Copies the interior of a padded buffer into a new row-major array of the given type. */
export function readInterior<T extends FieldArray>(out: T, buf: FieldArray, g: Geometry): T {
  for (let y = 0; y < g.height; y++) {
    const o = (y + g.haloY) * g.pw + g.haloX;
    for (let x = 0; x < g.width; x++) out[y * g.width + x] = buf[o + x];
  }
  return out;
}
