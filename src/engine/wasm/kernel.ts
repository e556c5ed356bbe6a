// Emits one WebAssembly SIMD kernel function from a kernel graph (ir.ts): loop-invariant parts in scalar Float64
// once per call (the same arithmetic as the JavaScript backend's hoisted code), the per-pixel part in f32x4 or f64x2
// lanes over a band of rows, with the monitors' min/max. Also owns the memory layout every kernel assumes.
// Must not import vscode, the DOM or Node modules.

import type { DType } from '../types';
import { Atomic, F64, FnBody, I32, Op, Simd, V128, type ValType } from './emit';
import { type KernelGraph, type Node, Unsupported } from './ir';

/** Byte address of the run values every kernel reads: f64 dt, t, then the params. */
export const PARAMS_AT = 64;
export const MAX_PARAMS = 240;
/** Per thread: f64 (min, max) per field, written by update kernels. */
export const MONITOR_AT = 4096;
export const MAX_FIELDS = 64;
export const MONITOR_BYTES = MAX_FIELDS * 16;
export const MAX_THREADS = 4;
/**
 * Per field: the i32 pair (offset O, range R) of the quiet check (emitKernel with monitors 'quiet'): a Float32 value
 * v passes when bits(v) - O <= R as unsigned, i.e. v in [lo, hi] for the non-negative Float32 lo (bits O) and hi
 * (bits O + R). Written by the backend before a block call; after the run values, before the monitors.
 */
export const QUIET_AT = 3072;
if (PARAMS_AT + 16 + 8 * MAX_PARAMS > QUIET_AT || QUIET_AT + 8 * MAX_FIELDS > MONITOR_AT) throw new Error('kernel memory layout overlaps');
/** Buffers start after this (plus a halo's worth of bytes, so that base + relative offsets never go below 0). */
export const BUFFERS_AT = MONITOR_AT + MAX_THREADS * MONITOR_BYTES;

/** At most this many vertical fluxes per kernel are kept for the next row; others are computed twice. */
export const MAX_ROW_FLUXES = 8;
/** Bytes per kept row of vertical fluxes (the row plus a vector's slack, 16-byte aligned). */
export function rowFluxStride(pw: number, dtype: DType): number {
  const bytes = dtype === 'float32' ? 4 : 8;
  return Math.ceil(((pw + 4) * bytes) / 16) * 16;
}
/** Bytes of row-flux scratch each thread needs. */
export function rowFluxBytes(pw: number, dtype: DType): number {
  return MAX_ROW_FLUXES * rowFluxStride(pw, dtype);
}

/** Functions of Math the invariant (scalar) prologue calls; the same functions the JavaScript backend calls. */
export const IMPORTS = ['exp', 'log', 'sin', 'cos', 'tanh', 'sign', 'pow'] as const;

/** A buffer a kernel reads or writes: current field (c), next field (d) or let (l). */
export interface BufId {
  readonly kind: 'c' | 'd' | 'l';
  readonly index: number;
}

export interface KernelGeometry {
  readonly pw: number;
  readonly hx: number;
  readonly hy: number;
}

export interface EmittedKernel {
  readonly body: FnBody;
  /** One i32 base-address argument per entry, in this order, then x0, x1, y0, y1, monitor address, row-flux scratch. */
  readonly bufs: readonly BufId[];
}

const F32_LANES = {
  splat: Simd.f32x4Splat, add: Simd.f32x4Add, sub: Simd.f32x4Sub, mul: Simd.f32x4Mul, div: Simd.f32x4Div,
  min: Simd.f32x4Min, max: Simd.f32x4Max, neg: Simd.f32x4Neg, abs: Simd.f32x4Abs, sqrt: Simd.f32x4Sqrt,
  lt: Simd.f32x4Lt, le: Simd.f32x4Le, gt: Simd.f32x4Gt, ge: Simd.f32x4Ge, eq: Simd.f32x4Eq, ne: Simd.f32x4Ne,
  pmin: Simd.f32x4Pmin, pmax: Simd.f32x4Pmax,
};
const F64_LANES = {
  splat: Simd.f64x2Splat, add: Simd.f64x2Add, sub: Simd.f64x2Sub, mul: Simd.f64x2Mul, div: Simd.f64x2Div,
  min: Simd.f64x2Min, max: Simd.f64x2Max, neg: Simd.f64x2Neg, abs: Simd.f64x2Abs, sqrt: Simd.f64x2Sqrt,
  lt: Simd.f64x2Lt, le: Simd.f64x2Le, gt: Simd.f64x2Gt, ge: Simd.f64x2Ge, eq: Simd.f64x2Eq, ne: Simd.f64x2Ne,
  pmin: Simd.f64x2Pmin, pmax: Simd.f64x2Pmax,
};

const VOID = 0x40;
/** Vectors per loop iteration in the body of a row. */
const UNROLL = 4;

/** Throws Unsupported for per-pixel operations without a vector form (they run on the JavaScript backend). */
export function checkVectorisable(kg: KernelGraph, dtype: DType): void {
  for (const n of reachable(kg).variant) {
    const name = n.op === 'pow' ? '^ with a non-constant or non-integer exponent' : `${n.op}()`;
    if (n.op === 'log' || n.op === 'sin' || n.op === 'cos' || n.op === 'tanh' || n.op === 'pow') throw new Unsupported(name, n.line);
    if (n.op === 'exp' && dtype === 'float64') throw new Unsupported('exp() in Float64', n.line);
  }
}

function reachable(kg: KernelGraph): { variant: Node[]; scalar: Node[]; frontier: Node[] } {
  const nodes = kg.graph.nodes;
  const seenV = new Set<number>(), seenS = new Set<number>(), front = new Set<number>();
  const walkS = (id: number): void => {
    if (seenS.has(id)) return;
    seenS.add(id);
    for (const a of nodes[id].args) walkS(a);
  };
  const walkV = (id: number): void => {
    const n = nodes[id];
    if (n.inv) {
      front.add(id);
      walkS(id);
      return;
    }
    if (seenV.has(id)) return;
    seenV.add(id);
    for (const a of n.args) walkV(a);
  };
  for (const s of kg.stores) walkV(s.node);
  const byId = (s: Set<number>) => [...s].sort((a, b) => a - b).map(i => nodes[i]);
  return { variant: byId(seenV), scalar: byId(seenS), frontier: byId(front) };
}

/**
 * The kernel: for y in [y0, y1), x in [x0, x1) by lanes (the last vector of a row overlaps the one before it, which
 * recomputes and rewrites the same values, so x1 - x0 must be at least the lane count), stores = graph values.
 * `target` says where stores go: the next field buffers (update) or the let buffer.
 */
