// Client side of the engine worker: spawns the thread, starts runs, delivers progress/frames/warnings to callbacks,
// and cancels through shared memory (seen within one step) or, as a last resort, by terminating the thread.
// Must not import vscode or the DOM.
//
// Where the worker script comes from (a hard-won choice; pros and cons):
// - In the bundle, esbuild emits src/engine/worker/workerMain.ts as dist/engine-worker.js beside the other bundles;
//   we find it next to the running file. No build step at run time, nothing to go stale.
// - When running from TypeScript sources (vitest), there is no .js to spawn and Node 20 cannot run .ts in a worker,
//   so workerMain.ts is bundled once per process with esbuild (a dev dependency) into a temporary file.
//   This costs ~0.1 s once, and tests exercise the very same entry module as the bundle.
// - An explicit `script` option overrides both.

import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { CheckedScheme } from '../../notation/scheme';
import type { RunResult } from '../run';
import type { FrameStats, RunWarning } from '../types';
import type { FieldSnapshot, FromWorker, ToWorker, WorkerRunOptions } from './protocol';

export const WORKER_BUNDLE_NAME = 'engine-worker.js';

function thisFile(): string {
  // CommonJS bundles define __filename; ES modules (vitest, ESM bundles) have import.meta.url.
  if (typeof __filename === 'string' && __filename) return __filename;
  return fileURLToPath(import.meta.url);
}

let builtFromSource: string | null = null;

async function resolveWorkerScript(explicit?: string): Promise<string> {
  if (explicit) return explicit;
  const here = dirname(thisFile());
  for (const candidate of [join(here, WORKER_BUNDLE_NAME), join(here, '..', WORKER_BUNDLE_NAME)]) {
    if (existsSync(candidate) && candidate.endsWith('.js')) return candidate;
  }
  const entry = join(here, 'workerMain.ts');
  if (!existsSync(entry)) throw new Error(`engine worker script not found next to ${here}`);
  if (builtFromSource) return builtFromSource;
  // A computed specifier keeps bundlers from pulling esbuild into the shipped bundle.
  const esbuildName = 'esbuild';
  const esbuild = (await import(esbuildName)) as typeof import('esbuild');
  const out = await esbuild.build({ entryPoints: [entry], bundle: true, platform: 'node', format: 'cjs', write: false, logLevel: 'silent', target: 'node20' });
  const file = join(mkdtempSync(join(tmpdir(), 'fluxel-worker-')), 'engine-worker.cjs');
  writeFileSync(file, out.outputFiles[0].contents);
  builtFromSource = file;
  return file;
}

export interface WorkerRunCallbacks {
  onProgress?(step: number, total: number): void;
  onFrame?(stats: FrameStats, fields: Record<string, FieldSnapshot>): void;
  onWarning?(w: RunWarning): void;
}

export interface WorkerRunOutcome {
  readonly result: RunResult;
  readonly fields: Record<string, FieldSnapshot>;
}

export interface WorkerRunHandle {
  readonly runId: number;
  readonly done: Promise<WorkerRunOutcome>;
  /** Asks the worker to stop after its current step; `done` then resolves with status 'cancelled'. */
  cancel(): void;
}

/** One worker thread that runs one scheme at a time; kernel caches survive between runs. */
export class EngineWorker {
  private worker: Worker | null = null;
  private starting: Promise<Worker> | null = null;
  private nextRunId = 1;
  private readonly pending = new Map<number, { cb: WorkerRunCallbacks; resolve(o: WorkerRunOutcome): void; reject(e: Error): void; flag: Int32Array }>();

  constructor(private readonly opts: { script?: string } = {}) {}

  private async ensure(): Promise<Worker> {
    if (this.worker) return this.worker;
    if (!this.starting) {
      this.starting = resolveWorkerScript(this.opts.script).then(script => {
        const w = new Worker(script);
        w.on('message', (m: FromWorker.Type) => this.onMessage(m));
        w.on('error', err => this.failAll(err instanceof Error ? err : new Error(String(err))));
        w.on('exit', code => {
          this.worker = null;
          this.starting = null;
          this.failAll(new Error(`engine worker exited (code ${code})`));
        });
        this.worker = w;
        return w;
      });
    }
    return this.starting;
  }

  private failAll(err: Error): void {
    for (const p of this.pending.values()) p.reject(err);
    this.pending.clear();
  }

  private onMessage(m: FromWorker.Type): void {
    const p = this.pending.get(m.runId);
    if (!p) return; // a run we no longer wait for
    switch (m.type) {
      case 'progress': p.cb.onProgress?.(m.step, m.total); break;
      case 'frame': p.cb.onFrame?.(m.stats, m.fields); break;
      case 'warning': p.cb.onWarning?.(m.warning); break;
      case 'done': this.pending.delete(m.runId); p.resolve({ result: m.result, fields: m.fields }); break;
      case 'error': this.pending.delete(m.runId); p.reject(new Error(m.message)); break;
    }
  }

  /** Starts a run from a checked scheme (sent as plain data) or from source text (checked inside the worker). */
  start(input: { scheme: CheckedScheme } | { source: string }, options: WorkerRunOptions, cb: WorkerRunCallbacks = {}): WorkerRunHandle {
    const runId = this.nextRunId++;
    const cancel = new SharedArrayBuffer(4);
    const flag = new Int32Array(cancel);
    const done = new Promise<WorkerRunOutcome>((resolve, reject) => {
      this.pending.set(runId, { cb, resolve, reject, flag });
    });
    this.ensure().then(
      w => {
        const msg: ToWorker.Start = { type: 'start', runId, options, cancel, ...input };
        w.postMessage(msg);
      },
      err => {
        const p = this.pending.get(runId);
        this.pending.delete(runId);
        p?.reject(err instanceof Error ? err : new Error(String(err)));
      },
    );
    return { runId, done, cancel: () => Atomics.store(flag, 0, 1) };
  }

  /** Stops the thread at once (for a step that takes too long); pending runs reject. */
  async terminate(): Promise<void> {
    const w = this.worker ?? (this.starting ? await this.starting.catch(() => null) : null);
    this.worker = null;
    this.starting = null;
    if (w) await w.terminate();
  }
}
