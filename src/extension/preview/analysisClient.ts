// Client of the live run's analysis thread: starts it lazily, matches answers to requests by id, and rejects
// pending requests when the thread dies (the next request starts a new one).
// Must not import vscode or the DOM.
//
// Where the thread's script comes from: in the bundle, dist/preview-analysis.js sits beside dist/extension.js.
// From TypeScript sources (vitest, the bench), analysisWorker.ts is bundled once per process with esbuild into a
// temporary file, the same choice (and the same reasons) as the engine worker client.

import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { Worker } from 'node:worker_threads';
import type { WireVerdict } from '../../protocol/preview';
import { SUPERSEDED, type AnyPicture, type ApproximatesResult, type CompareResult, type FrozenAt, type FromAnalysis, type ImpulseResult, type InfluenceResult, type KnobSet, type Picture, type SpectrumResult, type ToAnalysis, type WeightsResult } from './analysisProtocol';

export const ANALYSIS_BUNDLE_NAME = 'preview-analysis.js';

function thisFile(): string {
  if (typeof __filename === 'string' && __filename) return __filename;
  return fileURLToPath(import.meta.url);
}

let builtFromSource: string | null = null;

async function resolveScript(explicit?: string): Promise<string> {
  if (explicit) return explicit;
  const here = dirname(thisFile());
  for (const c of [join(here, ANALYSIS_BUNDLE_NAME), join(here, '..', ANALYSIS_BUNDLE_NAME)]) if (existsSync(c)) return c;
  const entry = join(here, 'analysisWorker.ts');
  if (!existsSync(entry)) throw new Error(`preview analysis script not found next to ${here}`);
  if (builtFromSource) return builtFromSource;
  const esbuildName = 'esbuild';
  const esbuild = (await import(esbuildName)) as typeof import('esbuild');
  const out = await esbuild.build({ entryPoints: [entry], bundle: true, platform: 'node', format: 'cjs', write: false, logLevel: 'silent', target: 'node20' });
  const file = join(mkdtempSync(join(tmpdir(), 'fluxel-analysis-')), 'preview-analysis.cjs');
  writeFileSync(file, out.outputFiles[0].contents);
  builtFromSource = file;
  return file;
}

type Pending = { resolve(m: FromAnalysis.Type): void; reject(e: Error): void };

/** The subset of the client the session uses (a fake in unit tests). */
export interface AnalysisService {
  verdict(text: string, knobs: KnobSet): Promise<{ verdict: WireVerdict; extremumCheck: boolean }>;
  weights(req: Omit<ToAnalysis.Weights, 'type' | 'id'>): Promise<WeightsResult>;
  impulse(text: string, knobs: KnobSet, steps: number): Promise<ImpulseResult | null>;
  scene(scene: string, noise: number, seed: number, size: number): Promise<{ noisy: Picture; clean: Picture }>;
  decode(bytes: Uint8Array, range?: { lo: number; hi: number }): Promise<Picture>;
  /** A/B metrics of `result` (against `reference` and `pinned` when given); see analysisCompute.compareResult. */
  compare(result: AnyPicture, reference: AnyPicture | null, pinned: AnyPicture | null): Promise<CompareResult>;
  spectrum(text: string, knobs: KnobSet, at?: FrozenAt): Promise<SpectrumResult>;
  approximates(text: string, knobs: KnobSet, at?: FrozenAt): Promise<ApproximatesResult>;
  influence(req: Omit<ToAnalysis.Influence, 'type' | 'id'>): Promise<InfluenceResult>;
  dispose(): Promise<void>;
}

export class AnalysisClient implements AnalysisService {
  private worker: Promise<Worker> | null = null;
  private nextId = 1;
  private readonly pending = new Map<number, Pending>();

  constructor(private readonly opts: { script?: string } = {}) {}

  private ensure(): Promise<Worker> {
    if (!this.worker) {
      this.worker = resolveScript(this.opts.script).then((script) => {
        const w = new Worker(script);
        w.unref();
        w.on('message', (m: FromAnalysis.Type) => {
          const p = this.pending.get(m.id);
          if (!p) return;
          this.pending.delete(m.id);
          if (m.type === 'error') p.reject(new Error(m.message));
          else p.resolve(m);
        });
        const fail = (err: Error) => {
          this.worker = null;
          for (const p of this.pending.values()) p.reject(err);
          this.pending.clear();
        };
        w.on('error', (e) => fail(e instanceof Error ? e : new Error(String(e))));
        w.on('exit', (code) => fail(new Error(`analysis thread exited (code ${code})`)));
        return w;
      });
      this.worker.catch(() => { this.worker = null; });
    }
    return this.worker;
  }

  private async request(msg: ToAnalysis.Type, transfer: ArrayBuffer[] = []): Promise<FromAnalysis.Type> {
    const w = await this.ensure();
    return new Promise((resolve, reject) => {
      this.pending.set(msg.id, { resolve, reject });
      w.postMessage(msg, transfer);
    });
  }

  async scene(scene: string, noise: number, seed: number, size: number): Promise<{ noisy: Picture; clean: Picture }> {
    const m = await this.request({ type: 'scene', id: this.nextId++, scene, noise, seed, size });
    if (m.type !== 'scene') throw new Error('unexpected answer');
    return { noisy: m.noisy, clean: m.clean };
  }