/**
 * Monitors: true merges each stored field's (min, max) into the monitor slots as f64 (what single steps report);
 * 'quiet' (Float32 only) merges one i32x4 per field into the slot, the lane-wise unsigned max of bits(v) - O (O from
 * QUIET_AT): all the block driver needs to tell a quiet pass, in two integer operations per vector instead of three.
 * 'quiet-from-zero' is the same check for O = 0 (the range [+0, hi]): one operation per vector.
 */
export type KernelMonitors = boolean | 'quiet' | 'quiet-from-zero';

export function emitKernel(kg: KernelGraph, dtype: DType, geo: KernelGeometry, target: 'd' | 'l', monitorMode: KernelMonitors, rowPairs = true): EmittedKernel {
  checkVectorisable(kg, dtype);
  const quiet = monitorMode === 'quiet' || monitorMode === 'quiet-from-zero', fromZero = monitorMode === 'quiet-from-zero';
  if (quiet && dtype !== 'float32') throw new Error('the quiet check is for Float32 kernels');
  const monitors = monitorMode === true;
  const f32 = dtype === 'float32';
  const T = f32 ? F32_LANES : F64_LANES;
  const L = f32 ? 4 : 2, bytes = f32 ? 4 : 8, shift = f32 ? 2 : 3, align = f32 ? 2 : 3;
  const nodes = kg.graph.nodes;
  const { variant, scalar, frontier } = reachable(kg);

  // Buffers in first-use order.
  const bufs: BufId[] = [];
  const bufIndex = new Map<string, number>();
  const useBuf = (b: BufId): number => {
    const key = b.kind + b.index;
    let k = bufIndex.get(key);
    if (k === undefined) {
      k = bufs.push(b) - 1;
      bufIndex.set(key, k);
    }
    return k;
  };
  for (const n of variant) if (n.op === 'load' && n.buf) useBuf(n.buf);
  const storeBufs = kg.stores.map(s => useBuf({ kind: target, index: s.field }));

  const nb = bufs.length;
  const fb = new FnBody([...bufs.map((): ValType => I32), I32, I32, I32, I32, I32, I32], []);
  const X0 = nb, X1 = nb + 1, Y0 = nb + 2, Y1 = nb + 3, MON = nb + 4, ROWBUF = nb + 5;
  const constV = (x: number) => fb.v128c(f32 ? [x, x, x, x] : [x, x], f32 ? 'f32' : 'f64');

  // ---- prologue: invariant values in Float64, then the ones the lanes use, splatted.
  const sLocal = new Map<number, number>();
  const sget = (id: number) => fb.get(sLocal.get(id) as number);
  const call = (name: (typeof IMPORTS)[number]) => fb.op(Op.call).code.u32(IMPORTS.indexOf(name));
  for (const n of scalar) {
    const a = n.args;
    switch (n.op) {
      case 'num': sLocal.set(n.id, sLocal.get(a[0]) as number); continue;
      case 'const': fb.f64c(n.value); break;
      case 'param': fb.i32c(0).mem(Op.f64Load, 3, PARAMS_AT + 16 + 8 * n.value); break;
      case 'dt': fb.i32c(0).mem(Op.f64Load, 3, PARAMS_AT); break;
      case 't': fb.i32c(0).mem(Op.f64Load, 3, PARAMS_AT + 8); break;
      case 'neg': sget(a[0]).op(Op.f64Neg); break;
      case 'abs': sget(a[0]).op(Op.f64Abs); break;
      case 'sqrt': sget(a[0]).op(Op.f64Sqrt); break;
      case 'exp': case 'log': case 'sin': case 'cos': case 'tanh': case 'sign': sget(a[0]); call(n.op); break;
      case 'pow': sget(a[0]); sget(a[1]); call('pow'); break;
      case 'add': sget(a[0]); sget(a[1]).op(Op.f64Add); break;
      case 'sub': sget(a[0]); sget(a[1]).op(Op.f64Sub); break;
      case 'mul': sget(a[0]); sget(a[1]).op(Op.f64Mul); break;
      case 'div': sget(a[0]); sget(a[1]).op(Op.f64Div); break;
      case 'min': sget(a[0]); sget(a[1]).op(Op.f64Min); break;
      case 'max': sget(a[0]); sget(a[1]).op(Op.f64Max); break;
      case 'lt': case 'le': case 'gt': case 'ge': case 'eq': case 'ne': {
        const op = { lt: Op.f64Lt, le: Op.f64Le, gt: Op.f64Gt, ge: Op.f64Ge, eq: Op.f64Eq, ne: Op.f64Ne }[n.op];
        sget(a[0]); sget(a[1]).op(op, Op.f64ConvertI32S);
        break;
      }
      // Invariant truth values are 0 or 1 in Float64.
      case 'truth': sget(a[0]).f64c(0).op(Op.f64Ne, Op.f64ConvertI32S); break;
      case 'and': sget(a[0]); sget(a[1]).op(Op.f64Mul); break;
      case 'or': sget(a[0]); sget(a[1]).op(Op.f64Max); break;
      case 'not': fb.f64c(1); sget(a[0]).op(Op.f64Sub); break;
      case 'select': sget(a[1]); sget(a[2]); sget(a[0]).f64c(0).op(Op.f64Ne, Op.select); break;
      default: throw new Unsupported(`${n.op} in an invariant part`, n.line);
    }
    const l = fb.local(F64);
    fb.set(l);
    sLocal.set(n.id, l);
  }
  const vLocal = new Map<number, number>();
  for (const n of frontier) {
    sget(n.id);
    if (f32) fb.op(Op.f32DemoteF64);
    fb.simd(T.splat);
    if (n.mask) {
      constV(0);
      fb.simd(T.ne);
    }
    const l = fb.local(V128);
    fb.set(l);
    vLocal.set(n.id, l);
  }

  // ---- per-pixel part.
  const uses = new Map<number, number>();
  for (const n of variant) for (const a of n.args) uses.set(a, (uses.get(a) ?? 0) + 1);
  for (const s of kg.stores) uses.set(s.node, (uses.get(s.node) ?? 0) + 1);
  // Reused fluxes (ir.ts, Graph.reuse): the forward flux F of the vector before (x) or of the row above (y).
  const reuseX = variant.filter(n => n.op === 'reusex');
  const reuseY = variant.filter(n => n.op === 'reusey' && n.value === 1).slice(0, MAX_ROW_FLUXES);
  const rowSlot = new Map<number, number>();
  for (const n of reuseY) {
    uses.set(n.args[0], (uses.get(n.args[0]) ?? 0) + 2);
    if (!rowSlot.has(n.args[0])) rowSlot.set(n.args[0], rowSlot.size);
  }
  /**
   * Rows in pairs: where no flux goes through the row buffer, rows y and y + 1 are computed together, vector by
   * vector, and row y + 1 takes the vertical fluxes it shares with row y (every reusey node) from a register. A 5-point
   * heat kernel then computes 7 instead of 8 differences per two vectors. A band's odd last row goes alone.
   */
  const PAIRS = rowPairs && rowSlot.size === 0 && variant.some(n => n.op === 'reusey');
  const pairF = new Map<number, number>();
  if (PAIRS) {
    for (const n of variant) {
      if (n.op !== 'reusey' || pairF.has(n.args[0])) continue;
      uses.set(n.args[0], (uses.get(n.args[0]) ?? 0) + 2);
      pairF.set(n.args[0], fb.local(V128));
    }
  }
  /** Per row of a pair: the forward horizontal fluxes carried to the next vector. */
  const carries = [new Map<number, number>(), new Map<number, number>()];
  for (const n of reuseX) {
    uses.set(n.args[0], (uses.get(n.args[0]) ?? 0) + 2);
    for (const c of PAIRS ? carries : carries.slice(0, 1)) if (!c.has(n.args[0])) c.set(n.args[0], fb.local(V128));
  }
  const carry = carries[0];
  const rowStride = rowFluxStride(geo.pw, dtype);
  /** Emission modes: compute reused fluxes directly (row starts of a call, vectors at a row's clamped end). */
  let directX = true, directY = true;

  const y = fb.local(I32), x = fb.local(I32), rel = fb.local(I32), xlast = fb.local(I32);
  const addr = bufs.map(() => fb.local(I32));
  const mn = monitors ? kg.stores.map(() => fb.local(V128)) : [];
  const mx = monitors ? kg.stores.map(() => fb.local(V128)) : [];
  const nan = monitors ? kg.stores.map(() => fb.local(V128)) : [];
  /**
   * Float32 monitors on the bits, as integers: unsigned min and max and signed max (three accumulators per store).
   * A value's bits order like the value among values with the sign bit clear (signed and unsigned alike) and in
   * reverse among values with it set, which sort above the others as unsigned and below as signed. So per lane the
   * minimum is the largest unsigned bits when a value with the sign bit set occurred (the most negative), else the
   * smallest unsigned (the smallest of values with the sign bit clear); the maximum is the largest signed bits when
   * a value with the sign bit clear occurred, else the smallest unsigned (the negative value nearest zero). NaNs
   * sit beyond ±Infinity and show up in one of the two (then both are reported NaN, below). Every lane of a band
   * that is not empty holds a value (a row's last vector ends at its end), and an empty band merges nothing.
   * Integer min/max keep the monitors off the floating-point add ports, where compares and float min/max would
   * queue behind the sums.
   */
  const INTMON = f32;
  const mnU = monitors && INTMON ? kg.stores.map(() => fb.local(V128)) : [];
  const mxU = monitors && INTMON ? kg.stores.map(() => fb.local(V128)) : [];
  /** The quiet check: per store, its accumulator and its offset O splatted. */
  const qAcc = quiet ? kg.stores.map(() => fb.local(V128)) : [];
  const qOff = quiet && !fromZero ? kg.stores.map(() => fb.local(V128)) : [];
  const sv = fb.local(V128), rowAt = fb.local(I32);
  const usesY = variant.some(n => n.op === 'y');
  const yv = usesY ? fb.local(V128) : -1;
  const tmp: number[] = [];
  const done = new Set<number>();
  /** Which unrolled copy is being emitted: copy c works on the vector c·L pixels to the right. */
  let copy = 0;
  /** Which row of a pair is being emitted (0 alone), and whether row 1 may read row 0's fluxes from registers. */
  let r = 0, pairReads = false;
  const yv1 = usesY && PAIRS ? fb.local(V128) : -1;

  const emit = (id: number): void => {
    const n = nodes[id];
    const held = vLocal.get(id);
    if (held !== undefined && (n.inv || done.has(id))) {
      fb.get(held);
      return;
    }
    const a = n.args;
    switch (n.op) {
      case 'load': {
        const b = n.buf as { kind: 'c' | 'l'; index: number };
        const imm = (((n.dy ?? 0) + geo.hy + r) * geo.pw + (n.dx ?? 0) + geo.hx + copy * L) * bytes;
        fb.get(addr[bufIndex.get(b.kind + b.index) as number]).mem(Simd.load, align, imm, true);
        break;
      }
      case 'x':
        fb.get(x).simd(Simd.i32x4Splat).v128c((f32 ? [0, 1, 2, 3] : [0, 1, 0, 0]).map(v => v + copy * L), 'i32').simd(Simd.i32x4Add);
        fb.simd(f32 ? Simd.f32x4ConvertI32x4S : Simd.f64x2ConvertLowI32x4S);
        break;
      case 'y': fb.get(r ? yv1 : yv); break;
      case 'neg': case 'abs': case 'sqrt': emit(a[0]); fb.simd(T[n.op]); break;
      case 'add': {
        // p + (-F) is p - F in IEEE arithmetic, bit for bit: a reused flux is subtracted, not negated and added.
        if (reusedAsIs(a[1])) {
          emit(a[0]); reusedFlux(a[1]); fb.simd(T.sub);
        } else if (reusedAsIs(a[0])) {
          emit(a[1]); reusedFlux(a[0]); fb.simd(T.sub);
        } else {
          emit(a[0]); emit(a[1]); fb.simd(T.add);
        }
        break;
      }
      case 'sub': case 'mul': case 'div': case 'min': case 'max':
      case 'lt': case 'le': case 'gt': case 'ge': case 'eq': case 'ne':
        emit(a[0]); emit(a[1]); fb.simd(T[n.op]); break;
      case 'and': emit(a[0]); emit(a[1]); fb.simd(Simd.and); break;
      case 'or': emit(a[0]); emit(a[1]); fb.simd(Simd.or); break;
      case 'not': emit(a[0]); fb.simd(Simd.not); break;
      case 'num': emit(a[0]); constV(1); fb.simd(Simd.and); break;
      case 'truth': emit(a[0]); constV(0); fb.simd(T.ne); break;
      case 'select': emit(a[1]); emit(a[2]); emit(a[0]); fb.simd(Simd.bitselect); break;
      case 'sign': {
        // Math.sign: 1 above zero, -1 below, the value itself for ±0 and NaN.
        const s = scratch();
        emit(a[0]);
        fb.set(s);
        constV(1); constV(-1); fb.get(s).get(s); constV(0); fb.simd(T.lt).simd(Simd.bitselect);
        fb.get(s); constV(0); fb.simd(T.gt).simd(Simd.bitselect);
        release(s);
        break;
      }
      case 'exp': emitExp32(a[0]); break;
      case 'reusex': case 'reusey':
        if (!reusable(id)) {
          emit(a[1]);
          break;
        }
        reusedFlux(id);
        fb.simd(T.neg);
        break;
      default: throw new Unsupported(`${n.op}()`, n.line);
    }
    if ((uses.get(id) ?? 0) > 1) {
      const l = vLocal.get(id) ?? fb.local(V128);
      fb.tee(l);
      vLocal.set(id, l);
      done.add(id);
    }
  };

  /** Whether a reuse node takes its flux from the vector or row before in the current emission mode. */
  function reusable(id: number): boolean {
    const n = nodes[id];
    if (n.op === 'reusex') return !directX && carries[r].has(n.args[0]);
    if (n.op === 'reusey') return pairReads && r === 1 ? pairF.has(n.args[0]) : !directY && rowSlot.has(n.args[0]);
    return false;
  }
  /** A reuse node used once, not yet computed: its sum can subtract the flux F instead of adding -F. */
  function reusedAsIs(id: number): boolean {
    return reusable(id) && (uses.get(id) ?? 0) <= 1 && !done.has(id);
  }
  /** Pushes F, the flux the reuse node's value is minus of: from the vector before (x) or the row above (y). */
  function reusedFlux(id: number): void {
    const n = nodes[id];
    if (n.op === 'reusex') {
      // Lanes x-1 .. x+L-2 of F: the last lane of the vector before, then the first L-1 lanes of this one.
      fb.get(carries[r].get(n.args[0]) as number);
      emit(n.args[0]);
      fb.simd(Simd.shuffle);
      for (let k = 0; k < 16; k++) fb.code.u8(16 - bytes + k);
    } else if (pairReads && r === 1) {
      fb.get(pairF.get(n.args[0]) as number);
    } else {
      fb.get(rowAt).mem(Simd.load, align, (rowSlot.get(n.args[0]) as number) * rowStride + copy * L * bytes, true);
    }
  }

  const scratch = (): number => tmp.pop() ?? fb.local(V128);
  const release = (l: number): void => {
    tmp.push(l);
  };

  /**
   * exp in Float32 lanes: x = n·ln2 + r with |r| ≤ ln2/2 (ln2 split in two parts), a degree-7 polynomial for e^r,
   * and 2^n built in the exponent bits; about 2 ulps. Arguments are clamped to [-87.3, 88.3] and x > 88.72 gives
   * +Infinity; NaN stays NaN. (Between 88.3 and 88.72 the result is too small; such values are blow-ups anyway.)
   */
  function emitExp32(arg: number): void {
    const xin = scratch(), fx = scratch(), r = scratch();
    emit(arg);
    fb.tee(xin);
    constV(-87.3); fb.simd(Simd.f32x4Max); constV(88.3); fb.simd(Simd.f32x4Min);
    fb.tee(r);
    constV(1.44269504088896341); fb.simd(Simd.f32x4Mul).simd(Simd.f32x4Nearest).set(fx);
    fb.get(r).get(fx); constV(0.693359375); fb.simd(Simd.f32x4Mul).simd(Simd.f32x4Sub);
    fb.get(fx); constV(-2.12194440e-4); fb.simd(Simd.f32x4Mul).simd(Simd.f32x4Sub).set(r);
    constV(1.9875691500e-4); fb.get(r).simd(Simd.f32x4Mul);
    for (const c of [1.3981999507e-3, 8.3334519073e-3, 4.1665795894e-2, 1.6666665459e-1, 5.0000001201e-1]) {
      constV(c); fb.simd(Simd.f32x4Add).get(r).simd(Simd.f32x4Mul);
    }
    fb.get(r).simd(Simd.f32x4Mul).get(r).simd(Simd.f32x4Add);
    constV(1); fb.simd(Simd.f32x4Add);
    fb.get(fx).simd(Simd.i32x4TruncSatF32x4S).v128c([127, 127, 127, 127], 'i32').simd(Simd.i32x4Add);
    fb.i32c(23).simd(Simd.i32x4Shl).simd(Simd.f32x4Mul).set(r);
    constV(Infinity); fb.get(r).get(xin); constV(88.72283905206835); fb.simd(Simd.f32x4Gt).simd(Simd.bitselect);
    release(r); release(fx); release(xin);
  }

  // ---- loops.
  const i32s = (v: number): number[] => [v | 0, v | 0, v | 0, v | 0];
  for (let k = 0; k < mn.length; k++) {
    if (INTMON) {
      fb.v128c(i32s(0x80000000), 'i32').set(mx[k]); // signed max
      fb.v128c(i32s(0xffffffff), 'i32').set(mnU[k]); // unsigned min
      fb.v128c(i32s(0), 'i32').set(mxU[k]); // unsigned max
      continue;
    }
    constV(Infinity); fb.set(mn[k]);
    constV(-Infinity); fb.set(mx[k]);
    constV(0); fb.set(nan[k]);
  }
  kg.stores.forEach((s, k) => {
    if (!quiet) return;
    fb.v128c(i32s(0), 'i32').set(qAcc[k]);
    if (!fromZero) fb.i32c(0).mem(Op.i32Load, 2, QUIET_AT + 8 * s.field).simd(Simd.i32x4Splat).set(qOff[k]);
  });
  fb.get(Y0).set(y);
  fb.get(X1).i32c(L).op(Op.i32Sub).set(xlast);
  /** Rows per emitted row body: 2 for a pair (rows y and y + 1), else 1. */
  let rowsNow = 1;
  const pixels = (copies: number): void => {
    pixelsHeader();
    if (rowSlot.size) fb.get(ROWBUF).get(x).get(X0).op(Op.i32Sub).i32c(shift).op(Op.i32Shl, Op.i32Add).set(rowAt);
    for (copy = 0; copy < copies; copy++) {
      for (r = 0; r < rowsNow; r++) {
        done.clear();
        kg.stores.forEach((s, k) => {
          emit(s.node);
          fb.set(sv);
          fb.get(addr[storeBufs[k]]).get(sv).mem(Simd.store, align, ((geo.hy + r) * geo.pw + geo.hx + copy * L) * bytes, true);
          if (fromZero) {
            fb.get(qAcc[k]).get(sv).simd(Simd.i32x4MaxU).set(qAcc[k]);
          } else if (quiet) {
            fb.get(qAcc[k]).get(sv).get(qOff[k]).simd(Simd.i32x4Sub).simd(Simd.i32x4MaxU).set(qAcc[k]);
          } else if (monitors && INTMON) {
            fb.get(mx[k]).get(sv).simd(Simd.i32x4MaxS).set(mx[k]);
            fb.get(mnU[k]).get(sv).simd(Simd.i32x4MinU).set(mnU[k]);
            fb.get(mxU[k]).get(sv).simd(Simd.i32x4MaxU).set(mxU[k]);
          } else if (monitors) {
            // pmin/pmax are single instructions (min/max with NaN propagation are long sequences, and they sit on the
            // loop-carried chain); NaN is tracked on its own lane mask instead.
            fb.get(mn[k]).get(sv).simd(T.pmin).set(mn[k]);
            fb.get(mx[k]).get(sv).simd(T.pmax).set(mx[k]);
            fb.get(nan[k]).get(sv).get(sv).simd(T.ne).simd(Simd.or).set(nan[k]);
          }
        });
        // This vector's forward horizontal fluxes, for the next vector (after every reuse in this one read the old).
        if (!directX) {
          for (const [f, c] of carries[r]) {
            emit(f);
            fb.set(c);
          }
        }
        // Row 0 of a pair: its forward vertical fluxes, for row 1 of the same vector.
        if (rowsNow === 2 && r === 0) {
          for (const [f, l] of pairF) {
            emit(f);
            fb.set(l);
          }
        }
        // This row's forward vertical fluxes, for the next row (after this vector read the row above's).
        for (const [f, slot] of rowSlot) {
          fb.get(rowAt);
          emit(f);
          fb.mem(Simd.store, align, slot * rowStride + copy * L * bytes, true);
        }
      }
      r = 0;
    }
    copy = 0;
  };
  const row = (firstRow: boolean, pair: boolean): void => {
    rowsNow = pair ? 2 : 1;
    pairReads = pair;
    if (usesY) {
      fb.get(y).simd(Simd.i32x4Splat).simd(f32 ? Simd.f32x4ConvertI32x4S : Simd.f64x2ConvertLowI32x4S).set(yv);
      if (pair) fb.get(y).i32c(1).op(Op.i32Add).simd(Simd.i32x4Splat).simd(f32 ? Simd.f32x4ConvertI32x4S : Simd.f64x2ConvertLowI32x4S).set(yv1);
    }
    directX = true;
    directY = true;
    if (carry.size) {
      // The forward horizontal fluxes of the L pixels before the row's first vector (of each row of a pair).
      fb.get(X0).i32c(L).op(Op.i32Sub).set(x);
      pixelsHeader();
      pairReads = false;
      for (r = 0; r < rowsNow; r++) {
        done.clear();
        for (const [f, c] of carries[r]) {
          emit(f);
          fb.set(c);
        }
      }
      r = 0;
      pairReads = pair;
    }
    fb.get(X0).set(x);
    // UNROLL vectors per iteration while they fit (less loop and address work per pixel)...
    directX = false;
    directY = firstRow;
    fb.op(Op.block, VOID, Op.loop, VOID);
    fb.get(x).get(xlast).i32c((UNROLL - 1) * L).op(Op.i32Sub, Op.i32GtS, Op.brIf).code.u32(1);
    pixels(UNROLL);
    fb.get(x).i32c(UNROLL * L).op(Op.i32Add).set(x);
    fb.op(Op.br).code.u32(0);
    fb.op(Op.end, Op.end);
    // ...then single vectors, the last one ending at the row's end (it may overlap the one before,
    // so it computes reused fluxes directly).
    directX = true;
    directY = true;
    fb.op(Op.block, VOID);
    fb.get(x).get(X1).op(Op.i32GeS, Op.brIf).code.u32(0);
    fb.get(x).get(xlast).op(Op.i32GtS, Op.if, VOID);
    fb.get(xlast).set(x);
    fb.op(Op.end);
    fb.op(Op.loop, VOID);
    pixels(1);
    fb.get(x).get(xlast).op(Op.i32GeS, Op.brIf).code.u32(1);
    fb.get(x).i32c(L).op(Op.i32Add).tee(x).get(xlast).op(Op.i32GtS, Op.if, VOID);
    fb.get(xlast).set(x);
    fb.op(Op.end, Op.br).code.u32(0);
    fb.op(Op.end); // tail loop
    fb.op(Op.end); // tail block
    fb.get(y).i32c(rowsNow).op(Op.i32Add).set(y);
    rowsNow = 1;
    pairReads = false;
  };
  function pixelsHeader(): void {
    fb.get(y).i32c(geo.pw).op(Op.i32Mul).get(x).op(Op.i32Add).i32c(shift).op(Op.i32Shl).set(rel);
    bufs.forEach((_, k) => fb.get(k).get(rel).op(Op.i32Add).set(addr[k]));
  }
  fb.op(Op.block, VOID);
  if (PAIRS) {
    // No row buffer: every row body is the same; pairs while two rows are left, then the odd last row.
    fb.op(Op.loop, VOID);
    fb.get(y).get(Y1).op(Op.i32GeS, Op.brIf).code.u32(1);
    fb.get(y).i32c(1).op(Op.i32Add).get(Y1).op(Op.i32LtS, Op.if, VOID);
    row(false, true);
    fb.op(Op.else);
    row(false, false);
    fb.op(Op.end);
    fb.op(Op.br).code.u32(0);
    fb.op(Op.end); // rows loop
  } else {
    // The first row of a call reads no row above from the row buffer; the other rows do.
    fb.get(y).get(Y1).op(Op.i32GeS, Op.brIf).code.u32(0);
    row(true, false);
    fb.op(Op.loop, VOID);
    fb.get(y).get(Y1).op(Op.i32GeS, Op.brIf).code.u32(1);
    row(false, false);
    fb.op(Op.br).code.u32(0);
    fb.op(Op.end); // rows loop
  }
  fb.op(Op.end); // block: an empty band still reports its (empty) monitors
  // Monitors: reduce the lanes and merge (min, max) as Float64 into the monitor slot; the Float32 accumulators
  // mean something only when the band held a value.
  // The quiet check: merged lane-wise into the slot (an empty band merges zeros, which pass).
  kg.stores.forEach((s, k) => {
    if (!quiet) return;
    fb.get(MON).get(MON).mem(Simd.load, 4, 16 * s.field, true).get(qAcc[k]).simd(Simd.i32x4MaxU).mem(Simd.store, 4, 16 * s.field, true);
  });
  if (monitors && INTMON) fb.get(Y0).get(Y1).op(Op.i32LtS, Op.if, VOID);
  kg.stores.forEach((s, k) => {
    if (!monitors) return;
    if (INTMON) {
      // min: the largest unsigned bits if the lane held a value with the sign bit set, else the smallest unsigned;
      // max: the largest signed bits if the lane held a value with the sign bit clear, else the smallest unsigned.
      fb.get(mxU[k]).get(mnU[k]).get(mxU[k]).v128c(i32s(0), 'i32').simd(Simd.i32x4LtS).simd(Simd.bitselect).set(mn[k]);
      fb.get(mx[k]).get(mnU[k]).get(mx[k]).v128c(i32s(0), 'i32').simd(Simd.i32x4GeS).simd(Simd.bitselect).set(mx[k]);
      fb.get(mn[k]).get(mn[k]).simd(T.ne).get(mx[k]).get(mx[k]).simd(T.ne).simd(Simd.or).set(nan[k]);
    }
    for (const [v, off, red] of [[mn[k], 0, 'min'], [mx[k], 8, 'max']] as const) {
      fb.get(MON);
      for (let lane = 0; lane < L; lane++) {
        fb.get(v).simd(f32 ? Simd.f32x4Extract : Simd.f64x2Extract).code.u8(lane);
        if (lane > 0) fb.op(f32 ? (red === 'min' ? Op.f32Min : Op.f32Max) : red === 'min' ? Op.f64Min : Op.f64Max);
      }
      if (f32) fb.op(Op.f64PromoteF32);
      // A NaN anywhere makes both reported values NaN, as Math.min/max do in the JavaScript kernels.
      fb.f64c(NaN).get(nan[k]).simd(Simd.anyTrue).op(Op.i32Eqz, Op.select);
      // Merged into what the slot holds: a thread runs several chunks of rows per step (the caller resets the slot).
      fb.get(MON).mem(Op.f64Load, 3, s.field * 16 + off).op(red === 'min' ? Op.f64Min : Op.f64Max);
      fb.mem(Op.f64Store, 3, s.field * 16 + off);
    }
  });
  if (monitors && INTMON) fb.op(Op.end);
  return { body: fb, bufs };
}

