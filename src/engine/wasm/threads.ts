// The helper thread that shares the rows of a SIMD kernel over the same shared WebAssembly.Memory: one per process,
// started on first use, never keeping the process alive, driven through a small shared mailbox (no messages per step).
// Loads node:worker_threads through process.getBuiltinModule, so it imports nothing from Node and simply finds no
// helper where there are no threads.

import type { WasmMemory, WasmModule } from './wasmApi';

/** Mailbox slots (Int32). */
const SEQ = 0, STATE = 1, CFG = 2, FN = 3, NARGS = 4, ERROR = 5, CTR = 6, YA = 7, YB = 8, ROWS = 9, MON = 10, SCRATCH = 11, MODE = 12, ABORT = 13, ARGS = 14, SLOTS = 80;
/**
 * Job modes: the helper claims chunks of rows itself (ROWS_MODE), calls the function once and it claims them
 * (WHOLE_MODE), or only loads the module it was offered (LOAD_MODE, posted when a run's buffers are made).
 */
const ROWS_MODE = 0, WHOLE_MODE = 1, LOAD_MODE = 2;

/**
 * The chunk counter packs the next chunk from the front (low 16 bits) and the end of the chunks left (high 16 bits);
 * the caller claims from the front, the helper from the back, each with a compare-and-swap. Return -1 when none is left.
 */
function claimFront(m: Int32Array): number {
  for (;;) {
    const w = Atomics.load(m, CTR);
    const lo = w & 0xffff, hi = w >>> 16;
    if (lo >= hi) return -1;
    if (Atomics.compareExchange(m, CTR, w, (lo + 1) | (hi << 16)) === w) return lo;
  }
}

/**
 * After a job the helper spins this long for the next before sleeping: an idle virtual core can take milliseconds
 * to wake (measured here: 0.05-3 ms), longer than the gaps between the jobs of a run.
 */
const HELPER_SPIN_MS = 2;
/** After loading a run's module (preload), the first job of the run may take longer to come: spin this long. */
const PRELOAD_SPIN_MS = 50;

/** Job states: the caller cancels a job the helper has not picked up by the time the caller ran out of chunks. */
const PENDING = 1, RUNNING = 2, DONE = 3, CANCELLED = 4;

/**
 * The helper's program, run with `eval`: no bundling or file lookup. It waits for a new sequence number (spinning
 * briefly first, since the next step usually follows within microseconds), claims the job unless it was cancelled,
 * loads a new module when the config number changed, takes chunks of rows from the shared counter until none are
 * left, and reports done.
 */
const WORKER_SOURCE = `
const { workerData, receiveMessageOnPort } = require('node:worker_threads');
function claimBack(m) {
  for (;;) {
    const w = Atomics.load(m, ${CTR});
    const lo = w & 0xffff, hi = w >>> 16;
    if (lo >= hi) return -1;
    if (Atomics.compareExchange(m, ${CTR}, w, lo | ((hi - 1) << 16)) === w) return hi - 1;
  }
}
const mail = new Int32Array(workerData.mail);
const port = workerData.port;
const math = { exp: Math.exp, log: Math.log, sin: Math.sin, cos: Math.cos, tanh: Math.tanh, sign: Math.sign, pow: Math.pow };
let fns = [], cfg = 0, seen = 0, mem32 = null, spinMs = ${HELPER_SPIN_MS};
for (;;) {
  let s = Atomics.load(mail, ${SEQ});
  if (s === seen) {
    const until = performance.now() + spinMs;
    while (s === seen && performance.now() < until) s = Atomics.load(mail, ${SEQ});
  }
  while (s === seen) {
    Atomics.wait(mail, ${SEQ}, seen);
    s = Atomics.load(mail, ${SEQ});
  }
  seen = s;
  if (Atomics.compareExchange(mail, ${STATE}, ${PENDING}, ${RUNNING}) !== ${PENDING}) continue;
  try {
    const c = Atomics.load(mail, ${CFG});
    if (c !== cfg) {
      let m, last = null;
      while ((m = receiveMessageOnPort(port)) !== undefined) last = m.message;
      if (last) {
        const inst = new WebAssembly.Instance(last.module, { m: { ...math, memory: last.memory } });
        fns = last.names.map(n => inst.exports[n]);
        mem32 = new Int32Array(last.memory.buffer);
      }
      cfg = c;
    }
    const fn = fns[mail[${FN}]], n = mail[${NARGS}], args = [];
    for (let k = 0; k < n; k++) args.push(mail[${ARGS} + k]);
    const ya = mail[${YA}], yb = mail[${YB}], rows = mail[${ROWS}], mon = mail[${MON}], scratch = mail[${SCRATCH}];
    // After loading a run's module the first job comes once the run is set up (its first frame, the monitors'
    // analysis): wait for it spinning a while longer, so the run's first steps find this thread awake.
    spinMs = mail[${MODE}] === ${LOAD_MODE} ? ${PRELOAD_SPIN_MS} : ${HELPER_SPIN_MS};
    if (mail[${MODE}] === ${LOAD_MODE}) { /* loaded */ }
    else if (mail[${MODE}] === ${WHOLE_MODE}) fn(...args, mon, scratch);
    // Chunks from the back (the caller takes them from the front): each thread keeps to its end of the image from
    // step to step, and so to the rows its cache holds.
    else for (let k; (k = claimBack(mail)) >= 0;) fn(...args, ya + k * rows, Math.min(yb, ya + (k + 1) * rows), mon, scratch);
  } catch (e) {
    Atomics.store(mail, ${ERROR}, 1);
    // A function sharing its work (WHOLE_MODE) may have the caller waiting for this thread's chunks: release it.
    if (mail[${MODE}] === ${WHOLE_MODE} && mem32) Atomics.store(mem32, mail[${ABORT}] >> 2, 1);
  }
  Atomics.store(mail, ${STATE}, ${DONE});
  Atomics.notify(mail, ${STATE});
}
`;

