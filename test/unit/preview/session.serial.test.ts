// The live run session with the real engine worker and analysis thread (hence serial): frames stream and change
// the picture, the weights at a picked pixel equal kernelAt on the full-resolution state of that step even when the
// posted frames are downsampled, and a scheme run over its limit reports findings on its update line.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { afterAll, describe, expect, it } from 'vitest';
import { kernelAt } from '../../../src/analysis/kernel';
import { createRun } from '../../../src/engine';
import { EngineWorker } from '../../../src/engine/worker/workerClient';
import { makeScene } from '../../../src/images/scenes';
import { parseAndCheck } from '../../../src/notation';
import { AnalysisClient, SplitAnalysis } from '../../../src/extension/preview/analysisClient';
import { computeInfluence } from '../../../src/extension/preview/analysisCompute';
import { PreviewSession } from '../../../src/extension/preview/session';
import type { ToPreview } from '../../../src/protocol/preview';

const ROOT = join(__dirname, '../../..');
// As in the panel: the influence maps on a second thread.
const analysis = new SplitAnalysis(new AnalysisClient(), () => new AnalysisClient());
afterAll(() => analysis.dispose());

function open(text: string, size: number, maxPreviewSize: number) {
  const posted: ToPreview.Type[] = [];
  const waiters: { test(m: ToPreview.Type): boolean; resolve(m: ToPreview.Type): void }[] = [];
  const session = new PreviewSession({
    source: 'file:///w/s.fluxel',
    fileName: 's.fluxel',
    post: (m) => {
      posted.push(m);
      for (const w of [...waiters]) if (w.test(m)) { waiters.splice(waiters.indexOf(w), 1); w.resolve(m); }
    },
    newEngine: () => new EngineWorker(),
    analysis,
    settings: () => ({ debounceMs: 0, maxPreviewSize, sceneSize: size }),
    readImage: () => Promise.reject(new Error('no files here')),
    recallInput: () => ({ kind: 'scene', scene: 'survey', noise: 0.1, seed: 7 }),
    rememberInput: () => undefined,
  });
  /** Resolves with the first message (already posted or still to come) that passes `test`. */
  const next = <T extends ToPreview.Type>(test: (m: ToPreview.Type) => m is T): Promise<T> => {
    const had = posted.find(test);
    if (had) return Promise.resolve(had as T);
    return new Promise((resolve) => waiters.push({ test, resolve: resolve as (m: ToPreview.Type) => void }));
  };
  session.documentChanged(text);
  return { session, posted, next };
}

const isEnded = (m: ToPreview.Type): m is ToPreview.RunEnded => m.type === 'runEnded';
const isVerdict = (m: ToPreview.Type): m is ToPreview.Verdict => m.type === 'verdict';
const isWeights = (m: ToPreview.Type): m is ToPreview.Weights => m.type === 'weights';
const isInfluence = (m: ToPreview.Type): m is ToPreview.Influence => m.type === 'influence';
const isSpectrum = (m: ToPreview.Type): m is ToPreview.Spectrum => m.type === 'spectrum';
const isApproximates = (m: ToPreview.Type): m is ToPreview.Approximates => m.type === 'approximates';

describe('live run with the real engine', () => {
  it('streams frames that change the picture; weights come from the full-resolution state', async () => {
    const text = readFileSync(join(ROOT, 'examples/edge-preserving.fluxel'), 'utf8').replace(/^steps \d+$/m, 'steps 12');
    const { session, posted, next } = open(text, 48, 24);
    const ended = await next(isEnded);
    expect(ended.status).toBe('done');
    const frames = posted.filter((m): m is ToPreview.Frame => m.type === 'frame');
    expect(frames.map((f) => f.step)).toEqual([...Array(13).keys()]);
    expect(frames[0]).toMatchObject({ width: 24, height: 24 });
    const diff = frames[12].data.reduce((s, v, i) => s + Math.abs(v - frames[0].data[i]), 0);
    expect(diff).toBeGreaterThan(1);
    const verdict = await next(isVerdict);
    expect(verdict.verdict).toMatchObject({ method: 'positivity', stable: true });
    expect(verdict.verdict.limit).toBeCloseTo(0.25, 9);

    await session.handle({ type: 'pickPixel', source: 'file:///w/s.fluxel', runId: ended.runId, step: 7, x: 17, y: 30 });
    const w = await next(isWeights);

    // The same state computed in-process at full resolution, then the analysis' weights on it.
    const scheme = parseAndCheck(text).scheme!;
    const scene = makeScene('survey', { width: 48, height: 48, noise: 0.1, seed: 7 });
    let state: Float32Array | null = null;
    createRun(scheme, { image: scene.noisy, every: 1 }).runSync({ onFrame: (f) => { if (f.stats.step === 7) state = Float32Array.from(f.fields.u.data); } });
    const want = kernelAt(scheme, { width: 48, height: 48, fields: [state!], t: 7 * scheme.dt }, 17, 30);
    expect(w.radius).toBe(want.radius);
    for (let i = 0; i < want.grid.length; i++) expect(Math.abs(w.grid[i] - want.grid[i]), `weight ${i}`).toBeLessThan(1e-12);
    expect(w.sum).toBeCloseTo(1, 9);
    session.dispose();
  });

  it('reports findings of a scheme run over its limit, on its update line', async () => {
    const text = readFileSync(join(ROOT, 'examples/heat-2d.fluxel'), 'utf8').replace('step dt = 0.2 in [0.02, 0.3]', 'step dt = 0.3 in [0.02, 0.3]').replace(/^steps \d+$/m, 'steps 30');
    const { session, posted, next } = open(text, 32, 64);
    await next(isEnded);
    const verdict = await next(isVerdict);
    expect(verdict.verdict.stable).toBe(false);
    const findings = posted.filter((m): m is ToPreview.Finding => m.type === 'finding');
    expect(findings.length).toBeGreaterThan(0);
    const updateLine = text.split('\n').findIndex((l) => l.startsWith("u' =")) + 1;
    expect(findings[0].finding.range.start.line).toBe(updateLine);
    expect(findings[0].finding.step).toBeGreaterThan(0);
    session.dispose();
  });

  it('sends the frequency map, the summary and an influence map from the analysis threads', async () => {
    const text = readFileSync(join(ROOT, 'examples/edge-preserving.fluxel'), 'utf8').replace(/^steps \d+$/m, 'steps 12');
    const { session, next } = open(text, 48, 24);
    const ended = await next(isEnded);
    const m = await next(isSpectrum);
    expect(m.amp.length).toBe(m.cols * m.rows);
    expect((await next(isApproximates)).text).toMatch(/^approximates u_t = /);
    await session.handle({ type: 'requestInfluence', source: 'file:///w/s.fluxel', runId: ended.runId, step: 12, x: 20, y: 21 });
    const got = await next(isInfluence);
    // The same replay and adjoint sweep in-process give the same map.
    const scheme = parseAndCheck(text).scheme!;
    const scene = makeScene('survey', { width: 48, height: 48, noise: 0.1, seed: 7 });
    const want = computeInfluence({ text, knobs: { values: Object.fromEntries(scheme.params.map((p) => [p.name, p.value])), dt: scheme.dt }, image: scene.noisy, width: 48, height: 48, steps: 12, x: 20, y: 21, field: 'u' });
    expect([got.x0, got.y0, got.width, got.height, got.steps]).toEqual([want.x0, want.y0, want.width, want.height, 12]);
    expect(Array.from(got.data)).toEqual(Array.from(want.data));
    expect(got.sum).toBeCloseTo(1, 5);
    session.dispose();
  });
});
