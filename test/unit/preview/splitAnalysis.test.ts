// The live run's two analysis threads: influence maps go to their own thread, everything else to the main one,
// and a newer influence request ends the thread of one still in flight (which then rejects as superseded).

import { describe, expect, it } from 'vitest';
import type { AnalysisService } from '../../../src/extension/preview/analysisClient';
import { SplitAnalysis } from '../../../src/extension/preview/analysisClient';
import { SUPERSEDED, type InfluenceResult } from '../../../src/extension/preview/analysisProtocol';

class FakeThread {
  calls: string[] = [];
  disposed = false;
  pending: { resolve(r: InfluenceResult): void; reject(e: Error): void }[] = [];
  service(): AnalysisService {
    const rec = (name: string) => { this.calls.push(name); };
    return {
      verdict: async () => { rec('verdict'); return { verdict: { method: 'none', limit: null, dt: 1, stable: true, reason: '', estimate: false, unconditional: false, positivityLimit: null, diffusionLimit: null }, extremumCheck: false }; },
      weights: async () => { rec('weights'); throw new Error('unused'); },
      impulse: async () => { rec('impulse'); return null; },
      scene: async () => { rec('scene'); throw new Error('unused'); },
      decode: async () => { rec('decode'); throw new Error('unused'); },
      compare: async () => { rec('compare'); return { metrics: { psnr: null, ssim: null, tv: 0 }, between: null }; },
      spectrum: async () => { rec('spectrum'); throw new Error('unused'); },
      approximates: async () => { rec('approximates'); return { text: 't', details: [], warnings: [] }; },
      influence: () => { rec('influence'); return new Promise((resolve, reject) => this.pending.push({ resolve, reject })); },
      dispose: async () => {
        this.disposed = true;
        // Like the real client: ending the thread rejects what is pending.
        for (const p of this.pending) p.reject(new Error('analysis thread exited (code 1)'));
        this.pending = [];
      },
    };
  }
}

const req = { text: '', knobs: { values: {}, dt: 1 }, image: null, width: 4, height: 4, steps: 2, x: 1, y: 1, field: 'u' };
const result: InfluenceResult = { steps: 2, field: 'u', x0: 0, y0: 0, width: 1, height: 1, data: new Float32Array(1), sum: 1, peak: 1, note: null };

describe('split analysis', () => {
  it('sends influence maps to their own thread and everything else to the main one', async () => {
    const main = new FakeThread();
    const slows: FakeThread[] = [];
    const a = new SplitAnalysis(main.service(), () => { const t = new FakeThread(); slows.push(t); return t.service(); });
    await a.verdict('', { values: {}, dt: 1 });
    await a.approximates('', { values: {}, dt: 1 });
    const p = a.influence(req);
    expect(slows.length).toBe(1);
    slows[0].pending.shift()?.resolve(result);
    await expect(p).resolves.toBe(result);
    // A request after the first has finished reuses its thread.
    const q = a.influence(req);
    slows[0].pending.shift()?.resolve(result);
    await q;
    expect(slows.length).toBe(1);
    expect(main.calls).toEqual(['verdict', 'approximates']);
    expect(slows[0].calls).toEqual(['influence', 'influence']);
  });

  it('ends the thread of an influence map still in flight when a newer one is asked for', async () => {
    const slows: FakeThread[] = [];
    const a = new SplitAnalysis(new FakeThread().service(), () => { const t = new FakeThread(); slows.push(t); return t.service(); });
    const first = a.influence(req);
    const second = a.influence(req);
    await expect(first).rejects.toThrow(SUPERSEDED);
    expect(slows.length).toBe(2);
    expect(slows[0].disposed).toBe(true);
    slows[1].pending.shift()?.resolve(result);
    await expect(second).resolves.toBe(result);
    await a.dispose();
    expect(slows[1].disposed).toBe(true);
  });
});