interface WorkerThreadsModule {
  Worker: new (code: string, opts: { eval: boolean; workerData: unknown; transferList: unknown[] }) => { unref(): void };
  MessageChannel: new () => { port1: { postMessage(m: unknown): void; unref?(): void }; port2: unknown };
}

export interface Helper {
  readonly mail: Int32Array;
  post(msg: unknown): void;
  /** The module/memory pair the helper has instantiated (by our key). */
  holds: string | null;
  seq: number;
  cfg: number;
  /** Jobs in a row where the helper was no help (never came, or kept the caller waiting longer than it worked). */
  slow: number;
  /** Until this time (performance.now()) the caller runs every chunk alone: the helper gets no CPU, it seems. */
  soloUntil: number;
}

/** After this many slow jobs in a row the caller works alone for SOLO_MS, then tries the helper again. */
const SLOW_JOBS = 3, SOLO_MS = 10;
/** A sleeping helper takes up to about this long to wake (measured: 0.05-0.3 ms); shorter jobs may end first. */
const WAKE_MS = 0.5;
/** How long making a run's buffers waits for the helper to load the run's module (see preload). */
const PRELOAD_WAIT_MS = 5;

let helper: Helper | null | undefined;
let forceHelper = false;

/** For tests: make the helper run half of every kernel call (normally it takes what it can, possibly nothing). */
export function forceHelperShare(on: boolean): void {
  forceHelper = on;
}

function builtin<T>(name: string): T | null {
  const p = (globalThis as { process?: { getBuiltinModule?: (n: string) => unknown } }).process;
  try {
    return (p?.getBuiltinModule?.(name) as T | undefined) ?? null;
  } catch {
    return null;
  }
}

function noteHelper(h: Helper, slow: boolean, now: number): void {
  if (forceHelper) return;
  h.slow = slow ? h.slow + 1 : 0;
  if (h.slow >= SLOW_JOBS) {
    h.slow = 0;
    h.soloUntil = now + SOLO_MS;
  }
}

/** Cores the machine offers (1 where unknown). */
export function coreCount(): number {
  const os = builtin<{ availableParallelism?: () => number; cpus(): unknown[] }>('node:os');
  if (!os) return 1;
  return os.availableParallelism ? os.availableParallelism() : os.cpus().length;
}

/** The process's helper thread if it was started already (else null: starting one takes a few milliseconds). */
export function runningHelper(): Helper | null {
  return helper ?? null;
}

/** The process's helper thread, started on first call; null where worker threads are unavailable. */
export function getHelper(): Helper | null {
  if (helper !== undefined) return helper;
  helper = null;
  const wt = builtin<WorkerThreadsModule>('node:worker_threads');
  if (!wt || typeof SharedArrayBuffer === 'undefined') return null;
  try {
    const mail = new Int32Array(new SharedArrayBuffer(SLOTS * 4));
    const { port1, port2 } = new wt.MessageChannel();
    const worker = new wt.Worker(WORKER_SOURCE, { eval: true, workerData: { mail: mail.buffer, port: port2 }, transferList: [port2] });
    // Neither the thread nor its port may keep a finished CLI run (or a test process) alive.
    worker.unref();
    port1.unref?.();
    helper = { mail, post: m => port1.postMessage(m), holds: null, seq: 0, cfg: 0, slow: 0, soloUntil: 0 };
  } catch {
    helper = null;
  }
  return helper;
}

