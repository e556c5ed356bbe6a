// The WebAssembly SIMD kernel backend: compiles a checked scheme's update and `expr` lets to f32x4 (Float32) or
// f64x2 (Float64) kernels with our own emitter, keeps a run's buffers in one shared WebAssembly.Memory, and shares
// the rows with a helper thread on large images. Field initialisers, blur lets and anything
// it cannot vectorise run on the JavaScript backend over the same buffers. Must not import vscode or the DOM.

import type { CheckedScheme } from '../../notation/scheme';
import { jsBackend, type JsBackend } from '../jsBackend';
import { canonicalScheme, hashText } from '../plan';
import type { CompiledScheme, DType, FieldArray, Geometry, GhostPlanLike, KernelBackend, KernelContext, StepLimits, StepMonitor } from '../types';
import { encodeModule, type FnBody } from './emit';
import { letGraph, Unsupported, updateGraph, type KernelGraph } from './ir';
import {
  BLOCK_ABORT_AT, BLOCK_ABORTED, BLOCK_CTL_BYTES, BLOCK_MAX_PASSES, blockLimitBytes, BUFFERS_AT, checkVectorisable, emitBlock, emitKernel, emitTwoStep, IMPORTS, MAX_FIELDS, MAX_PARAMS,
  MONITOR_AT, MONITOR_BYTES, PARAMS_AT, planTableBytes, QUIET_AT, rowFluxBytes, twoStepSlotBytes, type BufId,
} from './kernel';
import { wasmApi, type WasmMemory, type WasmModule } from './wasmApi';
import { coreCount, getHelper, preload, runningHelper, runShared, runWhole } from './threads';

/** Below this many pixels a second thread saves little (a step is a fraction of a millisecond, the barrier is not). */
const THREAD_MIN_PIXELS = 512 * 512;
const CACHE_LIMIT = 32;

export interface WasmOptions {
  /** Threads per run: 1, 2, or 'auto' (2 on large images when the machine has two cores). */
  readonly threads?: 1 | 2 | 'auto';
  /** Compute each face's flux once where the scheme allows (default); off only to check it changes nothing. */
  readonly reuseFluxes?: boolean;
  /** Two steps per pass where the run allows (default); off only to check it changes nothing. */
  readonly twoStep?: boolean;
  /** Rows in pairs where the kernel allows (default, kernel.ts); off only to check it changes nothing. */
  readonly rowPairs?: boolean;
}

const MATH_IMPORTS = { exp: Math.exp, log: Math.log, sin: Math.sin, cos: Math.cos, tanh: Math.tanh, sign: Math.sign, pow: Math.pow };

/**
 * Rows per chunk of the two-step pass: its band buffers (one per updated field) stay near 384 KB, in L2, and there
 * are at least 16 chunks, so the thread that finishes first waits for at most a short chunk of the other's.
 */
function twoStepRows(g: Geometry, dtype: DType, stores: number): number {
  const bytes = dtype === 'float32' ? 4 : 8;
  const fit = Math.floor((384 * 1024) / (g.pw * bytes * Math.max(1, stores))) - 4 * g.haloY;
  return Math.max(1, Math.min(64, Math.max(8, fit), Math.ceil(g.height / 16)));
}

