// The live run's host orchestration without VS Code or threads: a fake engine and a fake analysis record what the
// session asks for, so debounce, stale-run dropping, cancellation, respawn on long steps, knob and input changes,
// errors, the weights request on the full-resolution state, knob edits and replay are checked message by message;
// a fake fitter checks knob fits (the job it gets, knobs moved, the write-back offer, cancellation) and the backend
// setting is checked on the run options.

import { afterEach, describe, expect, it, vi } from 'vitest';
import type { FieldSnapshot, WorkerRunOptions } from '../../../src/engine/worker/protocol';
import type { WorkerRunCallbacks, WorkerRunHandle, WorkerRunOutcome } from '../../../src/engine/worker/workerClient';
import type { FrameStats } from '../../../src/engine/types';
import type { AnalysisService } from '../../../src/extension/preview/analysisClient';
import { PreviewSession, type EngineLike, type FitJob, type FitOutcome, type SessionEnv } from '../../../src/extension/preview/session';
import type { BackendChoice } from '../../../src/engine/wasm/select';
import type { InputChoice, ToPreview } from '../../../src/protocol/preview';
import { makeMask } from '../../../src/images/inputs';
import { compareResult, computeApproximates, computeInfluence, computeSpectrum } from '../../../src/extension/preview/analysisCompute';
import { SUPERSEDED } from '../../../src/extension/preview/analysisProtocol';

const SCHEME = [
  'grid 2d',
  'boundary reflect',
  'param K = 0.5 in [0, 1]',
  'step dt = 0.2 in [0.01, 0.3]',
  'steps 4',
  'field u = image',
  "u' = u + dt * K * sum n in N4: u[n] - u",
  '',
].join('\n');

interface FakeRun {
  options: WorkerRunOptions;
  cb: WorkerRunCallbacks;
  cancelled: boolean;
  resolve(o: WorkerRunOutcome): void;
  reject(e: Error): void;
  engine: FakeEngine;
}

class FakeEngine implements EngineLike {
  terminated = false;
  constructor(private readonly runs: FakeRun[]) {}
  start(_input: unknown, options: WorkerRunOptions, cb: WorkerRunCallbacks = {}): WorkerRunHandle {
    let resolve!: (o: WorkerRunOutcome) => void;
    let reject!: (e: Error) => void;
    const done = new Promise<WorkerRunOutcome>((res, rej) => { resolve = res; reject = rej; });
    done.catch(() => undefined);
    const run: FakeRun = { options, cb, cancelled: false, resolve, reject, engine: this };
    this.runs.push(run);
    // Like the real worker, a cancelled run ends after its current step: here, on the next microtask.
    const cancel = () => {
      run.cancelled = true;
      queueMicrotask(() => resolve({ result: { status: 'cancelled', stepsDone: 0, steps: 4, dt: 0.2, params: {}, dtype: 'float32', backend: 'js', stepSeconds: 0, frames: [], warnings: [] }, fields: {} }));
    };
    return { runId: this.runs.length, done, cancel };
  }
  async terminate(): Promise<void> {
    this.terminated = true;
  }
}

function snapshot(width: number, height: number, fill: (i: number) => number): FieldSnapshot {
  return { width, height, data: Float32Array.from({ length: width * height }, (_, i) => fill(i)) };
}

function stats(step: number): FrameStats {
  return { step, t: step * 0.2, fields: { u: { min: 0, max: 1, mean: 0.5 } }, psnr: 20 + step };
}

function setup(opts: { debounceMs?: number; input?: InputChoice; knobs?: unknown; backend?: BackendChoice; fit?: SessionEnv['fit']; accept?: boolean; pinned?: unknown; influence?: AnalysisService['influence']; readImage?: SessionEnv['readImage']; named?: unknown } = {}) {
  const posted: ToPreview.Type[] = [];
  const runs: FakeRun[] = [];
  const engines: FakeEngine[] = [];
  const weightsCalls: Parameters<AnalysisService['weights']>[0][] = [];
  const influenceCalls: Parameters<AnalysisService['influence']>[0][] = [];
  const analysis: AnalysisService = {
    verdict: async (_t, knobs) => ({
      verdict: { method: 'positivity', limit: 0.25, dt: knobs.dt, stable: knobs.dt <= 0.25, reason: 'r', estimate: false, unconditional: false, positivityLimit: null, diffusionLimit: null },
      extremumCheck: true,
    }),
    weights: async (req) => {
      weightsCalls.push(req);
      return { field: req.field, radius: 1, dims: 2, grid: [0, 0.1, 0, 0.1, 0.6, 0.1, 0, 0.1, 0], sum: 1, centre: 0.6, negativeCentre: false, value: 0.5, others: 0 };
    },
    impulse: async (_t, _k, steps) => ({ steps, t: steps * 0.2, sigma: [1, 1], heatSigma: 1, sum: 1, truncated: false }),
    scene: async (_name, _noise, _seed, size) => ({ noisy: { width: size, height: size, data: new Float32Array(size * size).fill(0.5) }, clean: { width: size, height: size, data: new Float32Array(size * size) } }),
    decode: async () => ({ width: 1, height: 1, data: new Float32Array(1) }),
    compare: async (result, reference, pinned) => compareResult(result, reference, pinned),
    spectrum: async (text, knobs, at) => computeSpectrum(text, knobs, at),
    approximates: async (text, knobs, at) => computeApproximates(text, knobs, at),
    influence: async (req) => { influenceCalls.push(req); return opts.influence ? opts.influence(req) : computeInfluence(req); },
    dispose: async () => undefined,
  };
  const edits: { edits: unknown; text: string }[] = [];
  const revealed: unknown[] = [];
  const remembered: InputChoice[] = [];
  const rememberedKnobs: unknown[] = [];
  const rememberedNamed: unknown[] = [];
  const offers: string[] = [];
  const rememberedPinned: unknown[] = [];
  const env: SessionEnv = {
    source: 'file:///w/a.fluxel',
    fileName: 'a.fluxel',
    post: (m) => posted.push(m),
    newEngine: () => {
      const e = new FakeEngine(runs);
      engines.push(e);
      return e;
    },
    analysis,
    settings: () => ({ debounceMs: opts.debounceMs ?? 0, maxPreviewSize: 16, sceneSize: 32, ...(opts.backend ? { backend: opts.backend } : {}) }),
    readImage: opts.readImage ?? (async () => ({ width: 8, height: 4, data: new Float32Array(32).fill(0.25) })),
    recallNamedInputs: () => opts.named,
    rememberNamedInputs: (c) => rememberedNamed.push(c),
    recallInput: () => opts.input ?? null,
    rememberInput: (i) => remembered.push(i),
    recallKnobs: () => opts.knobs,
    rememberKnobs: (k) => rememberedKnobs.push(k),
    pickImage: async () => 'file:///w/pic.png',
    applyEdits: async (e, text) => { edits.push({ edits: e, text }); return true; },
    reveal: (r) => revealed.push(r),
    recallPinned: () => opts.pinned,
    rememberPinned: (p) => rememberedPinned.push(p),
    ...(opts.fit ? { fit: opts.fit, offerWrite: async (summary: string) => { offers.push(summary); return opts.accept ?? false; } } : {}),
  };
  const session = new PreviewSession(env);
  const of = <T extends ToPreview.Type['type']>(type: T) => posted.filter((m): m is Extract<ToPreview.Type, { type: T }> => m.type === type);
  return { session, posted, runs, engines, weightsCalls, influenceCalls, edits, revealed, remembered, rememberedKnobs, rememberedNamed, rememberedPinned, offers, of };
}