/**
 * Runs `call` (this thread's instance of function `fn`) over rows [ya, yb) in chunks shared with the helper through
 * an atomic counter, so a helper that is late (a busy machine) costs nothing: the caller takes every chunk left and
 * cancels the job if the helper has not claimed it. Each chunk computes exactly what one call over all rows would,
 * so the result does not depend on who ran which chunk. On a machine whose other core is busy the helper only
 * steals time from the caller: after a few jobs where it never came or kept the caller waiting longer than the
 * caller worked, the caller works alone for a while. Returns how many threads took part.
 */
export function runShared(
  h: Helper, key: string, module: WasmModule, memory: WasmMemory, names: readonly string[], fn: number,
  call: (...a: number[]) => void, args: readonly number[], ya: number, yb: number, rows: number,
  mine: { mon: number; scratch: number }, theirs: { mon: number; scratch: number },
): number {
  const m = h.mail;
  if (args.length > SLOTS - ARGS) throw new Error('too many kernel arguments for the helper thread');
  if (!forceHelper && h.soloUntil > 0) {
    if (performance.now() < h.soloUntil) {
      for (let y = ya; y < yb; y += rows) call(...args, y, Math.min(yb, y + rows), mine.mon, mine.scratch);
      return 1;
    }
    h.soloUntil = 0;
  }
  settle(h);
  offer(h, key, module, memory, names);
  m[MODE] = ROWS_MODE;
  m[FN] = fn;
  m[NARGS] = args.length;
  for (let k = 0; k < args.length; k++) m[ARGS + k] = args[k];
  m[YA] = ya;
  m[YB] = yb;
  m[ROWS] = rows;
  m[MON] = theirs.mon;
  m[SCRATCH] = theirs.scratch;
  const chunks = Math.ceil((yb - ya) / rows);
  if (chunks > 0x7fff) throw new Error('too many chunks of rows for the helper thread');
  Atomics.store(m, CTR, chunks << 16);
  publish(h);
  if (forceHelper) {
    // Test mode: this thread runs the first half itself and waits for the helper to run the rest.
    const half = chunks >> 1;
    for (let n = 0, k; n < half && (k = claimFront(m)) >= 0; n++) call(...args, ya + k * rows, Math.min(yb, ya + (k + 1) * rows), mine.mon, mine.scratch);
    while (Atomics.load(m, STATE) === PENDING) Atomics.wait(m, STATE, PENDING, 50);
  }
  const t0 = performance.now();
  for (let k; (k = claimFront(m)) >= 0;) call(...args, ya + k * rows, Math.min(yb, ya + (k + 1) * rows), mine.mon, mine.scratch);
  const t1 = performance.now();
  if (Atomics.compareExchange(m, STATE, PENDING, CANCELLED) === PENDING) {
    noteHelper(h, true, t1);
    return 1;
  }
  // The helper is on its last chunk: a short spin, then sleep until it reports.
  awaitHelper(m, t1 + 0.2);
  noteHelper(h, performance.now() - t1 > t1 - t0, t1);
  throwIfHelperFailed(m);
  return 2;
}

/** Hands the helper the module and memory it must call into (a message, read when the config number changes). */
function offer(h: Helper, key: string, module: WasmModule, memory: WasmMemory, names: readonly string[]): void {
  if (h.holds === key) return;
  h.post({ module, memory, names });
  h.cfg++;
  Atomics.store(h.mail, CFG, h.cfg);
  h.holds = key;
}

/**
 * Runs a function that shares its work with the helper itself (the block driver of kernel.ts): this thread calls
 * `call(...args, 0, cap, mine)` while the helper calls the same function with `(...args, 1, unlimited, theirs)`.
 * The function must finish its work alone when the helper never comes; then the job is cancelled. `helperSlow`
 * (asked after the call) tells whether the helper kept this thread waiting, which counts towards working alone for a
 * while, as in runShared. Returns the function's result and how many threads took part.
 */
