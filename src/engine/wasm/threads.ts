// The helper thread that runs the second band of rows of a SIMD kernel over the same shared WebAssembly.Memory.
// One per process, started on first use and never keeping the process alive; commands go through a small shared
// mailbox (sequence number, function, arguments), so a step costs no message passing once the module is loaded.
// Loads node:worker_threads through process.getBuiltinModule, so this module imports nothing from Node itself and
// simply finds no helper where there are no threads.

import type { WasmMemory, WasmModule } from './wasmApi';

/** Mailbox slots (Int32). */
const SEQ = 0, ACK = 1, CFG = 2, FN = 3, NARGS = 4, ERROR = 5, STARTED = 6, ARGS = 8, SLOTS = 72;

/**
 * The helper's program, run with `eval`: no bundling or file lookup. It waits for a new sequence number (spinning
 * briefly first, since the next step usually follows within microseconds), loads a new module when the config
 * number changed, runs the function, and acknowledges.
 */
const WORKER_SOURCE = `
const { workerData, receiveMessageOnPort } = require('node:worker_threads');
const mail = new Int32Array(workerData.mail);
const port = workerData.port;
const math = { exp: Math.exp, log: Math.log, sin: Math.sin, cos: Math.cos, tanh: Math.tanh, sign: Math.sign, pow: Math.pow };
let fns = [], cfg = 0, seen = 0;
Atomics.store(mail, ${STARTED}, 1);
for (;;) {
  let s = Atomics.load(mail, ${SEQ});
  if (s === seen) {
    const until = performance.now() + 0.3;
    while (s === seen && performance.now() < until) s = Atomics.load(mail, ${SEQ});
  }
  while (s === seen) {
    Atomics.wait(mail, ${SEQ}, seen);
    s = Atomics.load(mail, ${SEQ});
  }
  seen = s;
  try {
    const c = Atomics.load(mail, ${CFG});
    if (c !== cfg) {
      let m, last = null;
      while ((m = receiveMessageOnPort(port)) !== undefined) last = m.message;
      if (last) {
        const inst = new WebAssembly.Instance(last.module, { m: { ...math, memory: last.memory } });
        fns = last.names.map(n => inst.exports[n]);
      }
      cfg = c;
    }
    const n = mail[${NARGS}], args = [];
    for (let k = 0; k < n; k++) args.push(mail[${ARGS} + k]);
    fns[mail[${FN}]](...args);
  } catch (e) {
    Atomics.store(mail, ${ERROR}, 1);
  }
  Atomics.store(mail, ${ACK}, s);
  Atomics.notify(mail, ${ACK});
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
  /** Set when the helper never started; the caller then runs every band itself. */
  broken: boolean;
}

let helper: Helper | null | undefined;

function builtin<T>(name: string): T | null {
  const p = (globalThis as { process?: { getBuiltinModule?: (n: string) => unknown } }).process;
  try {
    return (p?.getBuiltinModule?.(name) as T | undefined) ?? null;
  } catch {
    return null;
  }
}

/** Cores the machine offers (1 where unknown). */
export function coreCount(): number {
  const os = builtin<{ availableParallelism?: () => number; cpus(): unknown[] }>('node:os');
  if (!os) return 1;
  return os.availableParallelism ? os.availableParallelism() : os.cpus().length;
}

/** The process's helper thread, started on first call; null where worker threads are unavailable. */
export function getHelper(): Helper | null {
  if (helper !== undefined) return helper && !helper.broken ? helper : null;
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
    helper = { mail, post: m => port1.postMessage(m), holds: null, seq: 0, cfg: 0, broken: false };
  } catch {
    helper = null;
  }
  return helper;
}

/** Starts `fn` of the module (instantiated over `memory`) on the helper with int arguments; returns at once. */
export function startOnHelper(h: Helper, key: string, module: WasmModule, memory: WasmMemory, names: readonly string[], fn: number, args: readonly number[]): void {
  if (args.length > SLOTS - ARGS) throw new Error('too many kernel arguments for the helper thread');
  if (h.holds !== key) {
    h.post({ module, memory, names });
    h.cfg++;
    Atomics.store(h.mail, CFG, h.cfg);
    h.holds = key;
  }
  h.mail[FN] = fn;
  h.mail[NARGS] = args.length;
  for (let k = 0; k < args.length; k++) h.mail[ARGS + k] = args[k];
  h.seq++;
  Atomics.store(h.mail, SEQ, h.seq);
  Atomics.notify(h.mail, SEQ);
}

/**
 * Waits for the helper's acknowledgement: a short spin (a band of a step takes milliseconds), then sleeps.
 * Returns false when the helper never started within a few seconds (the caller then runs the band itself).
 */
export function waitForHelper(h: Helper): boolean {
  const m = h.mail;
  const until = performance.now() + 0.3;
  while (Atomics.load(m, ACK) !== h.seq && performance.now() < until) { /* spin */ }
  let waited = 0;
  for (;;) {
    const ack = Atomics.load(m, ACK);
    if (ack === h.seq) break;
    Atomics.wait(m, ACK, ack, 100);
    waited += 100;
    if (waited >= 10000 && Atomics.load(m, STARTED) === 0) {
      h.broken = true;
      return false;
    }
  }
  if (Atomics.load(m, ERROR) !== 0) {
    Atomics.store(m, ERROR, 0);
    throw new Error('the helper thread failed to run a kernel');
  }
  return true;
}