/** A run's buffers: one shared memory, bump-allocated; kernels are instantiated over it per geometry. */
class Arena {
  readonly memory: WasmMemory;
  readonly f64: Float64Array;
  private next: number;
  /** Per thread: address of its row-flux scratch, followed by its two-step band buffers. */
  readonly scratch: readonly number[];
  /** Where the halo plan tables of the two-step pass go (one per updated field, written on first use). */
  private planNext: number;
  private readonly planEnd: number;
  /** The block driver's control words and its per-field limits (kernel.ts, emitBlock). */
  readonly ctl: number;
  readonly lim: number;
  readonly planTables = new Map<object, number>();
  readonly instances = new Map<string, { module: WasmModule; names: string[]; fns: ((...a: number[]) => void)[] }>();
  readonly prepared = new Map<object, { g: Geometry; inst: Prepared }>();
  /** Set when the quiet check refused a pass the full monitors found quiet: this run's passes use those from then on. */
  quietOff = false;
  constructor(readonly g: Geometry, readonly dtype: DType, count: number, readonly threads: number, stores: number) {
    const bytes = dtype === 'float32' ? 4 : 8;
    const size = align16(g.pw * g.ph * bytes);
    this.next = align16(BUFFERS_AT + (g.haloY * g.pw + g.haloX) * bytes + 16);
    // After the buffers: each thread's row of vertical fluxes (kernel.ts, reused fluxes) and band buffers.
    const perThread = align16(rowFluxBytes(g.pw, dtype) + stores * twoStepSlotBytes(g.pw, g.haloY, twoStepRows(g, dtype, stores), dtype));
    this.scratch = [0, 1].map(k => this.next + count * size + k * perThread);
    this.planNext = this.next + count * size + 2 * perThread;
    this.planEnd = this.planNext + stores * planTableBytes(g.ph, g.pw * g.ph - g.width * g.height);
    this.ctl = align16(this.planEnd);
    this.lim = this.ctl + BLOCK_CTL_BYTES;
    const pages = Math.ceil((this.lim + blockLimitBytes(stores) + 64) / 65536);
    this.memory = new (api().Memory)({ initial: pages, maximum: pages, shared: true });
    this.f64 = new Float64Array(this.memory.buffer, 0, BUFFERS_AT / 8);
    // The system maps pages on first write: do it now, with the buffers, rather than in the first steps (a fault
    // per 4 KB page, about 9000 of them at 2048²).
    const words = new Int32Array(this.memory.buffer);
    for (let i = 0; i < words.length; i += 1024) words[i] = 0;
  }
  /** The plan's table in this memory (row starts, then dst/src pairs), written once; null when out of room. */
  planTable(plan: { dst: Int32Array; src: Int32Array }): number | null {
    const hit = this.planTables.get(plan);
    if (hit !== undefined) return hit;
    const g = this.g, n = plan.dst.length, bytes = planTableBytes(g.ph, n);
    if (this.planNext + bytes > this.planEnd) return null;
    const at = this.planNext;
    this.planNext += bytes;
    const starts = new Int32Array(this.memory.buffer, at, g.ph + 1);
    const pairs = new Int32Array(this.memory.buffer, at + 4 * (g.ph + 1), 2 * n);
    // Entries are in row-major order of their destination (boundary.ts), so each padded row's entries are a range.
    let e = 0;
    for (let p = 0; p <= g.ph; p++) {
      while (e < n && Math.floor(plan.dst[e] / g.pw) < p) e++;
      starts[p] = e;
    }
    for (let k = 0; k < n; k++) {
      pairs[2 * k] = plan.dst[k];
      pairs[2 * k + 1] = plan.src[k];
    }
    this.planTables.set(plan, at);
    return at;
  }
  alloc(): FieldArray {
    const g = this.g, n = g.pw * g.ph;
    const a = this.dtype === 'float32' ? new Float32Array(this.memory.buffer, this.next, n) : new Float64Array(this.memory.buffer, this.next, n);
    this.next += align16(a.byteLength);
    arenas.set(a.buffer, this);
    return a;
  }
}

function align16(n: number): number {
  return Math.ceil(n / 16) * 16;
}

function api(): NonNullable<typeof wasmApi> {
  if (!wasmApi) throw new Error('no WebAssembly in this runtime');
  return wasmApi;
}

const arenas = new WeakMap<ArrayBufferLike, Arena>();

interface Plan {
  readonly update: KernelGraph;
  /** Per let: its graph, or why it runs in JavaScript (blur lets are always JavaScript, and not reported). */
  readonly lets: readonly (KernelGraph | null)[];
  readonly notes: readonly string[];
  readonly twoD: boolean;
}

interface Prepared {
  readonly fns: ((...a: number[]) => void)[];
  readonly bufs: BufId[][];
  readonly module: WasmModule;
  readonly names: string[];
  /** Identifies module and memory for the helper thread, which keeps one instance at a time. */
  readonly key: string;
}

class WasmCompiled implements CompiledScheme {
  private threadsUsed = 1;
  private readonly modules = new Map<string, { module: WasmModule; names: string[]; bufs: BufId[][] }>();
  constructor(readonly dtype: DType, readonly signature: string, private readonly js: CompiledScheme, private readonly plan: Plan, private readonly opts: WasmOptions) {}