export function runWhole(
  h: Helper, key: string, module: WasmModule, memory: WasmMemory, names: readonly string[], fn: number,
  call: (...a: number[]) => number, args: readonly number[], half: number,
  mine: { mon: number; scratch: number }, theirs: { mon: number; scratch: number }, abortAt: number, helperSlow: () => boolean,
): { result: number; threads: number } {
  const m = h.mail, ALL = 0x7fffffff;
  if (args.length + 2 > SLOTS - ARGS) throw new Error('too many kernel arguments for the helper thread');
  if (!forceHelper && h.soloUntil > 0) {
    if (performance.now() < h.soloUntil) return { result: call(...args, 0, ALL, mine.mon, mine.scratch), threads: 1 };
    h.soloUntil = 0;
  }
  settle(h);
  const fresh = h.holds !== key;
  offer(h, key, module, memory, names);
  m[MODE] = WHOLE_MODE;
  m[FN] = fn;
  m[NARGS] = args.length + 2;
  for (let k = 0; k < args.length; k++) m[ARGS + k] = args[k];
  m[ARGS + args.length] = 1;
  m[ARGS + args.length + 1] = ALL;
  m[MON] = theirs.mon;
  m[SCRATCH] = theirs.scratch;
  m[ABORT] = abortAt;
  publish(h);
  // Test mode: wait for the helper, then take at most half the chunks of each pass.
  if (forceHelper) while (Atomics.load(m, STATE) === PENDING) Atomics.wait(m, STATE, PENDING, 50);
  const t0 = performance.now();
  let result: number, failure: unknown = null;
  try {
    result = call(...args, 0, forceHelper ? half : ALL, mine.mon, mine.scratch);
  } catch (err) {
    // The helper may be waiting for this thread's chunks: release it before reporting.
    Atomics.store(new Int32Array(memory.buffer), abortAt >> 2, 1);
    result = 0;
    failure = err;
  }
  const t1 = performance.now();
  if (Atomics.compareExchange(m, STATE, PENDING, CANCELLED) === PENDING) {
    if (failure) throw failure;
    // A helper that had to load a new module first, or a call too short to wake it, says nothing about the machine.
    if (!fresh && t1 - t0 > WAKE_MS) noteHelper(h, true, t1);
    return { result, threads: 1 };
  }
  // The helper passes through what is left (the work is done): a short spin, then sleep until it reports.
  awaitHelper(m, t1 + 1);
  noteHelper(h, helperSlow(), t1);
  if (failure) throw failure;
  throwIfHelperFailed(m);
  return { result, threads: 2 };
}

/** Makes the job written into the mailbox pending and wakes the helper for it. */
function publish(h: Helper): void {
  const m = h.mail;
  Atomics.store(m, STATE, PENDING);
  h.seq++;
  Atomics.store(m, SEQ, h.seq);
  Atomics.notify(m, SEQ);
}

/** Waits until the helper has finished its job: spinning until `spinUntil` (performance.now()), then sleeping. */
function awaitHelper(m: Int32Array, spinUntil: number): void {
  while (Atomics.load(m, STATE) === RUNNING && performance.now() < spinUntil) { /* spin */ }
  while (Atomics.load(m, STATE) === RUNNING) Atomics.wait(m, STATE, RUNNING, 1000);
}

/** Reports (once) a kernel failure the helper flagged in its last job. */
function throwIfHelperFailed(m: Int32Array): void {
  if (Atomics.load(m, ERROR) === 0) return;
  Atomics.store(m, ERROR, 0);
  throw new Error('the helper thread failed to run a kernel');
}

/** Before posting a job: a load job still pending is cancelled (the next job loads), one running is waited for. */
function settle(h: Helper): void {
  const m = h.mail;
  if (Atomics.compareExchange(m, STATE, PENDING, CANCELLED) === PENDING) return;
  awaitHelper(m, 0);
}

/**
 * Offers the helper a module and memory ahead of the first job (when a run's buffers are made), wakes it to
 * instantiate them, and waits (at most PRELOAD_WAIT_MS) until it has: an idle virtual core can take milliseconds to
 * wake, and a run's first steps should not go without the helper for that long. The helper then spins for the
 * first job.
 */
export function preload(h: Helper, key: string, module: WasmModule, memory: WasmMemory, names: readonly string[]): void {
  if (h.holds === key) return;
  settle(h);
  offer(h, key, module, memory, names);
  const m = h.mail;
  m[MODE] = LOAD_MODE;
  publish(h);
  const until = performance.now() + PRELOAD_WAIT_MS;
  for (let left = PRELOAD_WAIT_MS; Atomics.load(m, STATE) !== DONE && left > 0; left = until - performance.now()) {
    Atomics.wait(m, STATE, Atomics.load(m, STATE), left);
  }
}