/** Lets pending promise callbacks run (no timers involved). */
const settle = async () => {
  for (let i = 0; i < 20; i++) await Promise.resolve();
};

afterEach(() => vi.useRealTimers());

describe('live run session', async () => {
  it('checks and runs on the first change: scheme, run start with sizes, then frames in order', async () => {
    const { session, runs, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    expect(of('scheme')[0]).toMatchObject({ fileName: 'a.fluxel', dims: 2, fields: ['u'], knobs: [{ name: 'K', value: 0.5, lo: 0, hi: 1 }], steps: 4, current: { values: { K: 0.5 }, dt: 0.2 } });
    expect(runs.length).toBe(1);
    const started = of('runStarted')[0];
    // A 32×32 scene shown at most 16 px wide: frames are halved.
    expect(started).toMatchObject({ width: 32, height: 32, frameWidth: 16, frameHeight: 16, steps: 4, every: 1, field: 'u', hasReference: true });
    expect(runs[0].options).toMatchObject({ params: { K: 0.5 }, dt: 0.2, every: 1, monitors: { extremumCheck: 'auto' } });
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 1) });
    runs[0].cb.onFrame?.(stats(1), { u: snapshot(32, 32, (i) => i % 2) });
    const frames = of('frame');
    expect(frames.map((f) => [f.step, f.width, f.height])).toEqual([[0, 16, 16], [1, 16, 16]]);
    expect(frames[1].data[0]).toBeCloseTo(0.5, 6); // 2×2 blocks of 0 and 1 average to 0.5
    expect(frames[1].psnr).toBe(21);
    await settle();
    expect(of('verdict')[0].verdict).toMatchObject({ method: 'positivity', limit: 0.25 });
    expect(of('impulse')[0]).toMatchObject({ steps: 4 });
  });

  it('makes the scene off the host thread once, and runs when it arrives', async () => {
    const { session, runs, of } = setup();
    session.documentChanged(SCHEME);
    session.documentChanged(SCHEME + '# 1\n');
    expect(runs.length).toBe(0);
    await settle();
    expect(runs.length).toBe(1);
    expect(of('runStarted').length).toBe(1);
    expect((runs[0].options.image as { data: ArrayLike<number> }).data[0]).toBe(0.5);
    expect(runs[0].options.reference).toBeDefined();
  });

  it('folds edits inside the debounce window into one run, the first edit after a pause running at once', async () => {
    vi.useFakeTimers();
    const { session, runs } = setup({ debounceMs: 150 });
    session.documentChanged(SCHEME);
    await settle();
    expect(runs.length).toBe(1);
    session.documentChanged(SCHEME + '# a\n');
    session.documentChanged(SCHEME + '# ab\n');
    expect(runs.length).toBe(1);
    vi.advanceTimersByTime(149);
    expect(runs.length).toBe(1);
    vi.advanceTimersByTime(1);
    expect(runs[0].cancelled).toBe(true);
    await settle();
    expect(runs.length).toBe(2);
  });

  it('drops frames and findings of a replaced run, and cancels it without a new worker when steps are short', async () => {
    const { session, runs, engines, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    runs[0].cb.onFrame?.(stats(1), { u: snapshot(32, 32, () => 0) });
    session.documentChanged(SCHEME + '# edit\n');
    expect(runs[0].cancelled).toBe(true);
    expect(engines.length).toBe(1);
    expect(engines[0].terminated).toBe(false);
    const before = of('frame').length;
    runs[0].cb.onFrame?.(stats(2), { u: snapshot(32, 32, () => 0) });
    runs[0].cb.onWarning?.({ kind: 'growth', step: 2, x: 1, y: 1, field: 'u', message: 'm', range: { start: { offset: 0, line: 7, column: 1 }, end: { offset: 5, line: 7, column: 6 } } });
    expect(of('frame').length).toBe(before);
    expect(of('finding').length).toBe(0);
    const ids = of('runStarted').map((m) => m.runId);
    expect(new Set(ids).size).toBe(2);
  });

  it('hands only the newest of several quick edits to the worker, after the cancelled run has ended', async () => {
    const { session, runs, engines, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    for (let k = 0; k < 5; k++) session.documentChanged(`${SCHEME}# ${k}\n`);
    expect(runs.length).toBe(1);
    await settle();
    expect(runs.length).toBe(2);
    expect(engines.length).toBe(1);
    expect(of('runStarted').length).toBe(6);
    // The launched run is the newest one: its frames are posted, with its id.
    runs[1].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    expect(of('frame').at(-1)?.runId).toBe(of('runStarted').at(-1)?.runId);
  });

  it('terminates the worker and starts a new one when the current step is long (contracts §5)', async () => {
    const { session, runs, engines } = setup();
    session.documentChanged(SCHEME);
    await settle();
    // No frame beyond step 0 has come back, and the run started long ago: a long first step.
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    const t0 = performance.now();
    vi.spyOn(performance, 'now').mockReturnValue(t0 + 10_000);
    session.documentChanged(SCHEME + '# edit\n');
    vi.restoreAllMocks();
    expect(engines[0].terminated).toBe(true);
    expect(engines.length).toBe(2);
    expect(runs[1].engine).toBe(engines[1]);
  });

  it('keeps the last good run while the file has errors and reports the first error', async () => {
    const { session, runs, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    session.documentChanged(SCHEME.replace("u' = u +", "u' = q +"));
    expect(runs.length).toBe(1);
    expect(runs[0].cancelled).toBe(false);
    const p = of('problems')[0];
    expect(p.count).toBeGreaterThanOrEqual(1);
    expect(p.first?.range.start.line).toBe(7);
    session.documentChanged(SCHEME);
    await settle();
    expect(of('problems').at(-1)).toMatchObject({ count: 0, first: null });
    expect(runs.length).toBe(2);
  });

  it('reruns at once with moved knobs, and a knob follows the file again when the file changes it', async () => {
    const { session, runs, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    await session.handle({ type: 'setKnobs', source: 'file:///w/a.fluxel', values: { K: 0.75 }, dt: 0.1 });
    await settle();
    expect(runs.length).toBe(2);
    expect(runs[1].options).toMatchObject({ params: { K: 0.75 }, dt: 0.1 });
    session.documentChanged(SCHEME + '# comment\n');
    await settle();
    expect(runs[2].options).toMatchObject({ params: { K: 0.75 }, dt: 0.1 });
    session.documentChanged(SCHEME.replace('K = 0.5', 'K = 0.25'));
    await settle();
    expect(runs[3].options).toMatchObject({ params: { K: 0.25 }, dt: 0.1 });
    expect(of('scheme').at(-1)?.current).toEqual({ values: { K: 0.25 }, dt: 0.1 });
  });

  it('remembers moved knobs per file, and brings them back only while the file declares what they were moved from', async () => {
    const first = setup();
    first.session.documentChanged(SCHEME);
    await settle();
    await first.session.handle({ type: 'setKnobs', source: 'file:///w/a.fluxel', values: { K: 0.7 }, dt: 0.1 });
    const stored = first.rememberedKnobs.at(-1);
    expect(stored).toEqual({ values: { K: 0.7 }, dt: 0.1, declared: { K: 0.5 }, declaredDt: 0.2 });

    const again = setup({ knobs: stored });
    again.session.documentChanged(SCHEME);
    await settle();
    expect(again.runs[0].options).toMatchObject({ params: { K: 0.7 }, dt: 0.1 });

    const edited = setup({ knobs: stored });
    edited.session.documentChanged(SCHEME.replace('K = 0.5', 'K = 0.4').replace('dt = 0.2', 'dt = 0.25'));
    await settle();
    expect(edited.runs[0].options).toMatchObject({ params: { K: 0.4 }, dt: 0.25 });

    const garbage = setup({ knobs: { values: { K: 'x' } } });
    garbage.session.documentChanged(SCHEME);
    await settle();
    expect(garbage.runs[0].options).toMatchObject({ params: { K: 0.5 }, dt: 0.2 });
  });

  it('computes weights from the full-resolution state of the picked step', async () => {
    const { session, runs, weightsCalls, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    runs[0].cb.onFrame?.(stats(2), { u: snapshot(32, 32, (i) => i) });
    const runId = of('runStarted')[0].runId;
    await session.handle({ type: 'pickPixel', source: 'file:///w/a.fluxel', runId, step: 2, x: 31, y: 30 });
    expect(weightsCalls.length).toBe(1);
    const req = weightsCalls[0];
    expect([req.width, req.height, req.x, req.y, req.t, req.field]).toEqual([32, 32, 31, 30, 0.4, 'u']);
    expect(req.fields[0].length).toBe(32 * 32);
    expect(req.fields[0][30 * 32 + 31]).toBe(30 * 32 + 31);
    expect(of('weights')[0]).toMatchObject({ runId, step: 2, x: 31, y: 30, centre: 0.6 });
    // A stale run id or a step that was never recorded asks for nothing.
    await session.handle({ type: 'pickPixel', source: 'file:///w/a.fluxel', runId: runId + 5, step: 2, x: 1, y: 1 });
    await session.handle({ type: 'pickPixel', source: 'file:///w/a.fluxel', runId, step: 3, x: 1, y: 1 });
    expect(weightsCalls.length).toBe(1);
  });

  it('sends a full-resolution row before and after', async () => {
    const { session, runs, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    runs[0].cb.onFrame?.(stats(1), { u: snapshot(32, 32, (i) => i) });
    await session.handle({ type: 'requestProfile', source: 'file:///w/a.fluxel', runId: of('runStarted')[0].runId, step: 1, row: 3 });
    const p = of('profile')[0];
    expect(p.before.length).toBe(32);
    expect(p.after[5]).toBe(3 * 32 + 5);
  });

  it('writes knobs as edits on the current text, and reveals ranges through the editor', async () => {
    const { session, edits, revealed } = setup();
    session.documentChanged(SCHEME);
    await settle();
    await session.handle({ type: 'writeKnobs', source: 'file:///w/a.fluxel', values: { K: 0.7 }, dt: 0.15 });
    expect(edits.length).toBe(1);
    expect(edits[0].text).toBe(SCHEME);
    expect((edits[0].edits as { newText: string }[]).map((e) => e.newText)).toEqual(['0.7', '0.15']);
    const range = { start: { line: 7, column: 1 }, end: { line: 7, column: 10 } };
    await session.handle({ type: 'reveal', source: 'file:///w/a.fluxel', range });
    expect(revealed).toEqual([range]);
  });

  it('remembers the input choice and reruns on it; an image file is read first', async () => {
    const { session, runs, remembered, of } = setup({ input: { kind: 'scene', scene: 'card', noise: 0, seed: 2 } });
    session.documentChanged(SCHEME);
    await settle();
    expect(of('scheme')[0].input).toEqual({ kind: 'scene', scene: 'card', noise: 0, seed: 2 });
    await session.handle({ type: 'chooseImage', source: 'file:///w/a.fluxel' });
    expect(remembered.at(-1)).toEqual({ kind: 'file', uri: 'file:///w/pic.png' });
    await settle();
    const last = runs.at(-1)!;
    expect((last.options.image as { width: number }).width).toBe(8);
    expect(last.options.reference).toBeUndefined();
    expect(of('runStarted').at(-1)).toMatchObject({ width: 8, height: 4, hasReference: false });
  });

  it('replays scheme, run, frames, findings, verdict and end to a page that reloaded', async () => {
    const { session, runs, posted, of } = setup();
    session.documentChanged(SCHEME);
    await settle();
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    runs[0].cb.onWarning?.({ kind: 'new-extremum', step: 0, x: 2, y: 3, field: 'u', message: 'm', range: { start: { offset: 0, line: 7, column: 1 }, end: { offset: 5, line: 7, column: 6 } } });
    runs[0].resolve({ result: { status: 'done', stepsDone: 4, steps: 4, dt: 0.2, params: {}, dtype: 'float32', backend: 'js', stepSeconds: 0, frames: [], warnings: [] }, fields: {} });
    await settle();
    const n = posted.length;
    await session.handle({ type: 'ready', source: 'file:///w/a.fluxel' });
    const replayed = posted.slice(n).map((m) => m.type);
    expect(replayed).toEqual(['scheme', 'runStarted', 'frame', 'finding', 'verdict', 'impulse', 'approximates', 'spectrum', 'runEnded']);
    expect(of('runEnded')[0]).toMatchObject({ status: 'done', stepsDone: 4 });
  });

  it('stops its run and its worker when disposed', async () => {
    const { session, runs, engines } = setup();
    session.documentChanged(SCHEME);
    await settle();
    session.dispose();
    expect(runs[0].cancelled).toBe(true);
    expect(engines[0].terminated).toBe(true);
  });

  it('passes the backend setting to every run by name (auto when unset)', async () => {
    const a = setup({ backend: 'js' });
    a.session.documentChanged(SCHEME);
    await settle();
    expect(a.runs[0].options.backend).toBe('js');
    const b = setup();
    b.session.documentChanged(SCHEME);
    await settle();
    expect(b.runs[0].options.backend).toBe('auto');
  });
});

/** A fitter that records its jobs and resolves or rejects each when the test says so. */
function fakeFitter() {
  const calls: { job: FitJob; signal: AbortSignal; onEvaluation: (n: number) => void; resolve(o: FitOutcome): void }[] = [];
  const fit: NonNullable<SessionEnv['fit']> = (job, signal, onEvaluation) => new Promise<FitOutcome>((resolve, reject) => {
    calls.push({ job, signal, onEvaluation, resolve });
    signal.addEventListener('abort', () => reject(new Error('aborted')), { once: true });
  });
  return { fit, calls };
}

const FIT_DONE: FitOutcome = { values: { K: 0.3 }, step: 2, best: 25.5, noisy: 20, evaluations: 9 };

describe('knob fit in the live run', () => {
  it('says in the scheme message whether a fit can run: ready on a scene, not on an image file or without a fitter', async () => {
    const f = fakeFitter();
    const a = setup({ fit: f.fit });
    a.session.documentChanged(SCHEME);
    await settle();
    expect(a.of('scheme')[0].fit).toMatchObject({ ready: true });
    expect(a.of('scheme')[0].fit?.note).toMatch(/\bK\b/);
    const b = setup({ fit: f.fit, input: { kind: 'file', uri: 'file:///w/pic.png' } });
    b.session.documentChanged(SCHEME);
    await settle();
    expect(b.of('scheme')[0].fit).toMatchObject({ ready: false });
    expect(b.of('scheme')[0].fit?.note).toMatch(/scene/);
    await b.session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel' });
    expect(f.calls.length).toBe(0);
    expect(b.of('fit').at(-1)).toMatchObject({ status: 'failed' });
    expect(b.of('fit').at(-1)?.message).toMatch(/scene/);
    const c = setup();
    c.session.documentChanged(SCHEME);
    await settle();
    expect(c.of('scheme')[0].fit).toMatchObject({ ready: false });
  });

  it('fits the ranged knobs on the scene with the current knob values, moves the knobs, reruns and writes back on acceptance', async () => {
    const f = fakeFitter();
    const { session, runs, edits, offers, of } = setup({ fit: f.fit, accept: true, backend: 'js', input: { kind: 'scene', scene: 'card', noise: 0.2, seed: 5 } });
    session.documentChanged(SCHEME);
    await settle();
    // A moved dt knob is written into the text the fit runs.
    await session.handle({ type: 'setKnobs', source: 'file:///w/a.fluxel', values: { K: 0.5 }, dt: 0.1 });
    await settle();
    const before = runs.length;
    const done = session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel' });
    await settle();
    expect(f.calls.length).toBe(1);
    const { job } = f.calls[0];
    expect(job.free).toEqual([{ name: 'K', lo: 0, hi: 1, value: 0.5 }]);
    expect(job.source).toContain('step dt = 0.1 in [0.01, 0.3]');
    expect(job.steps).toBe(4);
    expect(job.backend).toBe('js');
    expect([job.image.width, job.reference.width]).toEqual([32, 32]);
    expect(of('fit').map((m) => m.status)).toEqual(['running']);
    f.calls[0].onEvaluation(3);
    f.calls[0].resolve(FIT_DONE);
    await done;
    expect(of('fit').map((m) => [m.status, m.evaluations])).toEqual([['running', 0], ['running', 3], ['done', 9]]);
    expect(of('fit').at(-1)).toMatchObject({ values: { K: 0.3 }, step: 2, best: 25.5, noisy: 20 });
    expect(of('scheme').at(-1)?.current).toEqual({ values: { K: 0.3 }, dt: 0.1 });
    expect(runs.length).toBe(before + 1);
    expect(runs.at(-1)?.options.params).toEqual({ K: 0.3 });
    expect(offers).toEqual(['Fit: K = 0.3, best step 2, PSNR 25.50 dB (noisy input 20.00 dB).']);
    expect(edits.length).toBe(1);
    expect(edits[0].text).toBe(SCHEME);
    expect((edits[0].edits as { newText: string }[]).map((e) => e.newText)).toEqual(['0.3']);
  });

  it('writes nothing when the offer is declined', async () => {
    const f = fakeFitter();
    const { session, edits, offers } = setup({ fit: f.fit, accept: false });
    session.documentChanged(SCHEME);
    await settle();
    const done = session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel', names: ['K'] });
    await settle();
    f.calls[0].resolve(FIT_DONE);
    await done;
    expect(offers.length).toBe(1);
    expect(edits.length).toBe(0);
  });

  it('cancels a fit in flight when a new one starts and when the panel closes', async () => {
    const f = fakeFitter();
    const { session, of } = setup({ fit: f.fit });
    session.documentChanged(SCHEME);
    await settle();
    const first = session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel' });
    await settle();
    const second = session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel' });
    await settle();
    expect(f.calls.length).toBe(2);
    expect(f.calls[0].signal.aborted).toBe(true);
    expect(f.calls[1].signal.aborted).toBe(false);
    await first;
    // The replaced fit says nothing more; the page shows the newer one.
    expect(of('fit').map((m) => [m.fitId, m.status])).toEqual([[1, 'running'], [2, 'running']]);
    session.dispose();
    expect(f.calls[1].signal.aborted).toBe(true);
    await second;
    expect(of('fit').length).toBe(2);
  });

  it('fits only the named knobs, and reports when none of them has a range', async () => {
    const f = fakeFitter();
    const { session, of } = setup({ fit: f.fit });
    session.documentChanged(SCHEME);
    await settle();
    await session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel', names: ['Q'] });
    expect(f.calls.length).toBe(0);
    expect(of('fit').at(-1)).toMatchObject({ status: 'failed', message: 'None of the named knobs declares a range.' });
  });

  it('reports a failed fit with its message', async () => {
    const { session, of } = setup({ fit: async () => { throw new Error('the pool broke'); } });
    session.documentChanged(SCHEME);
    await settle();
    await session.handle({ type: 'fitKnobs', source: 'file:///w/a.fluxel' });
    expect(of('fit').at(-1)).toMatchObject({ status: 'failed', message: 'the pool broke' });
  });
});

const MASKED = SCHEME.replace("field u = image\n", 'field u = image\nfield m = image "mask"\n').replace("u' = u + dt * K * sum n in N4: u[n] - u", "u' = u + dt * K * (1 - m) * sum n in N4: u[n] - u");

describe('named inputs and channels in the live run', () => {
  it('offers a chooser per named input, starting with the generated mask at the run size', async () => {
    const { session, runs, of } = setup();
    session.documentChanged(MASKED);
    await settle();
    expect(of('scheme')[0].namedInputs).toEqual([{ name: 'mask', choice: { kind: 'mask' }, label: 'generated mask (default)' }]);
    const fi = runs[0].options.fieldImages as unknown as Record<string, { width: number; height: number; data: Float32Array }>;
    expect(Object.keys(fi).sort()).toEqual(['m', 'u']);
    expect([fi.m.width, fi.m.height]).toEqual([32, 32]);
    expect(Array.from(fi.m.data)).toEqual(Array.from(makeMask(32, 32).data));
    expect(fi.u.data[0]).toBe(0.5);
  });

  it('a chosen file of another size stops the run with the field line and both sizes; the choice is remembered', async () => {
    const { session, runs, of, rememberedNamed } = setup();
    session.documentChanged(MASKED);
    await settle();
    await session.handle({ type: 'chooseNamedImage', source: 'file:///w/a.fluxel', name: 'mask' });
    await settle();
    expect(rememberedNamed.at(-1)).toEqual({ mask: { kind: 'file', uri: 'file:///w/pic.png' } });
    expect(of('scheme').at(-1)?.namedInputs?.[0]).toEqual({ name: 'mask', choice: { kind: 'file', uri: 'file:///w/pic.png' }, label: 'pic.png' });
    expect(runs.length).toBe(1);
    expect(of('notice').at(-1)?.text).toBe('line 7: `field m = image "mask"`: the input "mask" is 8×4 pixels but the main input is 32×32; all inputs of a run must have one size.');
    await session.handle({ type: 'setNamedInput', source: 'file:///w/a.fluxel', name: 'mask', input: { kind: 'mask' } });
    await settle();
    expect(runs.length).toBe(2);
  });

  it('reads an image file with the sample range chosen in the panel, and says the range in the label', async () => {
    const calls: unknown[] = [];
    const { session, of } = setup({ readImage: async (uri, range) => { calls.push([uri, range]); return { width: 8, height: 4, data: new Float32Array(32) }; } });
    session.documentChanged(SCHEME);
    await settle();
    session.setInput({ kind: 'file', uri: 'file:///w/twelve.png', range: { lo: 0, hi: 4095 } });
    await settle();
    expect(calls.at(-1)).toEqual(['file:///w/twelve.png', { lo: 0, hi: 4095 }]);
    expect(of('scheme').at(-1)?.inputLabel).toBe('twelve.png (range 0:4095)');
  });

  it('binds the channels of a colour file to image.red, .green and .blue', async () => {
    const red = Float32Array.of(1, 0), green = Float32Array.of(0, 1), blue = Float32Array.of(0.5, 0.5), alpha = Float32Array.of(1, 1);
    const { session, runs, of } = setup({
      input: { kind: 'file', uri: 'file:///w/c.png' },
      readImage: async () => ({ width: 2, height: 1, data: Float32Array.of(0.25, 0.75), channels: { red, green, blue, alpha } }),
    });
    session.documentChanged(SCHEME.replace('field u = image\n', 'field u = image.red\nfield g = image.green\nfield b = image.blue\n').replace("u' = u + dt", "u' = u + 0 * (g + b) + dt"));
    await settle();
    const fi = runs[0].options.fieldImages as unknown as Record<string, { data: Float32Array }>;
    expect([fi.u.data, fi.g.data, fi.b.data]).toEqual([red, green, blue]);
    // Frames of a colour scheme carry the three fields for the colour view.
    runs[0].cb.onFrame?.(stats(0), { u: snapshot(2, 1, () => 1), g: snapshot(2, 1, () => 0), b: snapshot(2, 1, () => 0.5) });
    const frame = of('frame')[0];
    expect(frame.colour).toEqual({ red: Float32Array.of(1, 1), green: Float32Array.of(0, 0), blue: Float32Array.of(0.5, 0.5) });
  });
});

describe('A/B: a pinned result', () => {
  const src = 'file:///w/a.fluxel';
  // A 32×32 run: step 0 is flat 0.5 (the fake scene), step 1 a ramp; the fake clean reference is all zeros.
  const ramp = (i: number) => (i % 32) / 31;
  async function ranOnce(opts: Parameters<typeof setup>[0] = {}, w = 32, hgt = 32) {
    const t = setup(opts);
    t.session.documentChanged(SCHEME);
    await settle();
    const run = t.runs.at(-1) as FakeRun;
    run.cb.onFrame?.(stats(0), { u: snapshot(w, hgt, () => 0.5) });
    run.cb.onFrame?.(stats(1), { u: snapshot(w, hgt, ramp) });
    run.resolve({ result: { status: 'done', stepsDone: 1, steps: 1, dt: 0.2, params: {}, dtype: 'float32', backend: 'js', stepSeconds: 0, frames: [], warnings: [] }, fields: {} });
    await settle();
    return t;
  }

  it('pins the shown field at a step at full resolution, with its metrics, and posts it at the preview size', async () => {
    const t = await ranOnce();
    const runId = t.session.currentRunId as number;
    await t.session.handle({ type: 'pin', source: src, runId, step: 1 });
    await settle();
    const b = t.of('baseline').at(-1);
    expect(b?.pinned).toMatchObject({ step: 1, field: 'u', fullWidth: 32, fullHeight: 32, width: 16, height: 16 });
    expect(b?.pinned?.label).toMatch(/^step 1 · K = 0\.5, dt = 0\.2 · survey tile, noise 0\.1, seed 7$/);
    // Against the all-zero reference: MSE = mean of ramp², PSNR = −10·log10(MSE) (numerics.md "Metrics").
    let mse = 0;
    for (let i = 0; i < 1024; i++) mse += Math.fround(ramp(i)) ** 2 / 1024;
    expect(b?.pinned?.metrics.psnr).toBeCloseTo(-10 * Math.log10(mse), 9);
    // TV of a horizontal ramp of 32 columns: 31 steps of 1/31 per row, 32 rows (worked by hand, common practice).
    expect(b?.pinned?.metrics.tv).toBeCloseTo(32, 4);
    expect(t.rememberedPinned.at(-1)).toMatchObject({ version: 1, step: 1, width: 32, height: 32 });
  });

  it('keeps the pin across edits and new runs, and compares the new run with it', async () => {
    const t = await ranOnce();
    await t.session.handle({ type: 'pin', source: src, runId: t.session.currentRunId as number, step: 1 });
    t.session.documentChanged(SCHEME.replace('K = 0.5', 'K = 0.25'));
    await settle();
    const run = t.runs.at(-1) as FakeRun;
    run.cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0.5) });
    run.cb.onFrame?.(stats(1), { u: snapshot(32, 32, (i) => ramp(i) * 0.5) });
    await t.session.handle({ type: 'requestComparison', source: src, runId: t.session.currentRunId as number, step: 1 });
    const c = t.of('comparison').at(-1);
    expect(c).toMatchObject({ comparable: true, note: null, step: 1 });
    expect(c?.current.tv).toBeCloseTo(16, 4);
    expect(c?.pinned.tv).toBeCloseTo(32, 4);
    expect(c?.delta.tv).toBeCloseTo(-16, 4);
    expect(c?.delta.psnr).toBeCloseTo((c?.current.psnr as number) - (c?.pinned.psnr as number), 12);
    // Current against pinned: differences ramp/2, so MSE = mean(ramp²)/4.
    let mse = 0;
    for (let i = 0; i < 1024; i++) mse += (Math.fround(ramp(i)) - Math.fround(ramp(i) * 0.5)) ** 2 / 1024;
    expect(c?.between?.psnr).toBeCloseTo(-10 * Math.log10(mse), 6);
    expect(c?.between?.ssim).toBeGreaterThan(0);
    expect(c?.between?.ssim).toBeLessThan(1);
    expect(t.of('baseline').length).toBe(1);
  });

  it('comes back in a new session from the per-file memory (a reloaded or re-shown panel), and unpin forgets it', async () => {
    const first = await ranOnce();
    await first.session.handle({ type: 'pin', source: src, runId: first.session.currentRunId as number, step: 1 });
    const stored = first.rememberedPinned.at(-1);
    first.session.dispose();
    const second = await ranOnce({ pinned: JSON.parse(JSON.stringify(stored)) });
    await second.session.handle({ type: 'ready', source: src });
    const b = second.of('baseline').at(-1);
    expect(b?.pinned?.step).toBe(1);
    expect(b?.pinned?.data[3]).toBeCloseTo((3 * 2 + 0.5) / 31, 5); // 2×2 block mean of the ramp at columns 6, 7
    await second.session.handle({ type: 'unpin', source: src });
    expect(second.of('baseline').at(-1)?.pinned).toBeNull();
    expect(second.rememberedPinned.at(-1)).toBeNull();
    await second.session.handle({ type: 'requestComparison', source: src, runId: second.session.currentRunId as number, step: 1 });
    expect(second.of('comparison').length).toBe(0);
  });

  it('ignores a damaged stored pin, and shows pins of another size side by side only', async () => {
    const damaged = await ranOnce({ pinned: { version: 1, label: 'x', step: 1, t: 0.2, field: 'u', width: 4, height: 4, values: 'AAAA', metrics: { psnr: 1, ssim: null, tv: 2 }, pinnedAt: 'now' } });
    await damaged.session.handle({ type: 'ready', source: src });
    expect(damaged.of('baseline').length).toBe(0);
    const t = await ranOnce({ input: { kind: 'file', uri: 'file:///w/pic.png' } }, 8, 4);
    await t.session.handle({ type: 'pin', source: src, runId: t.session.currentRunId as number, step: 0 });
    expect(t.of('baseline').at(-1)?.pinned?.fullWidth).toBe(8);
    await t.session.handle({ type: 'setInput', source: src, input: { kind: 'scene', scene: 'card', noise: 0, seed: 1 } });
    await settle();
    const run = t.runs.at(-1) as FakeRun;
    run.cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0.5) });
    await t.session.handle({ type: 'requestComparison', source: src, runId: t.session.currentRunId as number, step: 0 });
    const c = t.of('comparison').at(-1);
    expect(c).toMatchObject({ comparable: false, between: null });
    expect(c?.note).toMatch(/8×4.*32×32/);
    // The file input has no clean reference: the pinned side has TV only.
    expect(c?.pinned).toMatchObject({ psnr: null, ssim: null });
  });
});