  get backend(): string {
    const lanes = this.dtype === 'float32' ? 'f32x4' : 'f64x2';
    const notes = this.plan.notes.length ? `; ${this.plan.notes.join('; ')}` : '';
    return `wasm (${lanes}, ${this.threadsUsed} thread${this.threadsUsed > 1 ? 's' : ''}${notes})`;
  }

  allocateBuffers(g: Geometry, count: number): FieldArray[] | null {
    const t = this.opts.threads ?? 'auto';
    const threads = t === 1 ? 1 : t === 2 || (g.width * g.height >= THREAD_MIN_PIXELS && coreCount() >= 2) ? 2 : 1;
    let arena: Arena;
    try {
      arena = new Arena(g, this.dtype, count, threads, this.plan.update.stores.length);
    } catch {
      return null; // too large for one memory: the runner allocates ordinary arrays and the JavaScript kernels run
    }
    const out: FieldArray[] = [];
    for (let k = 0; k < count; k++) out.push(arena.alloc());
    // Where this geometry's module is compiled already (a run after the first), instantiate it now rather than in
    // the first (timed) step, and let a running helper thread do the same meanwhile. A first run compiles in its
    // first step, after its start frame is out (compiling here would delay that frame by tens of milliseconds).
    if (this.modules.has(geometryKey(g))) {
      const inst = this.instance(arena, g);
      const h = threads > 1 ? runningHelper() : null;
      if (h) preload(h, inst.key, inst.module, arena.memory, inst.names);
    }
    return out;
  }

  initField(index: number, g: Geometry, ctx: KernelContext): void {
    this.js.initField(index, g, ctx);
  }

  private lanes(): number {
    return this.dtype === 'float32' ? 4 : 2;
  }

  /** The arena holding every buffer of the context, or null (then the JavaScript kernels run). */
  private arenaOf(ctx: KernelContext): Arena | null {
    const a = arenas.get(ctx.cur[0]?.buffer);
    if (!a) return null;
    for (const list of [ctx.cur, ctx.next, ctx.lets]) for (const b of list) if (arenas.get(b.buffer) !== a) return null;
    return a;
  }

  /** Every step of a run asks for the same instance: kept on the arena, so it goes when the run's buffers go. */
  private instance(arena: Arena, g: Geometry): Prepared {
    const hit = arena.prepared.get(this);
    if (hit && hit.g === g) return hit.inst;
    const inst = this.prepare(arena, g);
    arena.prepared.set(this, { g, inst });
    return inst;
  }

  private prepare(arena: Arena, g: Geometry): Prepared {
    const key = geometryKey(g);
    let m = this.modules.get(key);
    if (!m) {
      const geo = { pw: g.pw, hx: g.haloX, hy: g.haloY };
      const pairs = this.opts.rowPairs !== false;
      const funcs: { name: string; body: FnBody }[] = [];
      const bufs: BufId[][] = [];
      const u = emitKernel(this.plan.update, this.dtype, geo, 'd', true, pairs);
      funcs.push({ name: 'u', body: u.body });
      bufs.push([...u.bufs]);
      this.plan.lets.forEach((lg, k) => {
        if (!lg) return;
        const e = emitKernel(lg, this.dtype, geo, 'l', false, pairs);
        funcs.push({ name: `l${k}`, body: e.body });
        bufs.push([...e.bufs]);
      });
      if (this.twoStepAllowed()) {
        const rows = twoStepRows(g, this.dtype, this.plan.update.stores.length);
        funcs.push({ name: 't2', body: emitTwoStep(this.plan.update, u.bufs, this.dtype, { ...geo, ph: g.ph, rows }, 0) });
        bufs.push([...u.bufs]);
        funcs.push({ name: 'tb', body: emitBlock(this.plan.update, u.bufs, this.dtype, { ...geo, ph: g.ph, rows }, funcs.length - 1) });
        bufs.push([...u.bufs]);
        // Float32: the same passes with the quiet check instead of the min/max monitors (writeQuietCheck), for
        // ranges from 0 (tbz) and others (tbq).
        for (const [mode, tag] of this.dtype === 'float32' ? ([['quiet-from-zero', 'z'], ['quiet', 'q']] as const) : []) {
          const q = emitKernel(this.plan.update, this.dtype, geo, 'd', mode, pairs);
          funcs.push({ name: `u${tag}`, body: q.body });
          bufs.push([...q.bufs]);
          funcs.push({ name: `t2${tag}`, body: emitTwoStep(this.plan.update, q.bufs, this.dtype, { ...geo, ph: g.ph, rows }, funcs.length - 1) });
          bufs.push([...q.bufs]);
          funcs.push({ name: `tb${tag}`, body: emitBlock(this.plan.update, q.bufs, this.dtype, { ...geo, ph: g.ph, rows }, funcs.length - 1, true) });
          bufs.push([...q.bufs]);
        }
      }
      const bytes = encodeModule({ imports: IMPORTS.map(name => ({ name, params: name === 'pow' ? [0x7c, 0x7c] : [0x7c], results: [0x7c] })), memory: { min: 1, max: 65536 }, funcs });
      m = { module: new (api().Module)(bytes), names: funcs.map(f => f.name), bufs };
      this.modules.set(key, m);
    }
    let inst = arena.instances.get(key);
    if (!inst) {
      const i = new (api().Instance)(m.module, { m: { ...MATH_IMPORTS, memory: arena.memory } });
      inst = { module: m.module, names: m.names, fns: m.names.map(n => i.exports[n] as (...a: number[]) => void) };
      arena.instances.set(key, inst);
    }
    return { ...inst, bufs: m.bufs, key: `${this.signature}/${key}/${arenaId(arena)}` };
  }

