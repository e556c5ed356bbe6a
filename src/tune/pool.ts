// A small pool of tuning worker threads (node:worker_threads) for sweeps and fits: every worker gets the scheme's
// source text and the pictures once, then settings one at a time from a shared queue; results come back by index,
// so the outcome never depends on which worker finished first. Must not import vscode or the DOM.
//
// Why not the engine's EngineWorker: it posts a copy of every field with every recorded frame, which a sweep
// that measures every step does not need; this pool sends back one metric curve per setting instead.
// The worker script is found like the engine's (dist/tune-worker.js next to the bundle, or bundled from
// src/tune/worker.ts with esbuild once per process when running from TypeScript sources).

import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { availableParallelism, tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { Curve, Setting } from './evaluate';
import type { FromTuneWorker, ToTuneWorker } from './protocol';

export const TUNE_WORKER_BUNDLE = 'tune-worker.js';

function thisFile(): string {
  if (typeof __filename === 'string' && __filename) return __filename;
  return fileURLToPath(import.meta.url);
}

let builtFromSource: string | null = null;

async function resolveScript(): Promise<string> {
  const here = dirname(thisFile());
  for (const candidate of [join(here, TUNE_WORKER_BUNDLE), join(here, '..', TUNE_WORKER_BUNDLE)]) {
    if (existsSync(candidate)) return candidate;
  }
  const entry = join(here, 'worker.ts');
  if (!existsSync(entry)) throw new Error(`tuning worker script not found next to ${here}; run \`npm run build\``);
  if (builtFromSource) return builtFromSource;
  const esbuildName = 'esbuild'; // computed, so bundlers do not pull esbuild into the shipped bundle
  const esbuild = (await import(esbuildName)) as typeof import('esbuild');
  const out = await esbuild.build({ entryPoints: [entry], bundle: true, platform: 'node', format: 'cjs', write: false, logLevel: 'silent', target: 'node20' });
  const file = join(mkdtempSync(join(tmpdir(), 'fluxel-tune-')), 'tune-worker.cjs');
  writeFileSync(file, out.outputFiles[0].contents);
  builtFromSource = file;
  return file;
}

/** Default pool size: every core the machine offers (2 on the project's machines). */
export function defaultWorkers(): number {
  return Math.max(1, availableParallelism());
}

export class TunePool {
  private workers: Worker[] = [];
  private nextId = 1;

  private constructor(private readonly setupMsg: ToTuneWorker.Setup) {}

  static async open(size: number, setup: Omit<ToTuneWorker.Setup, 'type'>): Promise<TunePool> {
    if (!(Number.isInteger(size) && size >= 1)) throw new Error(`a pool needs at least one worker, got ${size}`);
    const pool = new TunePool({ type: 'setup', ...setup });
    const script = await resolveScript();
    for (let i = 0; i < size; i++) {
      const w = new Worker(script);
      w.postMessage(pool.setupMsg);
      pool.workers.push(w);
    }
    return pool;
  }

  get size(): number {
    return this.workers.length;
  }

  /**
   * Evaluates every setting, at most one per worker at a time; `onResult` is called as each finishes
   * (in completion order), the returned array is in the order of `settings`. The first failure rejects.
   * With `gradient` names each setting runs in the engine's sensitivity mode and its curve carries the gradient.
   */
  evaluate(settings: readonly Setting[], onResult?: (index: number, curve: Curve) => void, gradient?: readonly string[]): Promise<Curve[]> {
    const results: Curve[] = new Array(settings.length);
    if (settings.length === 0) return Promise.resolve(results);
    return new Promise<Curve[]>((resolve, reject) => {
      let next = 0;
      let done = 0;
      let failed = false;
      const cleanups: (() => void)[] = [];
      const finish = (err?: Error) => {
        for (const c of cleanups) c();
        if (err) reject(err);
        else resolve(results);
      };
      const feed = (w: Worker, ids: Map<number, number>) => {
        if (next >= settings.length || failed) return;
        const index = next++;
        const id = this.nextId++;
        ids.set(id, index);
        const msg: ToTuneWorker.Eval = { type: 'eval', id, setting: settings[index], ...(gradient ? { gradient } : {}) };
        w.postMessage(msg);
      };
      for (const w of this.workers) {
        const ids = new Map<number, number>();
        const onMessage = (m: FromTuneWorker.Type) => {
          const index = ids.get(m.id);
          if (index === undefined || failed) return;
          ids.delete(m.id);
          if (m.type === 'error') {
            failed = true;
            finish(new Error(m.message));
            return;
          }
          results[index] = { values: m.values, bestStep: m.bestStep, best: m.best, status: m.status, ...(m.gradient ? { gradient: m.gradient } : {}) };
          done++;
          onResult?.(index, results[index]);
          if (done === settings.length) finish();
          else feed(w, ids);
        };
        const onError = (err: Error) => {
          if (failed) return;
          failed = true;
          finish(err);
        };
        w.on('message', onMessage);
        w.on('error', onError);
        cleanups.push(() => {
          w.off('message', onMessage);
          w.off('error', onError);
        });
        feed(w, ids);
      }
    });
  }

  async close(): Promise<void> {
    const ws = this.workers;
    this.workers = [];
    await Promise.all(ws.map((w) => w.terminate()));
  }
}