describe('what the scheme approximates, its frequency map, its influence map and per-step measures', () => {
  const src = 'file:///w/a.fluxel';

  it('posts the modified-equation summary and the frequency map with every run, for the knob values of that run', async () => {
    const t = setup();
    t.session.documentChanged(SCHEME);
    await settle();
    const a = t.of('approximates').at(-1);
    // u' = u + dt·K·Σ_N4 (u[n] − u) with h = 1 approximates u_t = K·Δu (5-point Laplacian; common practice).
    expect(a?.runId).toBe(t.session.currentRunId);
    expect(a?.text).toMatch(/0\.5·Δu/);
    const m = t.of('spectrum').at(-1);
    expect(m).toMatchObject({ dims: 2, runId: t.session.currentRunId });
    // G(θ) = 1 − 4·dt·K·(sin²(θx/2) + sin²(θy/2)) (von Neumann analysis of the 5-point heat scheme, common
    // practice): with dt·K = 0.1 the smallest |G| is 1 − 0.8 = 0.2 at (π, π) and the largest 1 at θ = 0.
    expect(m?.peak.value).toBeCloseTo(1, 9);
    expect(m?.lo).toBeCloseTo(0.2, 6);
    expect(m?.edge).toEqual([]);
    // Moving K to 1 with dt 0.3 puts dt·K over 1/4: |G(π, π)| = |1 − 2.4| = 1.4 and the stable edge appears.
    await t.session.handle({ type: 'setKnobs', source: src, values: { K: 1 }, dt: 0.3 });
    await settle();
    const over = t.of('spectrum').at(-1);
    expect(over?.runId).toBe(t.session.currentRunId);
    expect(over?.peak.value).toBeCloseTo(1.4, 9);
    expect(over?.edge.length).toBeGreaterThan(0);
    expect(t.of('approximates').at(-1)?.text).toMatch(/1·Δu/);
  });

  it('answers an influence request from the run\'s own input, at full resolution, for the picked pixel and step', async () => {
    const t = setup({ input: { kind: 'file', uri: 'file:///w/pic.png' } });
    t.session.documentChanged(SCHEME);
    await settle();
    const run = t.runs.at(-1) as FakeRun;
    for (let k = 0; k <= 2; k++) run.cb.onFrame?.(stats(k), { u: snapshot(8, 4, () => 0.25) });
    const runId = t.session.currentRunId as number;
    await t.session.handle({ type: 'requestInfluence', source: src, runId, step: 2, x: 3, y: 1 });
    expect(t.influenceCalls[0]).toMatchObject({ steps: 2, x: 3, y: 1, field: 'u', width: 8, height: 4, knobs: { values: { K: 0.5 }, dt: 0.2 } });
    expect(t.influenceCalls[0].image?.width).toBe(8);
    const m = t.of('influence').at(-1);
    // Two steps of a 5-point stencil reach two cells in each direction (clipped by the 8×4 grid's edges).
    expect(m).toMatchObject({ runId, step: 2, x: 3, y: 1, steps: 2, field: 'u', x0: 1, y0: 0, width: 5, height: 4 });
    // A scheme that keeps constants, with reflecting boundaries: the weights sum to 1 (common practice).
    expect(m?.sum).toBeCloseTo(1, 6);
    // Other runs' requests and step 0 get no map.
    await t.session.handle({ type: 'requestInfluence', source: src, runId: runId + 5, step: 2, x: 3, y: 1 });
    await t.session.handle({ type: 'requestInfluence', source: src, runId, step: 0, x: 3, y: 1 });
    expect(t.of('influence').length).toBe(1);
    expect(t.of('notice').at(-1)?.text).toMatch(/step after the start/);
  });

  it('freezes the summary\'s coefficients at a picked pixel of the full-resolution state at that step', async () => {
    const edge = SCHEME.replace("u' = u + dt * K * sum n in N4: u[n] - u", "u' = u + dt * sum n in N4: (u[n] - u) / (1 + ((u[n] - u) / K)^2)");
    const t = setup();
    t.session.documentChanged(edge);
    await settle();
    expect(t.of('approximates').at(-1)?.details.at(-1)).toMatch(/of a flat state/);
    const run = t.runs.at(-1) as FakeRun;
    run.cb.onFrame?.(stats(0), { u: snapshot(32, 32, (i) => (i % 32 < 16 ? 0 : 1)) });
    run.cb.onFrame?.(stats(1), { u: snapshot(32, 32, (i) => (i % 32 < 16 ? 0 : 1)) });
    await t.session.handle({ type: 'pickPixel', source: src, runId: t.session.currentRunId as number, step: 1, x: 15, y: 4 });
    await settle();
    const a = t.of('approximates').at(-1);
    expect(a?.details.at(-1)).toMatch(/^Frozen coefficients at \(15, 4\) of the run's state at step 1/);
    // Across the step edge the diffusivity 1/(1 + (1/K)²) = 0.2 (K = 0.5) weakens the x-direction: no longer isotropic.
    expect(a?.text).toMatch(/anisotropic/);
    // The frequency map follows the pixel too.
    expect(t.of('spectrum').at(-1)?.note).toMatch(/frozen coefficients at \(15, 4\) of the run's state at step 1/);
  });

  it('drops an influence map superseded by a newer request silently, and reports other failures', async () => {
    let fail = SUPERSEDED;
    const t = setup({ influence: async () => { throw new Error(fail); } });
    t.session.documentChanged(SCHEME);
    await settle();
    const run = t.runs.at(-1) as FakeRun;
    run.cb.onFrame?.(stats(0), { u: snapshot(32, 32, () => 0) });
    run.cb.onFrame?.(stats(1), { u: snapshot(32, 32, () => 0) });
    const runId = t.session.currentRunId as number;
    await t.session.handle({ type: 'requestInfluence', source: src, runId, step: 1, x: 3, y: 3 });
    expect(t.of('notice').length).toBe(0);
    fail = 'keeping 9000 states needs too much';
    await t.session.handle({ type: 'requestInfluence', source: src, runId, step: 1, x: 3, y: 3 });
    expect(t.of('notice').at(-1)).toMatchObject({ level: 'error', text: 'The influence map of (3, 3) could not be computed: keeping 9000 states needs too much' });
  });

  it('passes the engine\'s per-step measures of the shown field on with its frames', async () => {
    const t = setup();
    t.session.documentChanged(SCHEME);
    await settle();
    const run = t.runs.at(-1) as FakeRun;
    const st = (step: number): FrameStats => ({ step, t: step * 0.2, fields: { u: { min: 0, max: 1, mean: 0.5, drift: 1e-8, tv: 10 - step, energy: 3, ...(step ? { change: { rms: 0.01, max: 0.1 } } : {}) } } });
    run.cb.onFrame?.(st(0), { u: snapshot(32, 32, () => 0) });
    run.cb.onFrame?.(st(1), { u: snapshot(32, 32, () => 0) });
    const [f0, f1] = t.of('frame');
    expect(f0.measures).toEqual({ drift: 1e-8, tv: 10, energy: 3, changeRms: null, changeMax: null });
    expect(f1.measures).toEqual({ drift: 1e-8, tv: 9, energy: 3, changeRms: 0.01, changeMax: 0.1 });
    run.cb.onFrame?.(stats(2), { u: snapshot(32, 32, () => 0) });
    expect(t.of('frame').at(-1)?.measures).toBeUndefined();
  });
});