/**
 * Two steps in one pass (temporal blocking), as the driver function `emitTwoStep` builds: per chunk of rows
 * [ya, yb), step s + 1 of the rows [ya - hy, yb + hy) goes into a per-thread band buffer T (one per updated field,
 * after the thread's row-flux scratch), T's halo cells are refilled from the field's gather plan, and step s + 2 of
 * the chunk goes from T into the next buffers. T holds TWO_STEP_SLACK + rows + 4·hy + 1 rows of the padded width.
 */
export const TWO_STEP_SLACK_ROWS = 1;
export function twoStepSlotBytes(pw: number, hy: number, rows: number, dtype: DType): number {
  const bytes = dtype === 'float32' ? 4 : 8;
  return Math.ceil(((rows + 4 * hy + 1 + TWO_STEP_SLACK_ROWS) * pw * bytes + 64) / 16) * 16;
}
/** Bytes of a field's halo plan table: row starts (ph + 1 Int32), then (dst, src) Int32 pairs. */
export function planTableBytes(ph: number, entries: number): number {
  return Math.ceil((4 * (ph + 1) + 8 * entries) / 16) * 16;
}

export interface TwoStepGeometry extends KernelGeometry {
  readonly ph: number;
  /** Rows per chunk the T buffers are sized for. */
  readonly rows: number;
}