  async decode(bytes: Uint8Array, range?: { lo: number; hi: number }): Promise<Picture> {
    const m = await this.request({ type: 'decode', id: this.nextId++, bytes, ...(range ? { range } : {}) });
    if (m.type !== 'decode') throw new Error('unexpected answer');
    return m.picture;
  }

  async verdict(text: string, knobs: KnobSet): Promise<{ verdict: WireVerdict; extremumCheck: boolean }> {
    const m = await this.request({ type: 'verdict', id: this.nextId++, text, knobs });
    if (m.type !== 'verdict') throw new Error('unexpected answer');
    return { verdict: m.verdict, extremumCheck: m.extremumCheck };
  }

  async weights(req: Omit<ToAnalysis.Weights, 'type' | 'id'>): Promise<WeightsResult> {
    const m = await this.request({ type: 'weights', id: this.nextId++, ...req });
    if (m.type !== 'weights') throw new Error('unexpected answer');
    return m.weights;
  }

  async impulse(text: string, knobs: KnobSet, steps: number): Promise<ImpulseResult | null> {
    const m = await this.request({ type: 'impulse', id: this.nextId++, text, knobs, steps });
    if (m.type !== 'impulse') throw new Error('unexpected answer');
    return m.impulse;
  }

  async compare(result: AnyPicture, reference: AnyPicture | null, pinned: AnyPicture | null): Promise<CompareResult> {
    const m = await this.request({ type: 'compare', id: this.nextId++, result, reference, pinned });
    if (m.type !== 'compare') throw new Error('unexpected answer');
    return m.compare;
  }

  async spectrum(text: string, knobs: KnobSet, at?: FrozenAt): Promise<SpectrumResult> {
    const m = await this.request({ type: 'spectrum', id: this.nextId++, text, knobs, ...(at ? { at } : {}) });
    if (m.type !== 'spectrum') throw new Error('unexpected answer');
    return m.spectrum;
  }

  async approximates(text: string, knobs: KnobSet, at?: FrozenAt): Promise<ApproximatesResult> {
    const m = await this.request({ type: 'approximates', id: this.nextId++, text, knobs, ...(at ? { at } : {}) });
    if (m.type !== 'approximates') throw new Error('unexpected answer');
    return m.approximates;
  }

  async influence(req: Omit<ToAnalysis.Influence, 'type' | 'id'>): Promise<InfluenceResult> {
    const m = await this.request({ type: 'influence', id: this.nextId++, ...req });
    if (m.type !== 'influence') throw new Error('unexpected answer');
    return m.influence;
  }

  async dispose(): Promise<void> {
    const w = this.worker ? await this.worker.catch(() => null) : null;
    this.worker = null;
    if (w) await w.terminate();
  }
}

/**
 * The live run's analysis service over two threads: everything on the first, the influence map (seconds for long
 * runs of nonlinear schemes) on a second, so a verdict or a frequency map for the next edit never waits behind it.
 * A new influence request while one is in flight ends the older one's thread (its promise rejects with
 * SUPERSEDED) and starts a new thread.
 */
export class SplitAnalysis implements AnalysisService {
  private slow: AnalysisService | null = null;
  private inFlight = 0;

  constructor(private readonly main: AnalysisService, private readonly newSlow: () => AnalysisService) {}

  verdict(text: string, knobs: KnobSet): ReturnType<AnalysisService['verdict']> { return this.main.verdict(text, knobs); }
  weights(req: Omit<ToAnalysis.Weights, 'type' | 'id'>): Promise<WeightsResult> { return this.main.weights(req); }
  impulse(text: string, knobs: KnobSet, steps: number): Promise<ImpulseResult | null> { return this.main.impulse(text, knobs, steps); }
  scene(scene: string, noise: number, seed: number, size: number): ReturnType<AnalysisService['scene']> { return this.main.scene(scene, noise, seed, size); }
  decode(bytes: Uint8Array): Promise<Picture> { return this.main.decode(bytes); }
  compare(result: AnyPicture, reference: AnyPicture | null, pinned: AnyPicture | null): Promise<CompareResult> { return this.main.compare(result, reference, pinned); }
  spectrum(text: string, knobs: KnobSet, at?: FrozenAt): Promise<SpectrumResult> { return this.main.spectrum(text, knobs, at); }
  approximates(text: string, knobs: KnobSet, at?: FrozenAt): Promise<ApproximatesResult> { return this.main.approximates(text, knobs, at); }

  async influence(req: Omit<ToAnalysis.Influence, 'type' | 'id'>): Promise<InfluenceResult> {
    if (this.inFlight > 0 && this.slow) {
      const old = this.slow;
      this.slow = null;
      void old.dispose();
    }
    const slow = (this.slow ??= this.newSlow());
    this.inFlight++;
    try {
      return await slow.influence(req);
    } catch (err) {
      throw slow === this.slow ? err : new Error(SUPERSEDED);
    } finally {
      this.inFlight--;
    }
  }

  async dispose(): Promise<void> {
    const slow = this.slow;
    this.slow = null;
    await Promise.all([this.main.dispose(), slow?.dispose()]);
  }
}