  private writeRunValues(arena: Arena, ctx: KernelContext): void {
    const f = arena.f64, p = PARAMS_AT / 8;
    f[p] = ctx.dt;
    f[p + 1] = ctx.t;
    for (let k = 0; k < ctx.params.length; k++) f[p + 2 + k] = ctx.params[k];
  }

  /**
   * Runs function `fn` over rows [ya, yb) in about 16 chunks: shared with the helper thread when the arena has two
   * threads, on this thread alone otherwise. The chunks are the same either way, so one thread and two give the
   * same bits (a chunk's first row computes its vertical fluxes itself instead of taking them from the row above).
   */
  private runBands(arena: Arena, g: Geometry, fn: number, bufArgs: number[], x0: number, x1: number, ya: number, yb: number, chunkRows?: number): void {
    const inst = this.instance(arena, g);
    const rows = yb - ya;
    const chunk = chunkRows ?? (rows >= 8 ? Math.max(4, Math.ceil(rows / 16)) : rows);
    const h = arena.threads > 1 && rows >= 8 ? getHelper() : null;
    const call = inst.fns[fn];
    if (!h) {
      for (let y = ya; y < yb; y += chunk) call(...bufArgs, x0, x1, y, Math.min(yb, y + chunk), MONITOR_AT, arena.scratch[0]);
      return;
    }
    runShared(h, inst.key, inst.module, arena.memory, inst.names, fn, call, [...bufArgs, x0, x1], ya, yb, chunk,
      { mon: MONITOR_AT, scratch: arena.scratch[0] }, { mon: MONITOR_AT + MONITOR_BYTES, scratch: arena.scratch[1] });
  }

  private bufArgs(bufs: readonly BufId[], ctx: KernelContext): number[] {
    return bufs.map(b => (b.kind === 'c' ? ctx.cur : b.kind === 'd' ? ctx.next : ctx.lets)[b.index].byteOffset);
  }

  computeLet(index: number, g: Geometry, ctx: KernelContext, extent: number): void {
    const arena = this.arenaOf(ctx);
    const lg = this.plan.lets[index];
    // As the JavaScript let kernels: 1d schemes extend rows only.
    const e = extent, ey = this.plan.twoD ? e : 0;
    if (!arena || !lg || g.width + 2 * e < this.lanes()) {
      this.js.computeLet(index, g, ctx, extent);
      return;
    }
    this.writeRunValues(arena, ctx);
    const inst = this.instance(arena, g);
    const fn = inst.names.indexOf(`l${index}`);
    this.runBands(arena, g, fn, this.bufArgs(inst.bufs[fn], ctx), -e, g.width + e, -ey, g.height + ey);
  }

