// The pinned result of an A/B comparison as the live run keeps it: the full-resolution state of the shown field at
// the pinned step, what it was run with (a label), and its metrics at pin time. Also its stored form for the
// per-file memory (values as base64 of little-endian Float32, so a reload or a re-shown panel gets it back) and the
// check that accepts a stored object only when every part is well formed. Must not import vscode or the DOM.

import type { SideMetrics } from './analysisProtocol';

export interface PinnedResult {
  readonly label: string;
  readonly step: number;
  readonly t: number;
  readonly field: string;
  readonly width: number;
  readonly height: number;
  /** Full-resolution values, row-major. */
  readonly data: Float32Array;
  readonly metrics: SideMetrics;
  readonly pinnedAt: string;
}

/** Largest pinned state kept in the per-file memory (4 MiB of Float32); larger pins live as long as the panel. */
export const MAX_STORED_PIXELS = 1024 * 1024;

export interface StoredPinned extends Omit<PinnedResult, 'data'> {
  readonly version: 1;
  readonly values: string;
}

function bytesOf(data: Float32Array): Uint8Array {
  // Float32Array is host-endian; the stored form is little-endian on every host.
  const out = new Uint8Array(data.length * 4);
  const view = new DataView(out.buffer);
  for (let i = 0; i < data.length; i++) view.setFloat32(i * 4, data[i], true);
  return out;
}

/** The stored form, or null when the state is too large to keep across reloads. */
export function storePinned(p: PinnedResult): StoredPinned | null {
  if (p.width * p.height > MAX_STORED_PIXELS) return null;
  const { data, ...rest } = p;
  return { version: 1, ...rest, values: Buffer.from(bytesOf(data)).toString('base64') };
}

type Obj = Record<string, unknown>;
const isObj = (v: unknown): v is Obj => typeof v === 'object' && v !== null && !Array.isArray(v);
const nat = (v: unknown, min = 0): v is number => typeof v === 'number' && Number.isInteger(v) && v >= min;
const metric = (v: unknown): v is number | null => v === null || typeof v === 'number';

/** A stored pinned result back, or null when anything about it is malformed (an older or damaged entry). */
export function restorePinned(v: unknown): PinnedResult | null {
  if (!isObj(v) || v.version !== 1 || typeof v.label !== 'string' || !nat(v.step) || typeof v.t !== 'number' || !Number.isFinite(v.t)) return null;
  if (typeof v.field !== 'string' || !nat(v.width, 1) || !nat(v.height, 1) || v.width * v.height > MAX_STORED_PIXELS) return null;
  if (typeof v.pinnedAt !== 'string' || typeof v.values !== 'string' || !isObj(v.metrics)) return null;
  const m = v.metrics;
  if (!metric(m.psnr) || !metric(m.ssim) || !metric(m.tv)) return null;
  const bytes = Buffer.from(v.values, 'base64');
  if (bytes.length !== v.width * v.height * 4) return null;
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const data = new Float32Array(v.width * v.height);
  for (let i = 0; i < data.length; i++) data[i] = view.getFloat32(i * 4, true);
  return {
    label: v.label, step: v.step, t: v.t, field: v.field, width: v.width, height: v.height, data,
    metrics: { psnr: m.psnr, ssim: m.ssim, tv: m.tv }, pinnedAt: v.pinnedAt,
  };
}
