// Minimised case of the soak campaign (test/hardening/soak.serial.test.ts): the live run remembered the analysis'
// monitor decision for every scheme and knob setting it ever ran, so a long editing session grew the host's heap
// without bound. The memory now keeps the MONITOR_MEMORY most recent decisions, and still uses the one it has.

import { describe, expect, it } from 'vitest';
import type { WorkerRunOptions } from '../../../src/engine/worker/protocol';
import type { AnalysisService } from '../../../src/extension/preview/analysisClient';
import { MONITOR_MEMORY, PreviewSession, type EngineLike } from '../../../src/extension/preview/session';

describe('monitor decisions of a long session', () => {
  it('are bounded, least recent first, and the remembered one is used on a re-run', async () => {
    const options: WorkerRunOptions[] = [];
    const engine: EngineLike = {
      start: (_input, o) => {
        options.push(o);
        let cancel = () => undefined as void;
        const done = new Promise<never>((_res, rej) => { cancel = () => queueMicrotask(() => rej(new Error('cancelled'))); });
        done.catch(() => undefined);
        return { runId: options.length, done, cancel };
      },
      terminate: async () => undefined,
    };
    const analysis = {
      verdict: async (_t: string, knobs: { dt: number }) => ({ verdict: { method: 'positivity', limit: 1, dt: knobs.dt, stable: true, reason: 'r', estimate: false, unconditional: false, positivityLimit: null, diffusionLimit: null }, extremumCheck: true }),
      impulse: async () => null,
      scene: async () => { throw new Error('no scenes'); },
      // Not under test here: the summary and the frequency map are refused (the session logs and carries on).
      approximates: async () => { throw new Error('not computed here'); },
      spectrum: async () => { throw new Error('not computed here'); },
    } as unknown as AnalysisService;
    const session = new PreviewSession({
      source: 'file:///w/m.fluxel', fileName: 'm.fluxel', post: () => undefined, newEngine: () => engine, analysis,
      settings: () => ({ debounceMs: 0, maxPreviewSize: 16, sceneSize: 16 }), readImage: async () => { throw new Error('no files'); },
      recallInput: () => null, rememberInput: () => undefined,
    });
    const text = (k: number) => `grid 2d\nstep dt = 0.1\nsteps 3\nfield u = 0.5\nparam K = ${k / 1000}\nu' = u + dt * K * sum n in N4: u[n] - u\n`;
    for (let k = 0; k < 3 * MONITOR_MEMORY; k++) {
      session.documentChanged(text(k));
      for (let i = 0; i < 10; i++) await Promise.resolve();
    }
    const memory = (session as unknown as { extremumByKey: Map<string, boolean> }).extremumByKey;
    expect(memory.size).toBe(MONITOR_MEMORY);
    // The newest scheme's decision is kept: running it again passes the decision instead of 'auto'.
    session.refresh();
    for (let i = 0; i < 10; i++) await Promise.resolve();
    expect(options.at(-1)?.monitors?.extremumCheck).toBe(true);
    // The oldest ones were dropped: the first scheme runs with 'auto' again.
    session.documentChanged(text(0));
    for (let i = 0; i < 10; i++) await Promise.resolve();
    expect(options.at(-1)?.monitors?.extremumCheck).toBe('auto');
    session.dispose();
  });
});