/**
 * The two-step driver. Arguments: the update kernel's buffer bases (c: current, d: next; `bufs`), one plan table
 * address per store of the update (in store order), then x0, x1, ya, yb, monitor address, scratch (as a kernel).
 * Step s + 1's monitors go to the monitor address + 2 slots (redundant rows computed by two chunks count twice,
 * which min and max do not notice), step s + 2's to the monitor address itself.
 */
export function emitTwoStep(kg: KernelGraph, bufs: readonly BufId[], dtype: DType, geo: TwoStepGeometry, kernelIndex: number): FnBody {
  const bytes = dtype === 'float32' ? 4 : 8, align = dtype === 'float32' ? 2 : 3;
  const H = geo.ph - 2 * geo.hy, hy = geo.hy, pw = geo.pw;
  const nb = bufs.length, ns = kg.stores.length;
  const fb = new FnBody([...bufs.map((): ValType => I32), ...kg.stores.map((): ValType => I32), I32, I32, I32, I32, I32, I32], []);
  const P = nb, X0 = nb + ns, X1 = X0 + 1, YA = X0 + 2, YB = X0 + 3, MON = X0 + 4, SCR = X0 + 5;
  const r0 = fb.local(I32), r1 = fb.local(I32), e = fb.local(I32), end = fb.local(I32), pairs = fb.local(I32), at = fb.local(I32);
  const tb = kg.stores.map(() => fb.local(I32));
  const slot = new Map(kg.stores.map((s, j) => [s.field, j] as const));
  const slotBytes = twoStepSlotBytes(pw, hy, geo.rows, dtype);
  // r0 = max(0, ya - hy), r1 = min(H, yb + hy): the rows of step s + 1 this chunk needs.
  fb.get(YA).i32c(hy).op(Op.i32Sub).i32c(0).get(YA).i32c(hy).op(Op.i32Sub).i32c(0).op(Op.i32GtS, Op.select).set(r0);
  fb.get(YB).i32c(hy).op(Op.i32Add).i32c(H).get(YB).i32c(hy).op(Op.i32Add).i32c(H).op(Op.i32LtS, Op.select).set(r1);
  // T's virtual base: padded row ya - hy sits TWO_STEP_SLACK_ROWS rows into the slot (i32 arithmetic wraps).
  kg.stores.forEach((_, j) => {
    fb.get(SCR).i32c(rowFluxBytes(pw, dtype) + j * slotBytes + TWO_STEP_SLACK_ROWS * pw * bytes).op(Op.i32Add);
    fb.get(YA).i32c(hy).op(Op.i32Sub).i32c(pw * bytes).op(Op.i32Mul, Op.i32Sub).set(tb[j]);
  });
  const callKernel = (first: boolean): void => {
    bufs.forEach((b, k) => {
      const j = slot.get(b.index);
      if (first && b.kind === 'd') fb.get(tb[j as number]);
      else if (!first && b.kind === 'c' && j !== undefined) fb.get(tb[j]);
      else fb.get(k);
    });
    fb.get(X0).get(X1);
    if (first) fb.get(r0).get(r1).get(MON).i32c(2 * MONITOR_BYTES).op(Op.i32Add);
    else fb.get(YA).get(YB).get(MON);
    fb.get(SCR).op(Op.call).code.u32(IMPORTS.length + kernelIndex);
  };
  callKernel(true);
  // Halo of T: the plan entries of padded rows [r0 + hy, r1 + hy), widened to the ghost rows at the image's edges.
  const tmp = { e, end, pairs, at };
  kg.stores.forEach((_, j) => emitHaloRefill(fb, () => fb.get(tb[j]), P + j, r0, r1, geo, dtype, tmp));
  callKernel(false);
  return fb;
}

