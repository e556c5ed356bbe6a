// The worker wrapper: same numbers as an in-process run, frames every k steps, progress, and cancellation.
import { afterAll, describe, expect, it } from 'vitest';
import { createRun } from '../../../src/engine/run';
import { EngineWorker } from '../../../src/engine/worker/workerClient';
import { expectClose, randomImage, schemeOf } from './util';

const TEXT = `grid 2d\nboundary reflect\nparam K = 0.05 in [0.001, 1]\nparam sigma = 1 in [0, 3]\nstep dt = 0.2\nsteps 30\nfield u = image\n` +
  `diffusivity g(s) = 1 / (1 + (s / K)^2)\nlet w = blur(u, sigma)\nu' = u + dt * sum n in N4: g(w[n] - w) * (u[n] - u)\n`;

const worker = new EngineWorker();
afterAll(() => worker.terminate());

describe('engine worker', () => {
  it('gives exactly the in-process result, from the checked scheme as data and from source text', async () => {
    const img = randomImage(40, 30, 8);
    const scheme = schemeOf(TEXT);
    const local = createRun(scheme, { image: img, params: { K: 0.1 }, every: 10 });
    const localResult = local.runSync();
    const frames: number[] = [];
    const fromData = await worker.start({ scheme }, { image: img, params: { K: 0.1 }, every: 10 }, { onFrame: s => frames.push(s.step) }).done;
    expect(frames, 'frames every 10 steps plus step 0').toEqual([0, 10, 20, 30]);
    expectClose(fromData.fields.u.data, local.fieldData(0), 0, 'worker (scheme as data) vs in-process');
    expect(fromData.result.frames.map(f => f.fields.u)).toEqual(localResult.frames.map(f => f.fields.u));
    const fromText = await worker.start({ source: TEXT }, { image: img, params: { K: 0.1 } }).done;
    expectClose(fromText.fields.u.data, local.fieldData(0), 0, 'worker (source text) vs in-process');
  });

  it('cancellation stops within one step of being seen', async () => {
    const img = randomImage(256, 256, 1);
    let cancelledAt = -1;
    const handle = worker.start({ source: TEXT }, { image: img, steps: 100000 }, {
      onProgress: step => {
        if (cancelledAt < 0 && step >= 3) {
          cancelledAt = step;
          handle.cancel();
        }
      },
    }, );
    const out = await handle.done;
    expect(out.result.status).toBe('cancelled');
    expect(out.result.stepsDone >= cancelledAt && out.result.stepsDone < 100000, `stopped at ${out.result.stepsDone}, cancel seen by client at ${cancelledAt}`).toBe(true);
  });

  it('runs on the backend named in the start message (the live run setting `fluxel.engine.backend`)', async () => {
    const img = randomImage(16, 12, 3);
    const js = await worker.start({ source: TEXT }, { image: img, steps: 2, backend: 'js' }).done;
    const wasm = await worker.start({ source: TEXT }, { image: img, steps: 2, backend: 'wasm' }).done;
    const auto = await worker.start({ source: TEXT }, { image: img, steps: 2 }).done;
    expect(js.result.backend).toBe('js');
    expect(wasm.result.backend).toMatch(/^wasm \(f32x4/);
    expect(auto.result.backend).toBe(wasm.result.backend);
    expectClose(js.fields.u.data, wasm.fields.u.data, 1e-6, 'js vs wasm backend in the worker');
  });

  it('reports scheme errors with a position', async () => {
    await expect(worker.start({ source: 'grid 2d\nfield u = image\nu\' = q\n' }, {}).done).rejects.toThrow(/^\d+:\d+: /);
  });
});
