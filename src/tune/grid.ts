// Sweep grids: parses `--vary NAME=LO:HI:COUNT` and `--free NAME,...`, checks them against the scheme's declared
// ranges, and expands the settings in a fixed order (first --vary slowest). Pure; no Node, no engine.

import type { CheckedScheme } from '../notation/scheme';
import type { Setting } from './evaluate';

export class GridError extends Error {}

export interface Axis {
  readonly name: string;
  readonly lo: number;
  readonly hi: number;
  readonly count: number;
  readonly values: readonly number[];
}

/** The declared range of a tunable name (a `param` or `dt`), null where the scheme declares none. */
export function declaredRange(scheme: CheckedScheme, name: string): { lo: number; hi: number; value: number } | { lo: null; hi: null; value: number } {
  if (name === 'dt') {
    return scheme.dtBounds ? { lo: scheme.dtBounds.lo, hi: scheme.dtBounds.hi, value: scheme.dt } : { lo: null, hi: null, value: scheme.dt };
  }
  const p = scheme.params.find((q) => q.name === name);
  if (!p) {
    const names = [...scheme.params.map((q) => q.name), 'dt'].join(', ');
    throw new GridError(`the scheme has no parameter '${name}' (tunable: ${names}).`);
  }
  return p.lo !== null && p.hi !== null ? { lo: p.lo, hi: p.hi, value: p.value } : { lo: null, hi: null, value: p.value };
}

/** COUNT values from LO to HI inclusive, evenly spaced (COUNT = 1 gives LO). Ends are exact. */
export function linspace(lo: number, hi: number, count: number): number[] {
  if (count === 1) return [lo];
  // Rounded to 12 significant digits so 0.02:0.3:8 gives 0.1, not 0.09999999999999999 (still exact ends).
  return Array.from({ length: count }, (_, i) => (i === count - 1 ? hi : Number((lo + ((hi - lo) * i) / (count - 1)).toPrecision(12))));
}

const NUM = String.raw`[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?`;
const VARY = new RegExp(String.raw`^\s*([A-Za-z_][A-Za-z0-9_]*)\s*=\s*(${NUM})\s*:\s*(${NUM})\s*:\s*(\d+)\s*$`);

/** Parses one `NAME=LO:HI:COUNT` and checks it against the declared range (values outside it are refused). */
export function parseVary(scheme: CheckedScheme, text: string): Axis {
  const m = VARY.exec(text);
  if (!m) throw new GridError(`--vary takes NAME=LO:HI:COUNT, e.g. K=0.01:0.2:20; got '${text}'.`);
  const [, name, loText, hiText, countText] = m;
  const lo = Number(loText), hi = Number(hiText), count = Number(countText);
  if (!(count >= 1 && count <= 1000)) throw new GridError(`--vary ${name}: COUNT must be 1 to 1000, got ${countText}.`);
  if (!(lo <= hi)) throw new GridError(`--vary ${name}: LO (${lo}) must not exceed HI (${hi}).`);
  if (count > 1 && lo === hi) throw new GridError(`--vary ${name}: LO equals HI, so COUNT must be 1.`);
  const r = declaredRange(scheme, name);
  if (r.lo !== null && (lo < r.lo || hi > r.hi)) {
    throw new GridError(`--vary ${name}=${lo}:${hi}: outside the declared range [${r.lo}, ${r.hi}] of ${name}.`);
  }
  if (name === 'dt' && lo <= 0) throw new GridError(`--vary dt: the step must be positive, got ${lo}.`);
  return { name, lo, hi, count, values: linspace(lo, hi, count) };
}

/** All settings of the grid, first axis slowest: index = i0·count1 + i1. */
export function expandGrid(axes: readonly Axis[]): Setting[] {
  if (axes.length === 0) return [{}];
  const [first, ...rest] = axes;
  const tail = expandGrid(rest);
  return first.values.flatMap((v) => tail.map((t) => ({ [first.name]: v, ...t })));
}

/** Parses `--free K,sigma`: names with declared ranges (a fit needs finite bounds), no repeats. */
export function parseFree(scheme: CheckedScheme, text: string): { name: string; lo: number; hi: number; value: number }[] {
  const names = text.split(',').map((s) => s.trim()).filter((s) => s.length > 0);
  if (names.length === 0) throw new GridError(`--free takes a comma-separated list of parameter names, got '${text}'.`);
  const seen = new Set<string>();
  return names.map((name) => {
    if (seen.has(name)) throw new GridError(`--free names ${name} twice.`);
    seen.add(name);
    const r = declaredRange(scheme, name);
    if (r.lo === null) throw new GridError(`--free ${name}: the scheme declares no range for ${name}; write \`in [LO, HI]\` in its declaration so the fit knows where to search.`);
    if (!(r.lo < r.hi)) throw new GridError(`--free ${name}: the declared range [${r.lo}, ${r.hi}] is empty.`);
    return { name, lo: r.lo, hi: r.hi, value: Math.min(r.hi, Math.max(r.lo, r.value)) };
  });
}