/**
 * Refills the halo cells of padded rows [r0 + hy, r1 + hy) of one buffer (base pushed by `base`) from a field's plan
 * table (local `tab`), widened to the ghost rows above when r0 = 0 and below when r1 = H. Each entry copies an
 * interior cell of the same row, or of the first or last hy rows for ghost rows (the plans the passes accept).
 */
function emitHaloRefill(
  fb: FnBody, base: () => void, tab: number, r0: number, r1: number, geo: TwoStepGeometry, dtype: DType,
  tmp: { e: number; end: number; pairs: number; at: number },
): void {
  const bytes = dtype === 'float32' ? 4 : 8, align = dtype === 'float32' ? 2 : 3;
  const H = geo.ph - 2 * geo.hy, hy = geo.hy;
  const { e, end, pairs, at } = tmp;
  // first padded row: 0 when r0 = 0, else r0 + hy; last (exclusive): ph when r1 = H, else r1 + hy.
  fb.get(tab).i32c(0).get(r0).i32c(hy).op(Op.i32Add).get(r0).op(Op.i32Eqz, Op.select).i32c(2).op(Op.i32Shl, Op.i32Add).mem(Op.i32Load, 2, 0).set(e);
  fb.get(tab).i32c(geo.ph).get(r1).i32c(hy).op(Op.i32Add).get(r1).i32c(H).op(Op.i32LtS, Op.i32Eqz, Op.select).i32c(2).op(Op.i32Shl, Op.i32Add).mem(Op.i32Load, 2, 0).set(end);
  fb.get(tab).i32c(4 * (geo.ph + 1)).op(Op.i32Add).set(pairs);
  fb.op(Op.block, VOID, Op.loop, VOID);
  fb.get(e).get(end).op(Op.i32GeS, Op.brIf).code.u32(1);
  fb.get(pairs).get(e).i32c(3).op(Op.i32Shl, Op.i32Add).set(at);
  // buf[dst] = buf[src]
  base();
  fb.get(at).mem(Op.i32Load, 2, 0).i32c(Math.log2(bytes)).op(Op.i32Shl, Op.i32Add);
  base();
  fb.get(at).mem(Op.i32Load, 2, 4).i32c(Math.log2(bytes)).op(Op.i32Shl, Op.i32Add);
  fb.mem(bytes === 4 ? Op.f32Load : Op.f64Load, align, 0).mem(bytes === 4 ? Op.f32Store : Op.f64Store, align, 0);
  fb.get(e).i32c(1).op(Op.i32Add).set(e);
  fb.op(Op.br).code.u32(0);
  fb.op(Op.end, Op.end);
}