  update(g: Geometry, ctx: KernelContext): void {
    const arena = this.arenaOf(ctx);
    if (!arena || g.width < this.lanes()) {
      this.js.update(g, ctx);
      return;
    }
    this.writeRunValues(arena, ctx);
    const inst = this.instance(arena, g);
    const f = arena.f64, M = ctx.monitor;
    // Kernels merge their rows' min/max into the slots; each thread has its own.
    for (const s of this.plan.update.stores) {
      for (let th = 0; th < 2; th++) {
        f[(MONITOR_AT + th * MONITOR_BYTES + 16 * s.field) / 8] = Infinity;
        f[(MONITOR_AT + th * MONITOR_BYTES + 16 * s.field + 8) / 8] = -Infinity;
      }
    }
    this.runBands(arena, g, 0, this.bufArgs(inst.bufs[0], ctx), 0, g.width, 0, g.height);
    this.threadsUsed = arena.threads > 1 && g.height >= 8 ? 2 : 1;
    this.readMonitors(f, MONITOR_AT, M);
  }

  /** Merges the two threads' monitor slots starting at `at` into M. */
  private readMonitors(f: Float64Array, at: number, M: StepMonitor): void {
    for (const s of this.plan.update.stores) {
      const mn = Math.min(f[(at + 16 * s.field) / 8], f[(at + MONITOR_BYTES + 16 * s.field) / 8]);
      const mx = Math.max(f[(at + 16 * s.field + 8) / 8], f[(at + MONITOR_BYTES + 16 * s.field + 8) / 8]);
      M.min[s.field] = mn;
      M.max[s.field] = mx;
      M.bad[s.field] = (mn - mn) + (mx - mx);
    }
  }

  private twoStep: boolean | undefined;
  /** Two steps per pass need no lets (they change every step) and no t in the updates (it is read once per call). */
  private twoStepAllowed(): boolean {
    this.twoStep ??= this.opts.twoStep !== false && this.plan.lets.length === 0 && this.plan.update.stores.length > 0 && !this.plan.update.graph.nodes.some(n => n.op === 't');
    return this.twoStep;
  }

  updatePasses(g: Geometry, ctx: KernelContext, passes: number, limits: StepLimits, ghosts: readonly GhostPlanLike[]): number {
    if (!this.twoStepAllowed()) return -1;
    const arena = this.arenaOf(ctx);
    if (!arena || g.width < this.lanes()) return -1;
    const stores = this.plan.update.stores;
    const tables: number[] = [];
    for (const s of stores) {
      const plan = ghosts[s.field];
      if (!plan || plan.kind !== 'gather' || !rowLocal(plan, g)) return -1;
      const at = arena.planTable(plan);
      if (at === null) return -1;
      tables.push(at);
    }
    const inst = this.instance(arena, g);
    const n = Math.max(1, Math.min(BLOCK_MAX_PASSES, Math.floor(passes)));
    this.writeRunValues(arena, ctx);
    // The quiet check where the limits allow it and it has not raised a false alarm in this run.
    const quiet = !arena.quietOff && inst.names.includes('tbq') ? this.writeQuietCheck(arena, limits) : null;
    const first = this.runBlock(arena, g, ctx, inst, quiet ?? 'tb', n, 0, limits, tables);
    if (!quiet || first < 0 || first >= n) return first;
    // The quiet check is stricter than the limits (values in [lo, 0) fail it): the full monitors decide the pass it
    // refused and, when they find it quiet, take over for the rest of the run.
    const rest = this.runBlock(arena, g, ctx, inst, 'tb', n - first, first, limits, tables);
    if (rest > 0) arena.quietOff = true;
    return first + rest;
  }

  /**
   * Writes the quiet check's (O, R) per stored field (kernel.ts, QUIET_AT) when every field's limits allow one:
   * hi at least 0 and lo at least a millionth of the range below 0 (the slack below an initial minimum of 0). The
   * check then accepts [max(lo, 0), hi] rounded inwards to Float32, a subset of what checkMonitors accepts.
   * Returns the block driver to use ('tbz' when every O is 0), or null.
   */
  private writeQuietCheck(arena: Arena, limits: StepLimits): 'tbz' | 'tbq' | null {
    const words = new Int32Array(arena.memory.buffer, QUIET_AT, 2 * MAX_FIELDS);
    let zero = true;
    for (const s of this.plan.update.stores) {
      const lo = limits.lo[s.field], hi = limits.hi[s.field];
      if (!(hi >= 0) || !(lo >= -1e-6 * (hi - lo))) return null;
      const o = f32BitsAtLeast(Math.max(lo, 0)), top = f32BitsAtMost(hi);
      if (top < o) return null;
      words[2 * s.field] = o;
      words[2 * s.field + 1] = top - o;
      zero &&= o === 0;
    }
    return zero ? 'tbz' : 'tbq';
  }

