// The live run's derivative view (issue 12): the protocol additions (FromPreview.showDerivative, Frame.wrt,
// Scheme.derivative) and their validators, and the session asking its engine for one tangent and posting
// ∂field/∂knob frames. The engine here is the real in-process engine behind the EngineLike interface (the worker
// thread left out), so the posted pictures are checked against a direct sensitivity run.
import { describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine';
import type { FieldSnapshot, WorkerRunOptions } from '../../../src/engine/worker/protocol';
import type { WorkerRunCallbacks, WorkerRunHandle } from '../../../src/engine/worker/workerClient';
import type { AnalysisService } from '../../../src/extension/preview/analysisClient';
import { PreviewSession, type EngineLike, type SessionEnv } from '../../../src/extension/preview/session';
import { validateFromPreview, validateToPreview, type ToPreview } from '../../../src/protocol/preview';
import { parseAndCheck } from '../../../src/notation';
import type { CheckedScheme } from '../../../src/notation/scheme';

const SRC = 'file:///w/a.fluxel';

describe('protocol: derivative view', () => {
  it('showDerivative takes a name or null; anything else is ignored', () => {
    expect(validateFromPreview({ type: 'showDerivative', source: SRC, name: 'K' })).toEqual({ type: 'showDerivative', source: SRC, name: 'K' });
    expect(validateFromPreview({ type: 'showDerivative', source: SRC, name: null })).toEqual({ type: 'showDerivative', source: SRC, name: null });
    for (const name of ['', '1K', 'K; x', 3, undefined, ['K']]) expect(validateFromPreview({ type: 'showDerivative', source: SRC, name }), String(name)).toBeNull();
  });

  const frame = { type: 'frame', source: SRC, runId: 2, field: 'u', step: 1, t: 0.2, width: 2, height: 1, data: new Float32Array([0.5, -1]), stats: { min: -1, max: 0.5, mean: -0.25 }, psnr: null };
  it('a frame may carry wrt (a name); without it, it is a values frame as before', () => {
    expect(validateToPreview({ ...frame, wrt: 'sigma' })).toMatchObject({ wrt: 'sigma', data: new Float32Array([0.5, -1]) });
    expect(validateToPreview(frame)).not.toHaveProperty('wrt');
    expect(validateToPreview({ ...frame, wrt: 'a b' })).toBeNull();
    expect(validateToPreview({ ...frame, wrt: 7 })).toBeNull();
  });

  const scheme = {
    type: 'scheme', source: SRC, fileName: 'a.fluxel', dims: 2, fields: ['u'], knobs: [{ name: 'K', value: 0.1, lo: 0, hi: 1 }],
    dt: { name: 'dt', value: 0.2, lo: null, hi: null }, steps: 3, current: { values: { K: 0.1 }, dt: 0.2 },
    input: { kind: 'scene', scene: 'survey', noise: 0.1, seed: 1 }, inputLabel: 'survey',
  };
  it('a scheme message may say which derivative is shown (a name or null)', () => {
    expect(validateToPreview({ ...scheme, derivative: 'K' })).toMatchObject({ derivative: 'K' });
    expect(validateToPreview({ ...scheme, derivative: null })).toMatchObject({ derivative: null });
    expect(validateToPreview(scheme)).not.toHaveProperty('derivative');
    expect(validateToPreview({ ...scheme, derivative: '∂K' })).toBeNull();
  });
});

/** An EngineLike over the in-process engine: runs synchronously on a microtask and reports frames like the worker. */
class InProcessEngine implements EngineLike {
  readonly options: WorkerRunOptions[] = [];
  start(input: { scheme: CheckedScheme } | { source: string }, options: WorkerRunOptions, cb: WorkerRunCallbacks = {}): WorkerRunHandle {
    this.options.push(options);
    const done = Promise.resolve().then(() => {
      const { backend: _b, ...rest } = options;
      const run = createRun((input as { scheme: CheckedScheme }).scheme, rest);
      const result = run.runSync({
        onFrame: (f) => {
          const fields: Record<string, FieldSnapshot> = {};
          for (const [k, v] of Object.entries(f.fields)) fields[k] = { width: v.shape[1], height: v.shape[0], data: v.data };
          cb.onFrame?.(f.stats, fields);
        },
      });
      return { result, fields: {} };
    });
    return { runId: this.options.length, done, cancel: () => undefined };
  }
  async terminate(): Promise<void> {}
}

const SCHEME = 'grid 2d\nparam K = 0.1 in [0.01, 1]\nstep dt = 0.2\nsteps 4\nfield u = image\nu\' = u + dt * sum n in N4: (u[n] - u) / (1 + ((u[n] - u) / K)^2)\n';

function setup() {
  const posted: ToPreview.Type[] = [];
  const engine = new InProcessEngine();
  const picture = { width: 12, height: 10, data: Float32Array.from({ length: 120 }, (_, i) => ((i * 37) % 11) / 10) };
  const analysis: AnalysisService = {
    verdict: async (_t, knobs) => ({ verdict: { method: 'positivity', limit: 0.25, dt: knobs.dt, stable: true, reason: 'r', estimate: false, unconditional: false, positivityLimit: null, diffusionLimit: null }, extremumCheck: false }),
    weights: async () => { throw new Error('not used'); },
    impulse: async () => null,
    scene: async () => ({ noisy: picture, clean: picture }),
    decode: async () => picture,
    compare: async () => { throw new Error('not used'); },
    spectrum: async () => { throw new Error('not used'); },
    approximates: async () => { throw new Error('not used'); },
    influence: async () => { throw new Error('not used'); },
    dispose: async () => undefined,
  };
  const env: SessionEnv = {
    source: SRC, fileName: 'a.fluxel', post: (m) => posted.push(m), newEngine: () => engine, analysis,
    settings: () => ({ debounceMs: 0, maxPreviewSize: 64, sceneSize: 12 }),
    readImage: async () => picture, recallInput: () => null, rememberInput: () => undefined,
  };
  return { session: new PreviewSession(env), posted, engine, picture };
}

const settle = async () => {
  for (let i = 0; i < 30; i++) await Promise.resolve();
};

describe('session: derivative view', () => {
  it('asks the engine for one tangent and posts ∂u/∂K frames equal to a direct sensitivity run', async () => {
    const { session, posted, engine, picture } = setup();
    session.documentChanged(SCHEME);
    await settle();
    expect(engine.options.at(-1)?.sensitivity).toBeUndefined();
    posted.length = 0;
    await session.handle({ type: 'showDerivative', source: SRC, name: 'K' });
    await settle();
    expect(engine.options.at(-1)?.sensitivity).toEqual(['K']);
    const scheme = posted.find((m): m is ToPreview.Scheme => m.type === 'scheme');
    expect(scheme?.derivative).toBe('K');
    const frames = posted.filter((m): m is ToPreview.Frame => m.type === 'frame');
    expect(frames.length).toBeGreaterThan(1);
    for (const f of frames) {
      expect(f.wrt).toBe('K');
      expect(f.psnr).toBeNull();
    }
    const last = frames.at(-1) as ToPreview.Frame;
    expect(last.step).toBe(4);
    const direct = createRun(createRunScheme(), { image: picture, sensitivity: ['K'] });
    direct.runSync();
    const want = Float32Array.from(direct.sensitivityData(0, 'K'));
    expect(Array.from(last.data)).toEqual(Array.from(want));
    expect(last.stats.max).toBe(Math.max(...want));
    expect(last.stats.min).toBe(Math.min(...want));
    // Back to the values: no tangent, no wrt.
    posted.length = 0;
    await session.handle({ type: 'showDerivative', source: SRC, name: null });
    await settle();
    expect(engine.options.at(-1)?.sensitivity).toBeUndefined();
    const plain = posted.filter((m): m is ToPreview.Frame => m.type === 'frame');
    expect(plain.length).toBeGreaterThan(0);
    for (const f of plain) expect(f.wrt).toBeUndefined();
  });

  it('ignores names the scheme does not declare, and accepts dt', async () => {
    const { session, engine } = setup();
    session.documentChanged(SCHEME);
    await settle();
    const n = engine.options.length;
    await session.handle({ type: 'showDerivative', source: SRC, name: 'sigma' });
    await settle();
    expect(engine.options.length).toBe(n);
    await session.handle({ type: 'showDerivative', source: SRC, name: 'dt' });
    await settle();
    expect(engine.options.at(-1)?.sensitivity).toEqual(['dt']);
  });
});

function createRunScheme(): CheckedScheme {
  return parseAndCheck(SCHEME).scheme as CheckedScheme;
}