/** Passes per block call at most, and the control words the block uses (in the arena, see backend.ts). */
export const BLOCK_MAX_PASSES = 64;
/**
 * Per pass: chunk counter, chunks done, quiet flag, spare; then one word per thread: times it slept waiting; then
 * the abort word (set when the other thread failed: the waiting thread returns BLOCK_ABORTED instead of waiting on).
 */
export const BLOCK_CTL_BYTES = BLOCK_MAX_PASSES * 16 + 16;
export const BLOCK_ABORT_AT = BLOCK_MAX_PASSES * 16 + 8;
export const BLOCK_ABORTED = -2;
/** Per stored field (in store order): the lowest and highest value (f64) a quiet step may have. */
export function blockLimitBytes(stores: number): number {
  return Math.max(16, stores * 16);
}
/**
 * Spins on the chunks-done counter before sleeping in memory.atomic.wait32 (about a millisecond: 2M iterations took
 * 0.9 ms here): the other thread is on its last chunk. A thread that slept wakes late (an idle virtual core can take milliseconds), finds the next pass
 * taken, waits again, and so keeps falling behind while the other does all the work.
 */
const BLOCK_SPINS = 1 << 21;

/**
 * The block driver: up to `passes` two-step passes (the function `twoStepFn` of this module) in one call, on one
 * or two threads running the same function over the same memory. Pass p reads the buffers `even` (p even) or `odd`
 * (the updated fields' current and next swapped) and writes the other; each chunk of rows also refills the halo
 * of its output rows, so the next pass reads a complete field. Chunks are claimed from one counter per pass with a
 * compare-and-swap, thread 0 from the front, thread 1 from the back (`cap` chunks per pass at most, for tests); a
 * thread that arrives late finds the counter empty and passes through. After its chunks a thread compares its own
 * monitor slots of both steps with the limits (min >= lo, max <= hi per field; NaN fails), clears the pass's quiet
 * flag when they fail, adds its chunks to the done counter, and waits (spinning, then memory.atomic.wait32) until
 * every chunk of the pass is done. A pass whose flag was cleared ends the block: its output is ignored and the
 * input (the fields after the passes before) is intact. Returns the number of quiet passes, or BLOCK_ABORTED when
 * the abort word was set while this thread waited (the other thread failed).
 * Params: even[nb], odd[nb], tables[ns], x0, x1, passes, ctl, lim, thread, cap, mon, scratch.
 */