  /**
   * One block call of `n` passes from pass `from` (its parity says which buffers hold the fields), on this thread
   * or shared with the helper. Returns the quiet passes, or -1 when the block driver is not in the module.
   */
  private runBlock(arena: Arena, g: Geometry, ctx: KernelContext, inst: Prepared, name: string, n: number, from: number, limits: StepLimits, tables: readonly number[]): number {
    const fn = inst.names.indexOf(name);
    if (fn < 0) return -1;
    const stores = this.plan.update.stores;
    const lim = new Float64Array(arena.memory.buffer, arena.lim, 2 * stores.length);
    stores.forEach((s, j) => {
      lim[2 * j] = limits.lo[s.field];
      lim[2 * j + 1] = limits.hi[s.field];
    });
    // Per pass: the chunk counter (all chunks left: front 0, back `chunks`), none done, quiet; then the sleep counts.
    const rows = twoStepRows(g, this.dtype, stores.length), chunks = Math.ceil(g.height / rows);
    const words = new Int32Array(arena.memory.buffer, arena.ctl, BLOCK_CTL_BYTES / 4);
    for (let p = 0; p < n; p++) {
      words[4 * p] = chunks << 16;
      words[4 * p + 1] = 0;
      words[4 * p + 2] = 1;
    }
    words.fill(0, 4 * BLOCK_MAX_PASSES);
    const cur = this.bufArgs(inst.bufs[fn], ctx);
    const updated = new Set(stores.map(s => s.field));
    const swapped = inst.bufs[fn].map((b, k) => (!updated.has(b.index) || b.kind === 'l' ? cur[k] : (b.kind === 'c' ? ctx.next : ctx.cur)[b.index].byteOffset));
    // After an odd number of passes the fields are in the next buffers.
    const [even, odd] = from % 2 === 0 ? [cur, swapped] : [swapped, cur];
    const args = [...even, ...odd, ...tables, 0, g.width, n, arena.ctl, arena.lim];
    const call = inst.fns[fn] as unknown as (...a: number[]) => number;
    const mine = { mon: MONITOR_AT, scratch: arena.scratch[0] };
    const h = arena.threads > 1 && g.height >= 8 ? getHelper() : null;
    if (!h) {
      this.threadsUsed = 1;
      return call(...args, 0, 0x7fffffff, mine.mon, mine.scratch);
    }
    // The helper kept this thread waiting when this thread slept for it at all: it sleeps only after spinning about
    // a millisecond (a quarter of a call), while a chunk takes microseconds to a few tenths of a millisecond.
    const r = runWhole(h, inst.key, inst.module, arena.memory, inst.names, fn, call, args, chunks >> 1, mine,
      { mon: MONITOR_AT + MONITOR_BYTES, scratch: arena.scratch[1] }, arena.ctl + BLOCK_ABORT_AT, () => words[4 * BLOCK_MAX_PASSES] > 0);
    if (r.result === BLOCK_ABORTED) throw new Error('the helper thread failed to run a kernel');
    this.threadsUsed = 2;
    return r.result;
  }
}

const bitsF32 = new Float32Array(1), bitsI32 = new Int32Array(bitsF32.buffer);
/** The bits of the least Float32 >= x (x >= 0, finite or not). */
function f32BitsAtLeast(x: number): number {
  bitsF32[0] = x;
  return bitsF32[0] < x ? bitsI32[0] + 1 : bitsI32[0];
}
/** The bits of the greatest finite Float32 <= x (x >= 0). */
function f32BitsAtMost(x: number): number {
  bitsF32[0] = Math.min(x, 3.4028234663852886e38);
  return bitsF32[0] > x ? bitsI32[0] - 1 : bitsI32[0];
}

/** Modules are compiled per padded geometry (row stride and halo are baked into the code). */
function geometryKey(g: Geometry): string {
  return `${g.pw},${g.ph},${g.haloX},${g.haloY}`;
}

const rowLocalPlans = new WeakMap<object, boolean>();
/**
 * Whether a halo plan fills each padded row from rows the two-step pass has in its band buffer: column ghosts from
 * their own row, ghost rows above from the first hy rows, below from the last hy (reflect; periodic only in 1d).
 */
