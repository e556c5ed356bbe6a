// Host side of the analysis worker: one thread, latest-text-wins per document. A request replaced by a newer one for
// the same document resolves as 'stale'; a run that is still busy after `patienceMs` while newer work waits is ended
// by terminating the thread (a fresh one starts). Must not import vscode.

import { Worker } from 'node:worker_threads';
import type { AnalysisRequest, AnalysisResponse, AnalysisResult } from './analysisWorker';

/** Loads the extension bundle inside the worker with an empty stand-in for 'vscode', then starts the worker loop. */
const BOOT = `
const Module = require('module');
const load = Module._load;
Module._load = function (request, ...rest) { return request === 'vscode' ? {} : load.call(this, request, ...rest); };
require(require('worker_threads').workerData.bundle).fluxelAnalysisWorker();
`;

interface Job {
  readonly key: string;
  readonly text: string;
  readonly resolve: (r: ThreadedResult | 'stale') => void;
}

/** A result and the thread that computed it ('host' only when the worker could not run). */
export type ThreadedResult = AnalysisResult & { readonly thread: 'worker' | 'host' };

export interface AnalysisClientOptions {
  /** The bundled extension file that exports `fluxelAnalysisWorker`; null runs the analysis in-process (tests, sources). */
  readonly bundle: string | null;
  /** In-process fallback, loaded lazily. */
  readonly inProcess: () => Promise<(text: string) => AnalysisResult>;
  readonly patienceMs?: number;
  readonly log?: (line: string) => void;
}

export class AnalysisClient {
  private worker: Worker | null = null;
  private nextId = 1;
  private running: { id: number; job: Job; started: number; stale: boolean } | null = null;
  private readonly queue = new Map<string, Job>();
  private watchdog: ReturnType<typeof setTimeout> | null = null;
  private disposed = false;
  private workerBroken = false;

  constructor(private readonly opts: AnalysisClientOptions) {}

  /** Analyses `text` for document `key`; resolves 'stale' when a newer text for the same key superseded it. */
  analyse(key: string, text: string): Promise<ThreadedResult | 'stale'> {
    return new Promise((resolve) => {
      this.queue.get(key)?.resolve('stale');
      this.queue.set(key, { key, text, resolve });
      if (this.running && this.running.job.key === key) this.running.stale = true;
      this.pump();
    });
  }

  /** Forgets a closed document. */
  forget(key: string): void {
    this.queue.get(key)?.resolve('stale');
    this.queue.delete(key);
    if (this.running && this.running.job.key === key) this.running.stale = true;
  }

  private pump(): void {
    if (this.disposed) return;
    if (this.running) {
      this.armWatchdog();
      return;
    }
    const next = this.queue.values().next();
    if (next.done) return;
    const job = next.value;
    this.queue.delete(job.key);
    const id = this.nextId++;
    this.running = { id, job, started: Date.now(), stale: false };
    const w = this.ensureWorker();
    if (!w) {
      void this.opts.inProcess().then((fn) => {
        // Yield once so a burst of edits collapses before the in-process run blocks.
        setImmediate(() => this.finish(id, { ...fn(job.text), thread: 'host' }));
      });
      return;
    }
    const req: AnalysisRequest = { id, text: job.text };
    w.postMessage(req);
  }

  private finish(id: number, r: ThreadedResult): void {
    const run = this.running;
    if (!run || run.id !== id) return;
    this.running = null;
    this.clearWatchdog();
    run.job.resolve(run.stale ? 'stale' : r);
    this.pump();
  }

  private ensureWorker(): Worker | null {
    if (this.worker) return this.worker;
    if (!this.opts.bundle || this.workerBroken) return null;
    try {
      const w = new Worker(BOOT, { eval: true, workerData: { bundle: this.opts.bundle } });
      w.on('message', (m: AnalysisResponse) => this.finish(m.id, { ...m, thread: 'worker' }));
      w.on('error', (err) => {
        this.opts.log?.(`analysis worker failed: ${err instanceof Error ? err.message : String(err)}; analysing in the host from now on`);
        this.workerBroken = true;
      });
      w.on('exit', () => {
        if (this.worker !== w) return;
        this.worker = null;
        const run = this.running;
        if (run) {
          this.running = null;
          // The run died with its thread: try again (in-process if the worker is broken).
          if (!run.stale) this.queue.set(run.job.key, this.queue.get(run.job.key) ?? run.job);
          else run.job.resolve('stale');
          this.pump();
        }
      });
      this.worker = w;
      return w;
    } catch (err) {
      this.opts.log?.(`analysis worker could not start: ${err instanceof Error ? err.message : String(err)}`);
      this.workerBroken = true;
      return null;
    }
  }

  private armWatchdog(): void {
    if (this.watchdog || !this.running || !this.worker || this.queue.size === 0) return;
    const patience = this.opts.patienceMs ?? 3000;
    const wait = Math.max(0, this.running.started + patience - Date.now());
    this.watchdog = setTimeout(() => {
      this.watchdog = null;
      const run = this.running;
      if (!run || this.queue.size === 0 || !this.worker) return;
      this.opts.log?.(`analysis of ${run.job.key} still busy after ${patience} ms with newer work waiting: restarting the worker`);
      run.stale = true;
      const w = this.worker;
      void w.terminate();
    }, wait);
  }

  private clearWatchdog(): void {
    if (this.watchdog) clearTimeout(this.watchdog);
    this.watchdog = null;
  }

  dispose(): void {
    this.disposed = true;
    this.clearWatchdog();
    for (const j of this.queue.values()) j.resolve('stale');
    this.queue.clear();
    this.running?.job.resolve('stale');
    this.running = null;
    void this.worker?.terminate();
    this.worker = null;
  }
}