export function emitBlock(kg: KernelGraph, bufs: readonly BufId[], dtype: DType, geo: TwoStepGeometry, twoStepFn: number, quiet = false): FnBody {
  const nb = bufs.length, ns = kg.stores.length;
  const H = geo.ph - 2 * geo.hy, rows = geo.rows, chunks = Math.ceil(H / rows);
  const fb = new FnBody([...Array(2 * nb + ns + 9)].map((): ValType => I32), [I32]);
  const EVEN = 0, ODD = nb, TAB = 2 * nb, X0 = TAB + ns, X1 = X0 + 1, PASSES = X0 + 2, CTL = X0 + 3, LIM = X0 + 4, THREAD = X0 + 5, CAP = X0 + 6, MON = X0 + 7, SCR = X0 + 8;
  const p = fb.local(I32), c = fb.local(I32), n = fb.local(I32), w = fb.local(I32), lo = fb.local(I32), hi = fb.local(I32);
  const ya = fb.local(I32), yb = fb.local(I32), q = fb.local(I32), spins = fb.local(I32), sleeps = fb.local(I32);
  const tmp = { e: fb.local(I32), end: fb.local(I32), pairs: fb.local(I32), at: fb.local(I32) };
  const odd = (): void => void fb.get(p).i32c(1).op(Op.i32And);
  // The buffer argument k of this pass: odd[k] when p is odd, else even[k].
  const bufOfPass = (k: number): void => {
    fb.get(ODD + k).get(EVEN + k);
    odd();
    fb.op(Op.select);
  };
  const dOf = kg.stores.map(s => bufs.findIndex(b => b.kind === 'd' && b.index === s.field));
  if (dOf.some(k => k < 0)) throw new Error('block driver: a stored field has no output buffer');
  fb.i32c(0).set(p).i32c(0).set(sleeps);
  fb.op(Op.loop, VOID);
  // if (p >= passes) return p
  fb.get(p).get(PASSES).op(Op.i32GeS, Op.if, VOID).get(p).op(Op.return, Op.end);
  fb.get(CTL).get(p).i32c(4).op(Op.i32Shl, Op.i32Add).set(c);
  // This thread's monitor slots of both steps start empty.
  for (const s of kg.stores) {
    for (const off of [0, 2 * MONITOR_BYTES]) {
      if (quiet) {
        fb.get(MON).v128c([0, 0, 0, 0], 'i32').mem(Simd.store, 4, off + 16 * s.field, true);
        continue;
      }
      fb.get(MON).f64c(Infinity).mem(Op.f64Store, 3, off + 16 * s.field);
      fb.get(MON).f64c(-Infinity).mem(Op.f64Store, 3, off + 16 * s.field + 8);
    }
  }
  fb.i32c(0).set(n);
  fb.op(Op.block, VOID, Op.loop, VOID);
  // if (n >= cap) break
  fb.get(n).get(CAP).op(Op.i32GeS, Op.brIf).code.u32(1);
  // claim: w = counter; lo = w & 0xffff; hi = w >>> 16; none left when lo >= hi
  fb.get(c).atomic(Atomic.i32Load, 0).set(w);
  fb.get(w).i32c(0xffff).op(Op.i32And).set(lo);
  fb.get(w).i32c(16).op(Op.i32ShrU).set(hi);
  fb.get(lo).get(hi).op(Op.i32GeS, Op.brIf).code.u32(1);
  // cmpxchg(counter, w, thread ? w - 0x10000 : w + 1) != w: someone else claimed first, try again
  fb.get(c).get(w);
  fb.get(w).i32c(0x10000).op(Op.i32Sub).get(w).i32c(1).op(Op.i32Add).get(THREAD).op(Op.select);
  fb.atomic(Atomic.i32Cmpxchg, 0).get(w).op(Op.i32Ne, Op.brIf).code.u32(0);
  // the chunk: thread 1 took hi - 1, thread 0 took lo
  fb.get(hi).i32c(1).op(Op.i32Sub).get(lo).get(THREAD).op(Op.select).i32c(rows).op(Op.i32Mul).set(ya);
  fb.get(ya).i32c(rows).op(Op.i32Add).i32c(H).get(ya).i32c(rows).op(Op.i32Add).i32c(H).op(Op.i32LtS, Op.select).set(yb);
  for (let k = 0; k < nb; k++) bufOfPass(k);
  for (let j = 0; j < ns; j++) fb.get(TAB + j);
  fb.get(X0).get(X1).get(ya).get(yb).get(MON).get(SCR).op(Op.call).code.u32(IMPORTS.length + twoStepFn);
  // The halo of the rows just written, so the next pass (on either thread) reads a complete field.
  kg.stores.forEach((_, j) => emitHaloRefill(fb, () => bufOfPass(dOf[j]), TAB + j, ya, yb, geo, dtype, tmp));
  fb.get(n).i32c(1).op(Op.i32Add).set(n);
  fb.op(Op.br).code.u32(0);
  fb.op(Op.end, Op.end);
  // quiet: every stored field's min >= lo and max <= hi in both steps (NaN compares false); with the quiet check,
  // every lane of the slot <= R as unsigned
  fb.i32c(1).set(q);
  kg.stores.forEach((s, j) => {
    for (const off of [0, 2 * MONITOR_BYTES]) {
      if (quiet) {
        for (let lane = 0; lane < 4; lane++) {
          fb.get(q).get(MON).mem(Op.i32Load, 2, off + 16 * s.field + 4 * lane);
          fb.i32c(0).mem(Op.i32Load, 2, QUIET_AT + 8 * s.field + 4).op(Op.i32LeU, Op.i32And).set(q);
        }
        continue;
      }
      fb.get(q);
      fb.get(MON).mem(Op.f64Load, 3, off + 16 * s.field).get(LIM).mem(Op.f64Load, 3, 16 * j).op(Op.f64Ge, Op.i32And);
      fb.get(MON).mem(Op.f64Load, 3, off + 16 * s.field + 8).get(LIM).mem(Op.f64Load, 3, 16 * j + 8).op(Op.f64Le, Op.i32And);
      fb.set(q);
    }
  });
  fb.get(q).op(Op.i32Eqz, Op.if, VOID).get(c).i32c(0).atomic(Atomic.i32Store, 8).op(Op.end);
  // done += n; the thread completing the pass wakes the other
  fb.get(n).op(Op.if, VOID);
  fb.get(c).get(n).atomic(Atomic.i32Add, 4).get(n).op(Op.i32Add).i32c(chunks).op(Op.i32Eq, Op.if, VOID);
  fb.get(c).i32c(1).atomic(Atomic.notify, 4).op(Op.drop);
  fb.op(Op.end, Op.end);
  // wait until every chunk of the pass is done
  fb.i32c(0).set(spins);
  fb.op(Op.block, VOID, Op.loop, VOID);
  fb.get(c).atomic(Atomic.i32Load, 4).tee(w).i32c(chunks).op(Op.i32GeS, Op.brIf).code.u32(1);
  fb.get(spins).i32c(1).op(Op.i32Add).tee(spins).i32c(BLOCK_SPINS).op(Op.i32GtS, Op.if, VOID);
  fb.get(sleeps).i32c(1).op(Op.i32Add).set(sleeps);
  fb.get(CTL).get(THREAD).i32c(2).op(Op.i32Shl, Op.i32Add).get(sleeps).mem(Op.i32Store, 2, BLOCK_MAX_PASSES * 16);
  fb.get(CTL).atomic(Atomic.i32Load, BLOCK_ABORT_AT).op(Op.if, VOID).i32c(BLOCK_ABORTED).op(Op.return, Op.end);
  fb.get(c).get(w).op(Op.i64Const).code.i32(1_000_000);
  fb.atomic(Atomic.wait32, 4).op(Op.drop);
  fb.op(Op.end);
  fb.op(Op.br).code.u32(0);
  fb.op(Op.end, Op.end);
  // a pass that was not quiet ends the block without counting
  fb.get(c).atomic(Atomic.i32Load, 8).op(Op.i32Eqz, Op.if, VOID).get(p).op(Op.return, Op.end);
  fb.get(p).i32c(1).op(Op.i32Add).set(p);
  fb.op(Op.br).code.u32(0);
  fb.op(Op.end);
  // (not reached: the loop only leaves by return)
  fb.get(p);
  return fb;
}