function rowLocal(plan: { dst: Int32Array; src: Int32Array }, g: Geometry): boolean {
  const hit = rowLocalPlans.get(plan);
  if (hit !== undefined) return hit;
  let ok = true;
  for (let k = 0; k < plan.dst.length && ok; k++) {
    const p = Math.floor(plan.dst[k] / g.pw), q = Math.floor(plan.src[k] / g.pw);
    if (p < g.haloY) ok = q >= g.haloY && q < 2 * g.haloY;
    else if (p >= g.haloY + g.height) ok = q >= g.height && q < g.height + g.haloY;
    else ok = q === p;
  }
  rowLocalPlans.set(plan, ok);
  return ok;
}

let nextArenaId = 1;
const arenaIds = new WeakMap<Arena, number>();
function arenaId(a: Arena): number {
  let id = arenaIds.get(a);
  if (id === undefined) arenaIds.set(a, (id = nextArenaId++));
  return id;
}

/** A scheme the SIMD backend does not take: the JavaScript kernels, with the reason in `backend`. */
class Fallback implements CompiledScheme {
  readonly backend: string;
  constructor(private readonly js: CompiledScheme, reason: string) {
    this.backend = `js (wasm fallback: ${reason})`;
  }
  get dtype(): DType {
    return this.js.dtype;
  }
  get signature(): string {
    return this.js.signature;
  }
  initField(index: number, g: Geometry, ctx: KernelContext): void {
    this.js.initField(index, g, ctx);
  }
  computeLet(index: number, g: Geometry, ctx: KernelContext, extent: number): void {
    this.js.computeLet(index, g, ctx, extent);
  }
  update(g: Geometry, ctx: KernelContext): void {
    this.js.update(g, ctx);
  }
}

function buildPlan(scheme: CheckedScheme, dtype: DType, opts: WasmOptions): Plan {
  if (!wasmApi) throw new Unsupported('no WebAssembly in this runtime', 0);
  if (scheme.fields.length > MAX_FIELDS) throw new Unsupported(`more than ${MAX_FIELDS} fields`, scheme.fields[MAX_FIELDS].range.start.line);
  if (scheme.params.length > MAX_PARAMS) throw new Unsupported(`more than ${MAX_PARAMS} params`, scheme.params[MAX_PARAMS].range.start.line);
  const update = updateGraph(scheme, opts);
  checkVectorisable(update, dtype);
  const notes: string[] = [];
  const lets = scheme.lets.map((l, k) => {
    if (l.kind !== 'expr') return null;
    try {
      const lg = letGraph(scheme, k, opts);
      checkVectorisable(lg, dtype);
      return lg;
    } catch (err) {
      if (!(err instanceof Unsupported)) throw err;
      notes.push(`let ${k + 1} in js: ${err.message}`);
      return null;
    }
  });
  return { update, lets, notes, twoD: scheme.dims === 2 };
}

export class WasmBackend implements KernelBackend {
  readonly name = 'wasm';
  private readonly cache = new Map<string, CompiledScheme>();
  constructor(private readonly opts: WasmOptions = {}, private readonly js: JsBackend = jsBackend) {}

  compile(scheme: CheckedScheme, opts: { dtype: DType }): CompiledScheme {
    const key = `${opts.dtype}\n${canonicalScheme(scheme)}`;
    const hit = this.cache.get(key);
    if (hit) {
      this.cache.delete(key);
      this.cache.set(key, hit);
      return hit;
    }
    const js = this.js.compile(scheme, opts);
    let compiled: CompiledScheme;
    try {
      const plan = buildPlan(scheme, opts.dtype, this.opts);
      compiled = new WasmCompiled(opts.dtype, `wasm-${opts.dtype}-${hashText(key)}`, js, plan, this.opts);
    } catch (err) {
      if (!(err instanceof Unsupported)) throw err;
      compiled = new Fallback(js, err.message);
    }
    this.cache.set(key, compiled);
    if (this.cache.size > CACHE_LIMIT) this.cache.delete(this.cache.keys().next().value as string);
    return compiled;
  }
}

/** The automatic choice: SIMD kernels where the scheme allows, two threads on large images. */
export const wasmBackend = new WasmBackend();
